package drill_test

import (
	"context"
	"testing"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/population"
)

// TestBinCountsEqualBattery: for every bin of every drillable test, the
// records a drill selects are as many as the digit battery counts in that
// bin, over the same population (the brief: "the count of a bin from drill
// must equal the battery's count for that bin"). The battery extracts
// digits by integer arithmetic in one aggregate scan; the drill selects by
// ranges and remainders over the decimal: two statements of the same
// definitions, compared on the generated ledger.
func TestBinCountsEqualBattery(t *testing.T) {
	ws, _ := setup(t)
	ctx := context.Background()
	for _, c := range []struct {
		base    population.Spec
		lastTwo string
		tests   []benford.Test
	}{
		{population.Spec{}, drill.LastTwoScale, drill.DrillTests},
		{population.Spec{Signs: "both", Min: "0"}, drill.LastTwoScale, []benford.Test{benford.FirstDigit, benford.SecondDigit, benford.FirstTwo, benford.LastTwo}},
		{population.Spec{Signs: "negative", Min: "1", Where: "entity <> 'WEST'"}, drill.LastTwoUnits, []benford.Test{benford.FirstDigit, benford.SecondDigit, benford.FirstTwo, benford.LastTwo}},
		{population.Spec{}, drill.LastTwoUnits, []benford.Test{benford.LastTwo}},
	} {
		rep, err := battery.Run(ctx, ws, battery.Options{Spec: c.base, Tests: c.tests, LastTwo: c.lastTwo})
		if err != nil {
			t.Fatal(err)
		}
		checked := 0
		for _, test := range c.tests {
			counts := rep.Counts.Bins(test)
			lo, _ := test.Bins()
			var total int64
			for i, n := range counts {
				b := lo + i
				built, err := drill.Build(ctx, ws, drill.Selection{Spec: c.base, Test: string(test), Bin: &b, LastTwo: c.lastTwo})
				if err != nil {
					t.Fatal(err)
				}
				s, err := drill.Summarize(ctx, ws, built)
				if err != nil {
					t.Fatal(err)
				}
				if s.Records != n {
					t.Errorf("%+v %s: %s bin %d: drill %d records, battery %d", c.base, c.lastTwo, test, b, s.Records, n)
				}
				total += n
				checked++
			}
			want := rep.Tested
			for _, r := range rep.Tests {
				if r.Test == benford.LastTwo && test == benford.LastTwo {
					want = r.N // only amounts of at least drill.LastTwoMinUnits
				}
			}
			if total != want {
				t.Errorf("%+v: %s bins hold %d, the battery tested %d", c.base, test, total, want)
			}
		}
		t.Logf("signs %q min %q where %q, last-two %s: %d bins, drill count = battery count (N = %d)", c.base.Signs, c.base.Min, c.base.Where, c.lastTwo, checked, rep.Tested)
	}
}
