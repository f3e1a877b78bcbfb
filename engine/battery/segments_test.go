package battery

import (
	"fmt"
	"maps"
	"math/rand/v2"
	"sort"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/fixtures"
)

// uniformCents draws n amounts uniform in [lo, hi) currency units, in cents.
func uniformCents(n int, lo, hi float64, seed uint64) []int64 {
	rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
	out := make([]int64, n)
	for i := range out {
		out[i] = int64((lo + rng.Float64()*(hi-lo)) * 100)
	}
	return out
}

// TestSegmentRanking: 50 segments of log-uniform amounts (10 to 10^6, a
// scale-invariant population that follows Benford's law), one of which,
// holding 2% of the rows, has a quarter of its amounts replaced by amounts
// uniform in [2000, 5000) (entries kept under a 5,000 limit). Ranked by
// excess MAD on the first-two digits test, that segment must come first;
// the largest segment (conforming, 20% of the rows) and a small conforming
// segment must not, and a segment below the minimum is listed as too small
// and not ranked.
func TestSegmentRanking(t *testing.T) {
	const total = 200000
	sizes := map[string]int{"BIG": total / 5, "INJ": total / 50, "TINY": 1100, "CRUMB": 300}
	rest := total - sizes["BIG"] - sizes["INJ"] - sizes["TINY"] - sizes["CRUMB"]
	for i := 1; i <= 46; i++ {
		sizes[fmt.Sprintf("S%02d", i)] = rest / 46
	}
	names := make([]string, 0, len(sizes))
	for n := range sizes {
		names = append(names, n)
	}
	sort.Strings(names)
	if len(names) != 50 {
		t.Fatalf("%d segments, want 50", len(names))
	}
	var ents []string
	var cents []int64
	for i, n := range names {
		amounts := fixtures.LogUniformAmounts(sizes[n], 10, 1e6, uint64(100+i))
		if n == "INJ" {
			inj := uniformCents(sizes[n]/4, 2000, 5000, 7)
			copy(amounts, inj)
		}
		for _, c := range amounts {
			ents = append(ents, n)
			cents = append(cents, c)
		}
	}
	ws := openWS(t)
	loadCents(t, ws, ents, cents)
	r := run(t, ws, Options{By: []string{"entity"}, Tests: []benford.Test{benford.FirstDigit, benford.FirstTwo, benford.Summation}})
	s := r.Segments
	if s == nil || s.Count != 50 || s.Ranked != 49 || len(s.TooSmall) != 1 || s.TooSmall[0].Segment != "CRUMB" {
		t.Fatalf("segments: %+v", s)
	}
	var f2 *Ranking
	for i := range s.Rankings {
		if s.Rankings[i].Test == benford.FirstTwo {
			f2 = &s.Rankings[i]
		}
	}
	if f2 == nil || len(f2.Rows) != 49 {
		t.Fatalf("no first-two ranking of 49 segments: %+v", f2)
	}
	for i, row := range f2.Rows[:5] {
		t.Logf("rank %d: %s N %d MAD %.5f excess %.5f runs %v", i+1, row.Segment, row.N, row.MAD, row.ExcessMAD, *row.Runs)
	}
	if f2.Rows[0].Segment != "INJ" {
		t.Errorf("first by excess MAD: %s, want INJ", f2.Rows[0].Segment)
	}
	for _, row := range f2.Rows {
		if (row.Segment == "BIG" || row.Segment == "TINY") && row.Rank <= 1 {
			t.Errorf("%s ranks %d", row.Segment, row.Rank)
		}
		if row.Segment == "TINY" {
			// Plain MAD would put the small segment near the top; excess
			// MAD takes out what sampling alone gives.
			t.Logf("TINY: MAD %.5f, expected MAD %.5f, excess %.5f, rank %d", row.MAD, row.ExpectedMAD, row.ExcessMAD, row.Rank)
		}
	}
	// The whole selection is the sum of the segments, and the unsegmented
	// scan (another query) gives the same table.
	plain := run(t, ws, Options{Tests: []benford.Test{benford.FirstDigit, benford.FirstTwo, benford.Summation}})
	assertCounts(t, "unsegmented vs segmented", plain.Counts, r.Counts)
	for i := range plain.Counts.FirstThreeSum {
		a, b := plain.Counts.FirstThreeSum[i], r.Counts.FirstThreeSum[i]
		if d := a - b; d > 1e-6*a || d < -1e-6*a {
			t.Fatalf("first-three bin %d: sum %v unsegmented, %v over the segments", 100+i, a, b)
		}
	}
}

