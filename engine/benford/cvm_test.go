package benford

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// The statistics of a small example worked by hand from the definitions of
// Choulakian, Lockhart and Stephens (1994): p = (1/2, 1/4, 1/4), counts
// (3, 0, 1), N = 4. T = (2, 3, 4), S = (3, 3, 4), Z = (1, 0, 0),
// H = (0.5, 0.75, 1), t = (0.375, 0.25, 0.375), Z̄ = 0.375:
// W² = 0.375/4, U² = (0.625²·0.375 + 0.375²·0.25 + 0.375²·0.375)/4,
// A² = 0.375/(0.5·0.5)/4.
func TestCvMWorkedExample(t *testing.T) {
	p := []float64{0.5, 0.25, 0.25}
	c := []int64{3, 0, 1}
	for _, tc := range []struct {
		k    CvMKind
		want float64
	}{
		{CvMW2, 0.09375},
		{CvMU2, (0.625*0.625*0.375 + 0.375*0.375*0.25 + 0.375*0.375*0.375) / 4},
		{CvMA2, 0.375},
	} {
		got, pv := CramerVonMises(tc.k, c, p)
		if math.Abs(got-tc.want) > 1e-15 {
			t.Errorf("%s = %v, by hand %v", tc.k, got, tc.want)
		}
		if !(pv > 0 && pv < 1) {
			t.Errorf("%s p-value %v", tc.k, pv)
		}
	}
	if s, pv := CramerVonMises(CvMU2, []int64{0, 0, 0}, p); s != 0 || pv != 1 {
		t.Errorf("no amounts: %v, %v", s, pv)
	}
}

// U² is the same wherever the cycle of bins starts (Watson's statistic for
// the circle); W² is not.
func TestCvMU2Rotation(t *testing.T) {
	exp := Expected(FirstDigit)
	c := []int64{290, 190, 120, 95, 80, 70, 55, 52, 48}
	u, pu := CramerVonMises(CvMU2, c, exp)
	w, _ := CramerVonMises(CvMW2, c, exp)
	for r := 1; r < len(c); r++ {
		rc := append(append([]int64(nil), c[r:]...), c[:r]...)
		re := append(append([]float64(nil), exp[r:]...), exp[:r]...)
		ur, pur := CramerVonMises(CvMU2, rc, re)
		if math.Abs(ur-u) > 1e-12*u || math.Abs(pur-pu) > 1e-6 {
			t.Errorf("rotated by %d: U² %v p %v, unrotated %v p %v", r, ur, pur, u, pu)
		}
		if wr, _ := CramerVonMises(CvMW2, rc, re); r == 4 && math.Abs(wr-w) < 1e-6*w {
			t.Errorf("rotated by %d: W² %v unchanged (%v): the check cannot tell", r, wr, w)
		}
	}
}

// Imhof's tail against sums that are χ² variables: equal weights λ give
// λχ²_m, whose tail is gonum's distuv.ChiSquared.
func TestQuadFormSurvivalChiSquare(t *testing.T) {
	for _, tc := range []struct {
		l float64
		m int
	}{{1, 2}, {1, 3}, {0.5, 2}, {2, 4}, {0.01, 8}, {0.3, 89}} {
		lam := make([]float64, tc.m)
		for i := range lam {
			lam[i] = tc.l
		}
		chi := distuv.ChiSquared{K: float64(tc.m)}
		for _, q := range []float64{0.5, 0.9, 0.95, 0.99, 0.999} {
			x := tc.l * chi.Quantile(q)
			got := QuadFormSurvival(x, lam)
			if math.Abs(got-(1-q)) > 1e-7 {
				t.Errorf("λ %v, m %d, x %v: %v, gonum %v", tc.l, tc.m, x, got, 1-q)
			}
		}
	}
}

// The 8-point Gauss–Legendre rule is exact for polynomials up to degree
// 15: ∫_{-1}^{1} x^k dx = 2/(k+1) for even k, 0 for odd.
func TestGaussLegendre8(t *testing.T) {
	for k := 0; k <= 15; k++ {
		var s float64
		for i, x := range gl8Nodes {
			s += gl8Weights[i] * math.Pow(x, float64(k))
		}
		want := 0.0
		if k%2 == 0 {
			want = 2 / float64(k+1)
		}
		if math.Abs(s-want) > 1e-14 {
			t.Errorf("x^%d: %v, want %v", k, s, want)
		}
	}
}

