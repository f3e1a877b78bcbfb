package benford

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// firstTwoOfUnits returns the first two significant digits (10..99) of a
// positive whole number: 10u for one digit.
func firstTwoOfUnits(u int64) int {
	for u >= 100 {
		u /= 10
	}
	if u < 10 {
		u *= 10
	}
	return int(u)
}

// secondOrderCents draws n amounts log-uniform over [10, 10^6) (Benford's
// law), rounds them to cents, sorts them and returns the second-order
// counts: the first two digits of the non-zero differences, in cents.
func secondOrderCents(rng *rand.Rand, n int) []int64 {
	u := make([]int64, n)
	for i := range u {
		u[i] = int64(math.Round(math.Pow(10, 3+5*rng.Float64())))
	}
	slices.Sort(u)
	c := make([]int64, 90)
	for i := 1; i < n; i++ {
		if d := u[i] - u[i-1]; d > 0 {
			c[firstTwoOfUnits(d)-10]++
		}
	}
	return c
}

// TestSecondOrderCents measures the second-order flag on conforming
// populations in whole cents. The plain flag marks bins 10, 20, ..., 90
// (differences of 1 to 9 cents). With those bins left out (FlagExcluding,
// as the battery does) what remains is a known limit of the test, not yet
// modelled: differences of 11 to 19 cents are rounded, not continuous, so
// each of bins 11 to 19 holds a few per cent more than Benford's law gives
// (a difference near 11 cents covers [10.5, 11.5) cents, not [11, 12)),
// which 200,000 amounts detect. The test holds that state: no bin 10, 20,
// ..., 90 flagged, every flagged surplus in bins 11 to 19; the rate is
// logged (and quoted in the README).
func TestSecondOrderCents(t *testing.T) {
	seeds, n := 40, 200000
	if testing.Short() {
		seeds = 10
	}
	discrete := []int{10, 20, 30, 40, 50, 60, 70, 80, 90}
	plain, excl := 0, 0
	for s := range seeds {
		rng := rand.New(rand.NewPCG(uint64(s), 2009))
		r, err := Analyze(SecondOrder, secondOrderCents(rng, n))
		if err != nil {
			t.Fatal(err)
		}
		if r.Flagged > 0 {
			plain++
		}
		r.FlagExcluding(discrete)
		if r.Flagged > 0 {
			excl++
		}
		for _, b := range r.Bins {
			if b.Flagged && (b.Bin%10 == 0 || b.Diff > 0 && b.Bin > 19) {
				t.Errorf("seed %d: bin %d flagged (diff %+.5f)", s, b.Bin, b.Diff)
			}
		}
	}
	t.Logf("N %d in cents: a bin flagged in %d of %d populations by the plain flag, %d with bins 10..90 left out", n, plain, seeds, excl)
}
