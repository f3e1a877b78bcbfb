package battery

import (
	"math"
	"math/rand/v2"
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

// TestSecondOrderDiscreteBins: 4,000 amounts evenly spaced by 1 to 9
// cents (generated entries, not a population) put every difference in
// second-order bins 10, 20, ..., 90. Against the shares their own local
// spacing (about 5 cents) predicts for gaps rounded to whole cents, that
// is still a deviation (such gaps would also be 10 cents and more): the
// note states the expectation, and the flag marks bins (the other bins,
// all empty, only as shortfalls).
func TestSecondOrderDiscreteBins(t *testing.T) {
	ws := openWS(t)
	var cents []int64
	c := int64(10000)
	for i := range 4000 {
		cents = append(cents, c)
		c += int64(1 + i%9)
	}
	loadCents(t, ws, make([]string, len(cents)), cents)
	r := run(t, ws, Options{Tests: []benford.Test{benford.SecondOrder}})
	so := r.Tests[0]
	if so.N == 0 || so.Flagged == 0 || !hasNoteB(so, "own local spacing") || !hasNoteB(so, "whole units of 0.01") {
		t.Errorf("second order: N %d, %d flagged, notes %q", so.N, so.Flagged, so.Notes)
	}
	for _, b := range so.Bins {
		if b.Bin%10 != 0 && b.Count != 0 || b.Flagged && b.Bin%10 != 0 && b.Diff >= 0 {
			t.Errorf("bin %d: %d differences, flagged %v, diff %+.4f: want empty, flagged only as a shortfall", b.Bin, b.Count, b.Flagged, b.Diff)
		}
	}
}

// TestSecondOrderConformingCents: 20,000 amounts following Benford's law,
// rounded to cents (log-uniform over [10, 10^6), seed 0). Against Benford's
// law with bins 10, 20, ..., 90 left out, the former rule, bins 11 to 19
// were flagged (rounded differences of 11 to 19 cents); against the shares
// expected of whole cents nothing is.
func TestSecondOrderConformingCents(t *testing.T) {
	ws := openWS(t)
	rng := rand.New(rand.NewPCG(0, 2009))
	cents := make([]int64, 20000)
	for i := range cents {
		cents[i] = int64(math.Round(math.Pow(10, 3+5*rng.Float64())))
	}
	loadCents(t, ws, make([]string, len(cents)), cents)
	r := run(t, ws, Options{Tests: []benford.Test{benford.SecondOrder}})
	so := r.Tests[0]
	if so.N < 18000 || so.Flagged != 0 || !hasNoteB(so, "own local spacing") {
		t.Errorf("second order on conforming cents: N %d, %d flagged (top %v), notes %q", so.N, so.Flagged, so.TopFlagged, so.Notes)
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