// For K equal bins, as K grows, the discrete statistics tend to the
// continuous ones (Choulakian, Lockhart and Stephens 1994): the weights of
// W² to 1/(k²π²) (Anderson and Darling 1952), those of U² to 1/(4k²π²),
// each twice, with tail P(U² > x) = 2 Σ (−1)^(k−1) exp(−2k²π²x) (Watson
// 1961, Biometrika 48).
func TestCvMContinuousLimit(t *testing.T) {
	const K = 400
	p := make([]float64, K)
	for i := range p {
		p[i] = 1.0 / K
	}
	w := cvmNull(CvMW2, p).lambda
	for k := 1; k <= 5; k++ {
		want := 1 / (float64(k*k) * math.Pi * math.Pi)
		if math.Abs(w[k-1]-want) > 0.001*want {
			t.Errorf("W² weight %d: %v, continuous %v", k, w[k-1], want)
		}
	}
	u := cvmNull(CvMU2, p).lambda
	for k := 1; k <= 5; k++ {
		want := 1 / (4 * float64(k*k) * math.Pi * math.Pi)
		for _, got := range u[2*k-2 : 2*k] {
			if math.Abs(got-want) > 0.001*want {
				t.Errorf("U² weight %d: %v, continuous %v", k, got, want)
			}
		}
	}
	watson := func(x float64) float64 {
		var s float64
		for k := 1; k <= 50; k++ {
			s += 2 * math.Pow(-1, float64(k-1)) * math.Exp(-2*float64(k*k)*math.Pi*math.Pi*x)
		}
		return s
	}
	for _, x := range []float64{0.05, 0.1, 0.152, 0.187, 0.268} {
		got, want := QuadFormSurvival(x, u), watson(x)
		if math.Abs(got-want) > 0.002 {
			t.Errorf("P(U² > %v) with K %d: %v, continuous %v", x, K, got, want)
		}
	}
}

// TestCvMSimulated compares the asymptotic p-value with seeded multinomial
// simulation at small N: the share of conforming populations whose U² (W²)
// p-value is below 5% or 1% must stay within the 99% binomial bounds of the
// nominal rate (or fall at most to half its lower bound: the discrete
// statistics may be conservative), for the first-digit test from N = 100 and the first-two
// test from N = 1,000 (with fewer amounts than bins, the asymptotic
// distribution is not claimed).
func TestCvMSimulated(t *testing.T) {
	draws := 2000
	if testing.Short() {
		draws = 500
	}
	for _, tc := range []struct {
		test Test
		n    int64
	}{{FirstDigit, 100}, {FirstDigit, 1000}, {FirstTwo, 1000}, {FirstTwo, 5000}, {SecondDigit, 300}} {
		exp := Expected(tc.test)
		rng := rand.New(rand.NewPCG(uint64(tc.n), 0xc7a))
		for _, k := range []CvMKind{CvMU2, CvMW2} {
			var at5, at1 int
			for range draws {
				_, p := CramerVonMises(k, Multinomial(rng, exp, tc.n), exp)
				if p < 0.05 {
					at5++
				}
				if p < 0.01 {
					at1++
				}
			}
			for _, c := range []struct {
				alpha float64
				got   int
			}{{0.05, at5}, {0.01, at1}} {
				lo, hi := binomialBounds99(draws, c.alpha)
				t.Logf("%s N %d %s: p < %g in %d of %d (99%% bounds %d to %d)", tc.test, tc.n, k, c.alpha, c.got, draws, lo, hi)
				// Never liberal beyond noise; a little conservative is
				// allowed (W² at N = 1,000 on the first digit: 4.0% at 5%
				// in 4,000 draws).
				if c.got > hi || 2*c.got < lo {
					t.Errorf("%s N %d %s: p < %g in %d of %d conforming populations, outside %d to %d (half the lower bound allowed)", tc.test, tc.n, k, c.alpha, c.got, draws, lo, hi)
				}
			}
		}
	}
}

// binomialBounds99 returns the 0.5% and 99.5% quantiles of Binomial(n, q)
// (gonum's distuv.Binomial CDF).
func binomialBounds99(n int, q float64) (lo, hi int) {
	b := distuv.Binomial{N: float64(n), P: q}
	lo = sort.Search(n+1, func(k int) bool { return b.CDF(float64(k)) > 0.005 })
	hi = sort.Search(n+1, func(k int) bool { return b.CDF(float64(k)) >= 0.995 })
	return lo, hi
}

