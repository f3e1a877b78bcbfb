package benford

import (
	"math"
	"math/big"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// simpson integrates f over [a, b] with n (even) intervals.
func simpson(f func(float64) float64, a, b float64, n int) float64 {
	h := (b - a) / float64(n)
	s := f(a) + f(b)
	for i := 1; i < n; i++ {
		w := 2.0
		if i%2 == 1 {
			w = 4
		}
		s += w * f(a+float64(i)*h)
	}
	return s * h / 3
}

// TestExpectedBelowAboveRatio checks r(w) = ln(1/(1-w))/ln(1+w) against
// its value for w = 0.10 (1.105, worked by hand: ln(1/0.9)/ln(1.1)) and against Simpson's rule applied to
// 1/x over the two bands, independently of logarithms.
func TestExpectedBelowAboveRatio(t *testing.T) {
	if r := ExpectedBelowAboveRatio(0.10); math.Abs(r-1.105) > 0.001 {
		t.Errorf("r(0.10) = %v", r)
	}
	inv := func(x float64) float64 { return 1 / x }
	for _, w := range []float64{0.01, 0.05, 0.10, 0.25, 0.5} {
		for _, T := range []float64{1, 5000, 2.5e6} {
			num := simpson(inv, T*(1-w), T, 2000) / simpson(inv, T, T*(1+w), 2000)
			if r := ExpectedBelowAboveRatio(w); math.Abs(r-num) > 1e-9 {
				t.Errorf("w %v T %v: r %v, Simpson %v", w, T, r, num)
			}
		}
	}
	if !math.IsNaN(ExpectedBelowAboveRatio(0)) || !math.IsNaN(ExpectedBelowAboveRatio(1)) {
		t.Error("r outside (0, 1) is not NaN")
	}
}

// TestBinomialUpperTailExact checks BinomialUpperTail against the exact
// tail Σ_{j>=k} C(n,j) q^j (1-q)^(n-j) computed in rational arithmetic
// (math/big) for small n.
func TestBinomialUpperTailExact(t *testing.T) {
	for _, c := range []struct {
		n        int64
		qNum, qD int64
	}{{1, 1, 2}, {10, 3, 10}, {30, 21, 40}, {60, 1, 20}, {200, 11, 20}} {
		q := big.NewRat(c.qNum, c.qD)
		odds := new(big.Rat).Quo(q, new(big.Rat).Sub(big.NewRat(1, 1), q))
		// pmf(0) = (1-q)^n; pmf(j+1) = pmf(j) (n-j)/(j+1) q/(1-q)
		pmf := make([]*big.Rat, c.n+1)
		pmf[0] = ratPow(new(big.Rat).Sub(big.NewRat(1, 1), q), c.n)
		for j := int64(0); j < c.n; j++ {
			pmf[j+1] = new(big.Rat).Mul(pmf[j], big.NewRat(c.n-j, j+1))
			pmf[j+1].Mul(pmf[j+1], odds)
		}
		tail := new(big.Rat)
		for k := c.n + 1; k >= 0; k-- {
			if k <= c.n {
				tail.Add(tail, pmf[k])
			}
			want, _ := tail.Float64()
			got := BinomialUpperTail(k, c.n, float64(c.qNum)/float64(c.qD))
			if math.Abs(got-want) > 1e-10*want && math.Abs(got-want) > 1e-300 {
				t.Errorf("n %d q %d/%d k %d: %v, exact %v", c.n, c.qNum, c.qD, k, got, want)
			}
		}
	}
}

func ratPow(x *big.Rat, n int64) *big.Rat {
	r := big.NewRat(1, 1)
	for range n {
		r.Mul(r, x)
	}
	return r
}

// TestBinomialUpperTailLarge checks the tail for n in the millions against
// the normal approximation with continuity correction (relative 1% up to
// z = 5: the skewness (1-2q)/sqrt(nq(1-q)) is tiny here) and, in the body,
// against gonum's distuv.Binomial survival function.
func TestBinomialUpperTailLarge(t *testing.T) {
	const n = 4000000
	q := ExpectedBelowAboveRatio(0.1) / (1 + ExpectedBelowAboveRatio(0.1))
	mu, sd := n*q, math.Sqrt(n*q*(1-q))
	for _, z := range []float64{-2, 0, 1, 2, 3, 4, 5, 8} {
		k := int64(math.Ceil(mu + z*sd))
		got := BinomialUpperTail(k, n, q)
		norm := distuv.UnitNormal.Survival((float64(k) - 0.5 - mu) / sd)
		if math.Abs(got/norm-1) > 0.01 && z <= 5 {
			t.Errorf("z %v: tail %v, normal %v", z, got, norm)
		}
		if z == 8 && (got <= 0 || got > 1e-14 || math.IsNaN(got)) {
			t.Errorf("z 8: tail %v", got)
		}
		if z <= 2 {
			if g := (distuv.Binomial{N: n, P: q}).Survival(float64(k - 1)); math.Abs(g-got) > 1e-9 {
				t.Errorf("z %v: tail %v, gonum survival %v", z, got, g)
			}
		}
	}
	if p := BinomialUpperTail(n, n, q); p != math.Pow(q, n) && p != 0 {
		t.Errorf("k = n: %v", p)
	}
}

// TestPoissonUpperTail checks the Poisson tail against direct summation.
func TestPoissonUpperTail(t *testing.T) {
	for _, lam := range []float64{0.5, 5, 40} {
		for k := 0; k < 80; k += 3 {
			var cdf float64
			for j := 0; j < k; j++ {
				cdf += math.Exp(float64(j)*math.Log(lam) - lam - lgamma(float64(j+1)))
			}
			want := 1 - cdf
			if got := PoissonUpperTail(float64(k), lam); math.Abs(got-want) > 1e-12 {
				t.Errorf("λ %v k %d: %v, want %v", lam, k, got, want)
			}
		}
	}
}

func lgamma(x float64) float64 { v, _ := math.Lgamma(x); return v }

// TestHolm checks Holm's adjustment on a hand case.
func TestHolm(t *testing.T) {
	got := Holm([]float64{0.01, 0.04, 0.03, 0.005})
	want := []float64{0.03, 0.06, 0.06, 0.02}
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-15 {
			t.Errorf("Holm = %v, want %v", got, want)
			break
		}
	}
}

