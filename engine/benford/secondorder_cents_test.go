package benford

import (
	"math"
	"math/rand/v2"
	"os"
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

// centsPopulation draws n amounts log-uniform over [10, 10^6) (Benford's
// law), rounded to cents, in whole cents and unsorted.
func centsPopulation(rng *rand.Rand, n int) []int64 {
	u := make([]int64, n)
	for i := range u {
		u[i] = int64(math.Round(math.Pow(10, 3+5*rng.Float64())))
	}
	return u
}

// secondOrderOf sorts amounts in whole cents and returns the second-order
// counts (the first two digits of the non-zero differences, in cents) and
// the scale of the population (minimum 10, its mean, unit 0.01).
func secondOrderOf(u []int64) ([]int64, Scale) {
	slices.Sort(u)
	c := make([]int64, 90)
	var tot float64
	for i := range u {
		tot += float64(u[i]) / 100
		if i == 0 {
			continue
		}
		if d := u[i] - u[i-1]; d > 0 {
			c[firstTwoOfUnits(d)-10]++
		}
	}
	return c, Scale{N: int64(len(u)), Min: 10, Mean: tot / float64(len(u)), Unit: 0.01}
}

// TestSecondOrderCents measures the second-order flag on conforming
// populations in whole cents, sorted and differenced one by one (the
// reference: simulation, seeds stated). Against Benford's law even with
// bins 10, 20, ..., 90 left out (FlagExcluding, the former rule) a bin
// 11 to 19 is flagged in most populations of 20,000 and in every one of
// 200,000 (differences near 11 cents are rounded, not continuous). Against
// the shares expected of whole cents (SecondOrderExpectedScaled) the flag
// must keep within the 99% bound of a 5% rate, and the expected shares
// must fit the pooled differences (chi-square p > 0.001). With -args -full
// (as TestFalseAlarmRates) 100 populations each, up to 2,000,000 amounts.
func TestSecondOrderCents(t *testing.T) {
	seeds := 40
	sizes := []int{2000, 20000, 200000}
	if testing.Short() {
		seeds, sizes = 10, []int{20000}
	}
	if *fullRates || os.Getenv("LEADLINE_FULL_RATES") != "" {
		seeds, sizes = 100, []int{2000, 20000, 200000, 2000000}
	}
	discrete := []int{10, 20, 30, 40, 50, 60, 70, 80, 90}
	for _, n := range sizes {
		former, scaled := 0, 0
		pooled := make([]int64, 90)
		var exp []float64
		for s := range seeds {
			rng := rand.New(rand.NewPCG(uint64(s), 2009))
			c, sc := secondOrderOf(centsPopulation(rng, n))
			r, err := Analyze(SecondOrder, c)
			if err != nil {
				t.Fatal(err)
			}
			r.FlagExcluding(discrete)
			if r.Flagged > 0 {
				former++
			}
			exp = SecondOrderExpectedScaled(sc)
			r, err = AnalyzeExpected(SecondOrder, c, DefaultFlagging, exp)
			if err != nil {
				t.Fatal(err)
			}
			if r.Flagged > 0 {
				scaled++
			}
			for i := range c {
				pooled[i] += c[i]
			}
		}
		if bound := rateBound(seeds, FlagAlpha); scaled > bound {
			t.Errorf("N %d in cents: the scaled flag fired in %d of %d conforming populations (bound %d)", n, scaled, seeds, bound)
		}
		// pooled fit of the expected shares (gonum's chi-square tail via ChiSquare)
		_, df, p := ChiSquare(pooled, exp)
		if p < 0.001 {
			t.Errorf("N %d: pooled second-order counts do not fit the scaled expectation: chi-square p %.2g (df %d)", n, p, df)
		}
		t.Logf("N %d in cents, %d populations: flagged by the former rule (Benford, bins 10..90 left out) in %d, by the scaled expectation in %d; pooled fit p %.3f", n, seeds, former, scaled, p)
	}
}

// TestSecondOrderScaledContinuousLimit: as the unit shrinks against the
// amounts' spacing, the scaled expectation returns to Benford's law (the
// scale mixture over whole decades; Expected, checked against math/big).
func TestSecondOrderScaledContinuousLimit(t *testing.T) {
	want := Expected(SecondOrder)
	got := SecondOrderExpectedScaled(Scale{N: 1000, Min: 10, Mean: (1e6 - 10) / math.Log(1e5), Unit: 1e-9})
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-4*want[i] {
			t.Errorf("bin %d: %.6f, Benford %.6f", 10+i, got[i], want[i])
		}
	}
	// whole cents at 1,000,000 amounts: bin 10 holds every 1-cent difference
	c := SecondOrderExpectedScaled(Scale{N: 1000000, Min: 10, Mean: (1e6 - 10) / math.Log(1e5), Unit: 0.01})
	if c[0] < 0.15 || c[1] > want[1] {
		t.Errorf("cents at 1,000,000: bin 10 %.4f, bin 11 %.4f (Benford %.4f, %.4f)", c[0], c[1], want[0], want[1])
	}
}

// TestSecondOrderFindsSpacedBlock: a block of amounts evenly spaced by 25
// cents (e.g. a run of generated entries) inside a conforming population
// of whole cents is still found by the scaled flag, in bin 25.
func TestSecondOrderFindsSpacedBlock(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 2009))
	u := centsPopulation(rng, 200000)
	for i := range 2000 {
		u = append(u, 300000+25*int64(i)) // 3,000.00, 3,000.25, ...
	}
	c, sc := secondOrderOf(u)
	r, err := AnalyzeExpected(SecondOrder, c, DefaultFlagging, SecondOrderExpectedScaled(sc))
	if err != nil {
		t.Fatal(err)
	}
	if !r.Bins[25-10].Flagged || r.Bins[25-10].Diff <= 0 {
		t.Errorf("bin 25: flagged %v, diff %+.5f (flagged bins %v)", r.Bins[15].Flagged, r.Bins[15].Diff, r.TopFlagged)
	}
	t.Logf("spaced block: %d bins flagged, top %v", r.Flagged, r.TopFlagged)
}