// TestWorkedScenario is the worked limit-clustering scenario, end to
// end through the loader and the scan: 500,000 amounts log-uniform over
// [10, 10^6), then 10% more (50,000) uniform in [2000, 5000). Expected: the
// runs test over the first-two bins falls below its critical value (few
// runs, one-sided p < 0.05; fewer than 35 runs is the trade's rule of
// thumb, common practice, no source), and the largest surplus stretch
// covers first-two bins 20 to 49.
func TestWorkedScenario(t *testing.T) {
	if testing.Short() {
		t.Skip("550,000 rows")
	}
	cents := fixtures.LogUniformAmounts(500000, 10, 1e6, 2025)
	cents = append(cents, uniformCents(50000, 2000, 5000, 2026)...)
	ents := make([]string, len(cents))
	for i := range ents {
		ents[i] = "ALL"
	}
	ws := openWS(t)
	loadCents(t, ws, ents, cents)
	r := run(t, ws, Options{Tests: []benford.Test{benford.FirstTwo}})
	if r.Tested != 550000 || len(r.Tests) != 1 {
		t.Fatalf("tested %d, %d results", r.Tested, len(r.Tests))
	}
	f2 := r.Tests[0]
	if f2.Runs == nil {
		t.Fatal("no runs test")
	}
	t.Logf("runs %d (expected %.1f, p %.3g), MAD %.5f %s, flagged %d", f2.Runs.Runs, f2.Runs.Expected, f2.Runs.P, f2.MAD, f2.Conformity, f2.Flagged)
	if f2.Runs.P >= 0.05 || f2.Runs.Runs >= benford.FewRunsFirstTwo {
		t.Errorf("runs %d, p %.3g: want fewer than %d and p < 0.05", f2.Runs.Runs, f2.Runs.P, benford.FewRunsFirstTwo)
	}
	s, ok := f2.Runs.LargestSurplus()
	if !ok || s.From != 20 || s.To != 49 {
		t.Errorf("largest surplus stretch %+v, want bins 20 to 49", s)
	}
}

// TestSecondOrderAgainstGo checks the second-order query against the
// definition (Nigrini and Miller 2009) computed here in Go: sort the tested
// amounts, take the differences between neighbours, drop zeros, count the
// first two significant digits of each difference. Per segment too.
func TestSecondOrderAgainstGo(t *testing.T) {
	var ents []string
	var cents []int64
	want := map[string][]int64{}
	wantSpacing := map[string]map[int]int64{}
	for i, seg := range []string{"A", "B"} {
		a := fixtures.LogUniformAmounts(3000, 1, 1e5, uint64(40+i))
		a = append(a, a[:200]...) // repeats: zero differences, dropped
		a = append(a, -5000, 0)   // left out by the defaults
		for _, c := range a {
			ents = append(ents, seg)
			cents = append(cents, c)
		}
		var tested []int64
		for _, c := range a {
			if c >= 1000 { // positive, at least 10.00
				tested = append(tested, c)
			}
		}
		sort.Slice(tested, func(i, j int) bool { return tested[i] < tested[j] })
		w := make([]int64, 90)
		for k := 1; k < len(tested); k++ {
			if d := tested[k] - tested[k-1]; d > 0 {
				w[FirstThreeOf(uint64(d))/10-10]++
			}
		}
		want[seg] = w
		wantSpacing[seg] = benford.SpacingHistogram(tested)
	}
	ws := openWS(t)
	loadCents(t, ws, ents, cents)
	r := run(t, ws, Options{By: []string{"entity"}, Tests: []benford.Test{benford.SecondOrder}, MinSegmentRows: 100})
	for _, sr := range r.SegmentResults {
		got := sr.Counts.Bins(benford.SecondOrder)
		w := want[sr.Key[0].String]
		for k := range w {
			if got[k] != w[k] {
				t.Fatalf("segment %s: second-order bin %d: %d, want %d", sr.Key.Label(), 10+k, got[k], w[k])
			}
		}
		// The local spacing histogram of the query is the one Go computes
		// (benford.SpacingHistogram), bucket for bucket.
		if ws := wantSpacing[sr.Key[0].String]; !maps.Equal(sr.Counts.Spacing, ws) || len(ws) < 50 {
			t.Fatalf("segment %s: spacing histogram %v, want %v", sr.Key.Label(), sr.Counts.Spacing, ws)
		}
	}
	// Unsegmented: one sort over both segments' amounts.
	r2 := run(t, ws, Options{Tests: []benford.Test{benford.SecondOrder}})
	var all []int64
	for _, c := range cents {
		if c >= 1000 {
			all = append(all, c)
		}
	}
	sort.Slice(all, func(i, j int) bool { return all[i] < all[j] })
	w := make([]int64, 90)
	for k := 1; k < len(all); k++ {
		if d := all[k] - all[k-1]; d > 0 {
			w[FirstThreeOf(uint64(d))/10-10]++
		}
	}
	got := r2.Counts.Bins(benford.SecondOrder)
	for k := range w {
		if got[k] != w[k] {
			t.Fatalf("second-order bin %d: %d, want %d", 10+k, got[k], w[k])
		}
	}
	if ws := benford.SpacingHistogram(all); !maps.Equal(r2.Counts.Spacing, ws) {
		t.Fatalf("spacing histogram %v, want %v", r2.Counts.Spacing, ws)
	}
	if len(r2.Tests) != 1 || r2.Tests[0].Test != benford.SecondOrder || r2.Tests[0].Runs == nil {
		t.Fatalf("results %+v", r2.Tests)
	}
}