// The p-value falls as a deviation grows, and a plain shift of amounts from
// bin 1 to bin 9 is found.
func TestCvMFindsShift(t *testing.T) {
	exp := Expected(FirstDigit)
	c := make([]int64, 9)
	for i, p := range exp {
		c[i] = int64(math.Round(10000 * p))
	}
	_, p0 := CramerVonMises(CvMU2, c, exp)
	c[0] -= 150
	c[4] += 150
	_, p1 := CramerVonMises(CvMU2, c, exp)
	if !(p0 > 0.9 && p1 < 0.001) {
		t.Errorf("U² p-value %v on expected counts, %v with 150 of 10,000 moved from bin 1 to 5", p0, p1)
	}
}

// Analyze carries U² and W² with their p-values; with no amounts and for
// the summation test they are 0 with p 1.
func TestAnalyzeCvM(t *testing.T) {
	exp := Expected(FirstTwo)
	c := Multinomial(rand.New(rand.NewPCG(7, 7)), exp, 20000)
	r, err := Analyze(FirstTwo, c)
	if err != nil {
		t.Fatal(err)
	}
	u, pu := CramerVonMises(CvMU2, c, exp)
	w, pw := CramerVonMises(CvMW2, c, exp)
	if r.CvMU2 != u || r.CvMU2P != pu || r.CvMW2 != w || r.CvMW2P != pw || !(u > 0 && w > 0) {
		t.Errorf("Analyze: U² %v p %v, W² %v p %v; direct %v %v %v %v", r.CvMU2, r.CvMU2P, r.CvMW2, r.CvMW2P, u, pu, w, pw)
	}
	r0, _ := Analyze(FirstTwo, make([]int64, 90))
	rs, _ := AnalyzeSummation(make([]float64, 90), nil)
	for _, x := range []Result{r0, rs} {
		if x.CvMU2 != 0 || x.CvMU2P != 1 || x.CvMW2P != 1 {
			t.Errorf("%s N %d: U² %v p %v, W² p %v: want 0, 1, 1", x.Test, x.N, x.CvMU2, x.CvMU2P, x.CvMW2P)
		}
	}
}

// Far in the tail, below what the integral resolves, the p-value is
// Chernoff's upper bound: never below the true tail (gonum's χ² for equal
// weights), at most 1e-7, and falling as the statistic grows, where the
// integral alone gave noise around 1e-9 (a U² of 25 read p 1.2e-10 and a
// U² of 5.7 read 0).
func TestQuadFormSurvivalFarTail(t *testing.T) {
	lam := []float64{0.05, 0.05, 0.05, 0.05, 0.05, 0.05}
	chi := distuv.ChiSquared{K: 6}
	prev := 1.0
	for _, x := range []float64{3, 5, 10, 30} {
		got, want := QuadFormSurvival(x, lam), chi.Survival(x/0.05)
		if got < want || got > 1e-7 || got >= prev {
			t.Errorf("x %v: %v, gonum %v, previous %v: want an upper bound at most 1e-7, falling", x, got, want, prev)
		}
		prev = got
	}
	exp := Expected(FirstDigit)
	prev = 1
	for _, shift := range []int64{500, 1000, 2000, 3000} {
		c := make([]int64, 9)
		for i, p := range exp {
			c[i] = int64(math.Round(100000 * p))
		}
		c[0] -= shift
		c[4] += shift
		u, p := CramerVonMises(CvMU2, c, exp)
		if !(p > 0 && p < prev) {
			t.Errorf("shift %d: U² %v, p %v, previous %v: want positive and falling", shift, u, p, prev)
		}
		prev = p
	}
}

// TestQuadFormTailShortcut: far in the tail survival returns Chernoff's
// bound without integrating; the integral would have returned the same
// bound there (its result falls below the floor and is replaced by it), so
// the shortcut changes no p-value. Checked on the first-two and
// first-three weights of U² and W², over a grid of x where the bound is
// below the floor.
func TestQuadFormTailShortcut(t *testing.T) {
	checked := 0
	for _, test := range []Test{FirstTwo, FirstThree} {
		for _, k := range []CvMKind{CvMU2, CvMW2} {
			q := cvmNull(k, Expected(test))
			for f := 2.0; f < 60; f *= 1.3 {
				x := f * q.sum
				c := q.chernoff(x)
				if c >= imhofFloor {
					continue
				}
				checked++
				if got, full := q.survival(x), q.imhof(x); got != full {
					t.Errorf("%s %v, x %v: shortcut %v, integral %v", test, k, x, got, full)
				}
			}
		}
	}
	if checked < 8 {
		t.Fatalf("only %d points in the far tail checked", checked)
	}
}
