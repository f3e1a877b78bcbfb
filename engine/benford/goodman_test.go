package benford

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestGoodmanDefinition checks the closed form against Goodman's (1965)
// definition: the interval for bin k is the set of π with
// N (p̂_k - π)² <= A π (1 - π), A = χ²_1(1 - α/K) (Goodman's criterion as
// restated by May and Johnson 1997, from memory), so both ends solve the
// equality, and π just inside satisfies the inequality.
func TestGoodmanDefinition(t *testing.T) {
	counts := []int64{0, 1, 7, 50, 300, 642}
	lo, hi := Goodman(counts, 0.05)
	A := GoodmanA(len(counts), 0.05)
	var n int64
	for _, c := range counts {
		n += c
	}
	N := float64(n)
	f := func(k int, pi float64) float64 {
		ph := float64(counts[k]) / N
		return N*(ph-pi)*(ph-pi) - A*pi*(1-pi)
	}
	for k := range counts {
		for _, e := range []float64{lo[k], hi[k]} {
			if math.Abs(f(k, e)) > 1e-9 {
				t.Errorf("bin %d: end %v leaves %v", k, e, f(k, e))
			}
		}
		if mid := (lo[k] + hi[k]) / 2; f(k, mid) > 0 {
			t.Errorf("bin %d: midpoint outside", k)
		}
	}
	// A is the square of the two-sided normal quantile at α/K.
	z := distuv.UnitNormal.Quantile(1 - 0.05/(2*90))
	if a := GoodmanA(90, 0.05); math.Abs(a-z*z) > 1e-9 || math.Abs(a-11.9) > 0.1 {
		t.Errorf("GoodmanA(90, 0.05) = %v, z² = %v", a, z*z)
	}
	// N = 0: no information.
	l0, h0 := Goodman(make([]int64, 3), 0.05)
	if l0[0] != 0 || h0[0] != 1 {
		t.Errorf("N = 0: [%v, %v]", l0[0], h0[0])
	}
}

// TestGoodmanConforming simulates conforming first-two populations (200
// seeds, N from 10,000 to 50,000) and measures the share with any expected
// proportion outside its simultaneous 95% interval (the family-wise error
// rate, at most about 5% for Goodman's Bonferroni construction, Lesperance
// et al. 2016) and the mean number of per-bin Z flags (about 0.05 × 90 =
// 4.5 without the continuity correction, a little fewer with it).
func TestGoodmanConforming(t *testing.T) {
	const seeds = 200
	p := Expected(FirstTwo)
	rng := rand.New(rand.NewPCG(2016, 1965))
	var anyOutside, flags int
	for range seeds {
		n := 10000 + rng.IntN(40001)
		r, err := Analyze(FirstTwo, multinomial(rng, p, n))
		if err != nil {
			t.Fatal(err)
		}
		if r.OutsideGoodman > 0 {
			anyOutside++
		}
		flags += r.ZFlagged
	}
	share := float64(anyOutside) / seeds
	mean := float64(flags) / seeds
	t.Logf("conforming first-two populations: %d of %d (%.3f) with a bin outside Goodman's 95%% intervals; mean per-bin Z reference flags %.2f of 90",
		anyOutside, seeds, share, mean)
	if share > 0.10 {
		t.Errorf("family-wise share %.3f > 0.10", share)
	}
	if mean < 2.5 || mean > 6 {
		t.Errorf("mean flags %.2f outside [2.5, 6]", mean)
	}
}