// TestRoundLimits checks the round-limit scan.
func TestRoundLimits(t *testing.T) {
	got := RoundLimits(10, 1000)
	want := []float64{10, 20, 25, 50, 100, 200, 250, 500, 1000}
	if len(got) != len(want) {
		t.Fatalf("RoundLimits(10, 1000) = %v", got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("RoundLimits(10, 1000) = %v", got)
		}
	}
	if g := RoundLimits(0.01, 0.3); len(g) != 0 {
		// min is positive, so 0.01 .. 0.25 are scanned
		if g[0] != 0.01 || g[len(g)-1] != 0.25 {
			t.Errorf("RoundLimits(0.01, 0.3) = %v", g)
		}
	} else {
		t.Error("RoundLimits(0.01, 0.3) empty")
	}
	s := ScanLimits(10, 1e6, 0.1)
	if s[0] != 20 || s[len(s)-1] != 500000 {
		t.Errorf("ScanLimits(10, 1e6, 0.1) = %v", s)
	}
}

// TestLimitProbeScenario runs the probe over the round limits of the
// simulated scenario (500,000 amounts log-uniform over [10, 10^6), plus
// 50,000 uniform in [2000, 5000)): 5,000 must rank first and be flagged
// (about 8,333 injected amounts fall in [4500, 5000)). Without injection
// (100 seeds) the share of populations with any limit flagged after Holm's
// adjustment is reported: near or below the nominal 5%.
func TestLimitProbeScenario(t *testing.T) {
	probe := func(p population) []LimitResult {
		rs := make([]LimitResult, len(simLimits))
		for i, T := range simLimits {
			rs[i] = LimitProbe(T, simWidth, p.below[i], p.above[i])
		}
		AdjustLimits(rs)
		return rs
	}
	rs := probe(injectedPopulation())
	top := rs[0]
	t.Logf("injected: top limit %v: below %d above %d (observed ratio %.3f, expected %.3f), excess %.0f (vs above %.0f), z %.1f, p %.3g; next %v p %.3g",
		top.Limit, top.Below, top.Above, top.ObservedRatio, top.ExpectedRatio, top.Excess, top.ExcessVsAbove, top.Z, top.P, rs[1].Limit, rs[1].P)
	if top.Limit != 5000 || !top.Flagged {
		t.Errorf("top limit %+v", top)
	}
	// 50,000 × 500/3,000 = 8,333 amounts were injected into [4500, 5000).
	if math.Abs(top.ExcessVsAbove-8333) > 400 {
		t.Errorf("excess vs above %.0f, want about 8,333", top.ExcessVsAbove)
	}
	if n := float64(top.Below + top.Above); math.Abs(top.Excess-(float64(top.Below)-n*top.ExpectedRatio/(1+top.ExpectedRatio))) > 1e-6 {
		t.Errorf("excess %v", top.Excess)
	}
	for _, r := range rs[1:] {
		if r.Flagged {
			t.Errorf("limit %v also flagged (p %.3g)", r.Limit, r.P)
		}
	}

	alarms, flags := 0, 0
	for _, p := range nullPopulations() {
		any := false
		for _, r := range probe(p) {
			if r.Flagged {
				any = true
				flags++
			}
		}
		if any {
			alarms++
		}
	}
	n := float64(len(nullPopulations()))
	t.Logf("without injection: %d of %d populations (%.2f) with a limit flagged (Holm, 5%%), over %d limits each",
		alarms, int(n), float64(alarms)/n, len(simLimits))
	if float64(alarms)/n > 0.10 {
		t.Errorf("false-alarm rate %.2f", float64(alarms)/n)
	}
}

// TestLimitProbeEdges checks degenerate counts and argument checks.
func TestLimitProbeEdges(t *testing.T) {
	r := LimitProbe(1000, 0.1, 0, 0)
	if r.P != 1 || r.ObservedRatio != 0 || r.Excess != 0 || r.Z != 0 {
		t.Errorf("empty: %+v", r)
	}
	r = LimitProbe(1000, 0.1, 10, 0)
	if r.ObservedRatio != 0 || r.P <= 0 || r.P >= 0.01 || r.From != 900 || math.Abs(r.To-1100) > 1e-9 {
		t.Errorf("above 0: %+v", r)
	}
	if CheckLimit(0, 0.1) == nil || CheckLimit(1, 1) == nil || CheckLimit(1, 0.1) != nil {
		t.Error("CheckLimit")
	}
	defer func() {
		if recover() == nil {
			t.Error("LimitProbe(-1, ...) did not panic")
		}
	}()
	LimitProbe(-1, 0.1, 1, 1)
}
