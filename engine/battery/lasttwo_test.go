package battery

import (
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
)

// TestLastTwoMinimum: by default the last-two digits test takes only
// amounts whose two digits read are the fourth significant digit or later
// (at least 100.00 at scale 2); amounts of 10.00 to 99.99 stay in every
// other test, and the note says how many were left out. --last-two-all
// takes them all. The units reading needs 10,000 whole units.
func TestLastTwoMinimum(t *testing.T) {
	ws := openWS(t)
	// 30 amounts 10.00 to 99.99 ending in .37, 20 of 100.00 and more
	// ending in .05, 5 of 10,000.00 and more ending in 00.
	var cents []int64
	for i := range 30 {
		cents = append(cents, int64(1000+300*i)+37)
	}
	for i := range 20 {
		cents = append(cents, int64(10000+12300*i)+5)
	}
	for i := range 5 {
		cents = append(cents, int64(1000000+2000000*i))
	}
	loadCents(t, ws, make([]string, len(cents)), cents)

	r := run(t, ws, Options{Tests: []benford.Test{benford.LastTwo, benford.FirstTwo}})
	l2 := r.Tests[1]
	if l2.Test != benford.LastTwo || r.LastTwoMin != "100.00" {
		t.Fatalf("tests %v, last-two minimum %q", l2.Test, r.LastTwoMin)
	}
	if l2.N != 25 || r.Counts.LastTwo[37] != 0 || r.Counts.LastTwo[5] != 20 || r.Counts.LastTwo[0] != 5 || r.Tested != 55 || r.Tests[0].N != 55 {
		t.Errorf("last-two N %d (bins 37: %d, 05: %d, 00: %d), tested %d, first-two N %d; want 25 (0, 20, 5), 55, 55",
			l2.N, r.Counts.LastTwo[37], r.Counts.LastTwo[5], r.Counts.LastTwo[0], r.Tested, r.Tests[0].N)
	}
	if !hasNoteB(l2, "at least 100.00") || !hasNoteB(l2, "30 of 55 amounts") {
		t.Errorf("notes %q", l2.Notes)
	}

	all := run(t, ws, Options{Tests: []benford.Test{benford.LastTwo}, LastTwoAll: true})
	if all.Tests[0].N != 55 || all.Counts.LastTwo[37] != 30 || all.LastTwoMin != "" || hasNoteB(all.Tests[0], "at least") {
		t.Errorf("--last-two-all: N %d, bin 37 %d, minimum %q, notes %q", all.Tests[0].N, all.Counts.LastTwo[37], all.LastTwoMin, all.Tests[0].Notes)
	}
	units := run(t, ws, Options{Tests: []benford.Test{benford.LastTwo}, LastTwo: LastTwoUnits})
	if units.Tests[0].N != 5 || units.LastTwoMin != "10000.00" {
		t.Errorf("units: N %d, minimum %q; want 5 amounts of at least 10000.00", units.Tests[0].N, units.LastTwoMin)
	}
	if got := LastTwoMin(Options{LastTwo: LastTwoScale}, population.AmountType{Precision: 18, Scale: 6}); got != "0.010000" {
		t.Errorf("scale 6: minimum %q, want 0.010000", got)
	}
	if got := LastTwoMin(Options{LastTwo: LastTwoScale}, population.AmountType{Precision: 18, Scale: 0}); got != "10000" {
		t.Errorf("scale 0: minimum %q, want 10000", got)
	}
}

// TestSecondOrderDiscreteBins: amounts in whole cents give differences of
// 1 to 9 cents that all fall in second-order bins 10, 20, ..., 90; the
// surplus they make is not flagged, and the note says so. The other bins
// are empty here, so the test has nothing left to flag.
func TestSecondOrderDiscreteBins(t *testing.T) {
	ws := openWS(t)
	// 4,000 amounts from 100.00 upwards in steps of 1 to 9 cents: every
	// difference is 1 to 9 cents.
	var cents []int64
	c := int64(10000)
	for i := range 4000 {
		cents = append(cents, c)
		c += int64(1 + i%9)
	}
	loadCents(t, ws, make([]string, len(cents)), cents)
	r := run(t, ws, Options{Tests: []benford.Test{benford.SecondOrder}})
	so := r.Tests[0]
	if so.N == 0 || so.Flagged != 0 || !hasNoteB(so, "bins 10, 20, ..., 90") || !hasNoteB(so, "9 would have been flagged") {
		t.Errorf("second order: N %d, %d flagged, notes %q", so.N, so.Flagged, so.Notes)
	}
	for _, b := range so.Bins {
		if b.Bin%10 == 0 && (b.Count == 0 || b.Flagged || b.PAdjusted > 0.05) || b.Bin%10 != 0 && b.Count != 0 {
			t.Errorf("bin %d: %d differences, flagged %v, p_adjusted %v", b.Bin, b.Count, b.Flagged, b.PAdjusted)
		}
	}
}

func hasNoteB(r benford.Result, sub string) bool {
	for _, n := range r.Notes {
		if strings.Contains(n, sub) {
			return true
		}
	}
	return false
}