// TestDuplicationFilterAndBlanks: number duplication ranks exact amounts by
// count; --where narrows the rows and the rows it leaves out are counted;
// blank segment values (empty, spaces, missing) form one segment; month
// segments read YYYY-MM from the posted date.
func TestDuplicationFilterAndBlanks(t *testing.T) {
	lines := []string{"amount,entity,posted"}
	add := func(n int, amount, entity, posted string) {
		for i := 0; i < n; i++ {
			lines = append(lines, amount+","+entity+","+posted)
		}
	}
	add(7, "250.00", "A", "2025-01-15")
	add(5, "1234.56", "A", "2025-02-01")
	add(5, "99.10", "B", "2025-02-28")
	add(3, "250.00", "B", "2025-03-31")
	add(2, "77.70", "", "2025-03-01")
	add(2, "88.80", "\"  \"", "2025-03-02")
	add(1, "-250.00", "A", "2025-01-16")
	add(1, "0", "A", "2025-01-17")
	add(1, "9.99", "B", "")
	ws := openWS(t)
	loadCSV(t, ws, "dups.csv", lines, load.Options{})

	r := run(t, ws, Options{Duplication: true, Top: 3})
	if len(r.Tests) != 0 || r.Duplication == nil {
		t.Fatalf("duplication only: tests %d, duplication %v", len(r.Tests), r.Duplication)
	}
	d := r.Duplication
	if d.N != 24 || d.Distinct != 5 || len(d.Top) != 3 {
		t.Fatalf("duplication: N %d distinct %d top %d; want 24, 5, 3", d.N, d.Distinct, len(d.Top))
	}
	// 250.00 x10; then 1234.56 and 99.10 x5 each, ties by amount.
	if d.Top[0].Amount != "250.00" || d.Top[0].Count != 10 || d.Top[1].Amount != "99.10" || d.Top[2].Amount != "1234.56" {
		t.Errorf("duplication top: %+v", d.Top)
	}
	if d.Top[0].Share != 10.0/24 {
		t.Errorf("share %v, want 10/24", d.Top[0].Share)
	}

	f := run(t, ws, Options{Spec: population.Spec{Where: "entity = 'A'"}, Tests: []benford.Test{benford.FirstDigit}})
	// Entity A: 7 + 5 tested, one negative, one zero; the 13 other rows are
	// left out by the filter (27 rows in all).
	if f.Tested != 12 || f.Exclusions.Filtered != 13 || f.Exclusions.OtherSign != 1 || f.Exclusions.Zero != 1 || f.Rows != 27 {
		t.Errorf("filter: tested %d, exclusions %+v, rows %d", f.Tested, f.Exclusions, f.Rows)
	}
	if _, err := Prepare(t.Context(), ws, Options{Spec: population.Spec{Where: "1=1; DROP TABLE ledger"}}); err == nil {
		t.Error("a filter that writes must be refused")
	}

	s := run(t, ws, Options{By: []string{"entity"}, Tests: []benford.Test{benford.FirstDigit}, MinSegmentRows: 1})
	labels := map[string]int64{}
	for _, p := range s.Segments.All {
		labels[p.Segment] = p.Tested
	}
	if len(labels) != 3 || labels["(blank)"] != 4 || labels["A"] != 12 || labels["B"] != 8 {
		t.Errorf("segments by entity: %v; want A 12, B 8, (blank) 4", labels)
	}
	m := run(t, ws, Options{By: []string{"month"}, Tests: []benford.Test{benford.FirstDigit}, MinSegmentRows: 1})
	months := map[string]int64{}
	for _, p := range m.Segments.All {
		months[p.Segment] = p.Tested + p.Zero + p.BelowMin
	}
	// Rows read per month (the negative amount of 2025-01-16 is counted
	// for the whole selection only, as of the other sign).
	if months["2025-01"] != 8 || months["2025-02"] != 10 || months["2025-03"] != 7 || months["(blank)"] != 1 {
		t.Errorf("segments by month (rows read): %v", months)
	}
	if m.Exclusions.OtherSign != 1 || m.Rows != 27 {
		t.Errorf("by month: exclusions %+v, rows %d", m.Exclusions, m.Rows)
	}
	if _, err := Prepare(t.Context(), ws, Options{By: []string{"nosuchcolumn"}}); err == nil {
		t.Error("an unknown --by column must be refused")
	}
}
