package benford

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestConformityBoundaries checks the MAD ranges of Nigrini (2012; from
// memory) at and around their boundaries.
func TestConformityBoundaries(t *testing.T) {
	for _, c := range []struct {
		t    Test
		mad  float64
		want string
	}{
		{FirstDigit, 0, Close}, {FirstDigit, 0.00599, Close}, {FirstDigit, 0.006, Acceptable},
		{FirstDigit, 0.01199, Acceptable}, {FirstDigit, 0.012, Marginal}, {FirstDigit, 0.015, Marginal},
		{FirstDigit, 0.01501, Nonconforming},
		{SecondDigit, 0.0079, Close}, {SecondDigit, 0.008, Acceptable}, {SecondDigit, 0.010, Marginal},
		{SecondDigit, 0.012, Marginal}, {SecondDigit, 0.0121, Nonconforming},
		{FirstTwo, 0.00119, Close}, {FirstTwo, 0.0012, Acceptable}, {FirstTwo, 0.0018, Marginal},
		{FirstTwo, 0.0022, Marginal}, {FirstTwo, 0.00221, Nonconforming},
		{FirstThree, 0.00035, Close}, {FirstThree, 0.00036, Acceptable}, {FirstThree, 0.00044, Marginal},
		{FirstThree, 0.0005, Marginal}, {FirstThree, 0.00051, Nonconforming},
		{LastTwo, 0.001, NoPublishedRange}, {Summation, 0.001, NoPublishedRange}, {SecondOrder, 0.001, NoPublishedRange},
	} {
		if got := Conformity(c.t, c.mad); got != c.want {
			t.Errorf("Conformity(%s, %v) = %q, want %q", c.t, c.mad, got, c.want)
		}
	}
}

// TestExpectedMAD checks ExpectedMAD against the average MAD of simulated
// conforming populations (multinomial draws with Benford's proportions;
// 200 seeds each). E|p̂ - p| = sqrt(2/π) sd(p̂) holds for a normal p̂; the
// binomial lattice moves it by a little at small expected counts.
func TestExpectedMAD(t *testing.T) {
	const seeds = 200
	for _, c := range []struct {
		t   Test
		n   int
		tol float64
	}{{FirstDigit, 10000, 0.03}, {SecondDigit, 10000, 0.03}, {FirstTwo, 20000, 0.03}, {FirstThree, 50000, 0.03}} {
		p := Expected(c.t)
		rng := rand.New(rand.NewPCG(7, uint64(len(p))))
		var sum float64
		for range seeds {
			r, err := Analyze(c.t, multinomial(rng, p, c.n))
			if err != nil {
				t.Fatal(err)
			}
			sum += r.MAD
		}
		mean := sum / seeds
		e := ExpectedMAD(c.t, int64(c.n))
		t.Logf("%s, N %d: mean simulated MAD %.6f, ExpectedMAD %.6f, ratio %.4f", c.t, c.n, mean, e, mean/e)
		if math.Abs(mean/e-1) > c.tol {
			t.Errorf("%s: mean MAD %.6f vs expected %.6f", c.t, mean, e)
		}
	}
	if ExpectedMAD(FirstTwo, 0) != 0 || ExpectedMAD(Summation, 1000) != 0 {
		t.Error("ExpectedMAD: want 0 for N = 0 and for the summation test")
	}
}
