package benford

import (
	"fmt"
	"math"
	"math/big"
	"math/rand/v2"
	"testing"

	"github.com/leadline/leadline/engine/numfmt"
)

// exactPMF returns the binomial probabilities C(n,j) q^j (1-q)^(n-j),
// j = 0..n, in rational arithmetic (math/big).
func exactPMF(n, qNum, qDen int64) []*big.Rat {
	q := big.NewRat(qNum, qDen)
	one := big.NewRat(1, 1)
	odds := new(big.Rat).Quo(q, new(big.Rat).Sub(one, q))
	pmf := make([]*big.Rat, n+1)
	pmf[0] = ratPow(new(big.Rat).Sub(one, q), n)
	for j := int64(0); j < n; j++ {
		pmf[j+1] = new(big.Rat).Mul(pmf[j], big.NewRat(n-j, j+1))
		pmf[j+1].Mul(pmf[j+1], odds)
	}
	return pmf
}

// TestBinomialLowerTailAndTwoSidedExact checks BinomialLowerTail and
// BinomialTwoSided against exact rational sums (math/big) of the binomial
// probabilities, at sizes and shares like those of the digit bins
// (q = 0.0044, the smallest first-two share; 0.01, a last-two bin; 0.301,
// the first-digit 1), including the far tails.
func TestBinomialLowerTailAndTwoSidedExact(t *testing.T) {
	for _, c := range []struct{ n, qNum, qDen int64 }{
		{1, 1, 2}, {40, 3, 10}, {250, 44, 10000}, {400, 1, 100}, {400, 301, 1000},
	} {
		pmf := exactPMF(c.n, c.qNum, c.qDen)
		q := float64(c.qNum) / float64(c.qDen)
		lower := make([]*big.Rat, c.n+1) // P(X <= k)
		acc := new(big.Rat)
		for k := int64(0); k <= c.n; k++ {
			acc.Add(acc, pmf[k])
			lower[k] = new(big.Rat).Set(acc)
		}
		upper := make([]*big.Rat, c.n+1) // P(X >= k)
		acc = new(big.Rat)
		for k := c.n; k >= 0; k-- {
			acc.Add(acc, pmf[k])
			upper[k] = new(big.Rat).Set(acc)
		}
		close := func(got, want float64) bool {
			return math.Abs(got-want) <= 1e-9*want || math.Abs(got-want) < 1e-300
		}
		for k := int64(0); k <= c.n; k++ {
			lo, _ := lower[k].Float64()
			hi, _ := upper[k].Float64()
			if got := BinomialLowerTail(k, c.n, q); !close(got, lo) {
				t.Errorf("n %d q %v k %d: lower tail %v, exact %v", c.n, q, k, got, lo)
			}
			two := math.Min(1, 2*math.Min(lo, hi))
			if got := BinomialTwoSided(k, c.n, q); !close(got, two) {
				t.Errorf("n %d q %v k %d: two-sided %v, exact %v", c.n, q, k, got, two)
			}
		}
	}
	if BinomialLowerTail(-1, 10, 0.5) != 0 || BinomialLowerTail(10, 10, 0.5) != 1 {
		t.Error("lower tail outside 0..n")
	}
}

// TestFlagMateriality: at 5,000,000 amounts a first-two bin 4% above its
// expectation is far beyond chance (Z about 7) but below the 20% margin:
// the reference Z flags it, the flag does not; with no margin
// (MinExcess 0) the flag fires. A bin 30% above is flagged either way.
func TestFlagMateriality(t *testing.T) {
	p := Expected(FirstTwo)
	counts := make([]int64, 90)
	for i, v := range p {
		counts[i] = int64(math.Round(v * 5e6))
	}
	counts[50-10] = int64(math.Round(1.04 * p[40] * 5e6))
	counts[80-10] = int64(math.Round(1.30 * p[70] * 5e6))
	r, err := Analyze(FirstTwo, counts)
	if err != nil {
		t.Fatal(err)
	}
	b50, b80 := r.Bins[40], r.Bins[70]
	if !b50.ZFlagged || b50.PAdjusted > 1e-6 || b50.Material || b50.Flagged {
		t.Errorf("bin 50 (+4%%): z %.1f z_flagged %v p_adj %v material %v flagged %v", b50.Z, b50.ZFlagged, b50.PAdjusted, b50.Material, b50.Flagged)
	}
	if !b80.Flagged || r.Flagged != 2-1 || r.TopFlagged[0] != 80 {
		t.Errorf("bin 80 (+30%%): flagged %v; %d flagged, top %v", b80.Flagged, r.Flagged, r.TopFlagged)
	}
	r0, err := AnalyzeWith(FirstTwo, counts, Flagging{Alpha: FlagAlpha, MinExcess: 0})
	if err != nil {
		t.Fatal(err)
	}
	if !r0.Bins[40].Flagged || !r0.Bins[70].Flagged || r0.FlagRule.MinExcess != 0 {
		t.Errorf("no margin: bin 50 %v, bin 80 %v", r0.Bins[40].Flagged, r0.Bins[70].Flagged)
	}
	if _, err := AnalyzeWith(FirstTwo, counts, Flagging{Alpha: FlagAlpha, MinExcess: -1}); err == nil {
		t.Error("negative margin accepted")
	}
	// The margin: 20% of the share, for every bin (6.02 points for a bin
	// of 30.1%).
	if m := MaterialDiff(0.301, 0.2); math.Abs(m-0.0602) > 1e-15 {
		t.Errorf("first digit 1: margin %v, want 0.0602", m)
	}
	if m := MaterialDiff(0.01, 0.2); math.Abs(m-0.002) > 1e-15 {
		t.Errorf("last-two bin: margin %v, want 0.002", m)
	}
}

// TestFlagSmallN is the regression test of the flag at small N: on 200
// conforming first-two populations of 5,000 amounts (multinomial draws from
// Benford's law), the per-bin Z reference flags some bin in nearly every
// population, while the flag (exact binomial tails, Holm over the 90
// bins, materiality) flags a bin in at most 5% of them plus simulation
// noise: the 99% upper binomial bound for a 5% rate (rateBound).
func TestFlagSmallN(t *testing.T) {
	const seeds = 200
	allowed := rateBound(seeds, FlagAlpha)
	rng := rand.New(rand.NewPCG(17, 5000))
	p := Expected(FirstTwo)
	anyFlag, anyZ := 0, 0
	for range seeds {
		r, err := Analyze(FirstTwo, multinomial(rng, p, 5000))
		if err != nil {
			t.Fatal(err)
		}
		if r.Flagged > 0 {
			anyFlag++
		}
		if r.ZFlagged > 0 {
			anyZ++
		}
	}
	t.Logf("N 5,000: %d of %d populations with a flagged bin, %d with a bin outside the Z reference bounds", anyFlag, seeds, anyZ)
	if anyFlag > allowed {
		t.Errorf("%d of %d conforming populations flagged (99%% bound for 5%%: %d)", anyFlag, seeds, allowed)
	}
	if anyZ < seeds/2 {
		t.Errorf("Z reference flagged only %d of %d: the comparison lost its point", anyZ, seeds)
	}
}

// rateBound returns the largest count of false alarms in n independent
// populations that a true rate of alpha exceeds with probability at least
// 1%: the smallest a with P(X > a) <= 0.01 for X ~ Binomial(n, alpha).
func rateBound(n int, alpha float64) int {
	a := 0
	for BinomialUpperTail(int64(a+1), int64(n), alpha) > 0.01 {
		a++
	}
	return a
}

// TestRunsNoteQuotesCalibration: the "fewer than 35 runs" note and the runs
// line quote one expected count, that of conforming populations of this N
// (simulated; near 46 for the 90 first-two bins, common practice, no
// source), not the textbook count given the overs and unders, and the note
// quotes the simulated rate of fewer than 35 runs (about 1%, measured in
// TestFalseAlarmRates; the trade's "about 5%" is from memory and wrong).
func TestRunsNoteQuotesCalibration(t *testing.T) {
	p := Expected(FirstTwo)
	counts := make([]int64, 90)
	for i, v := range p {
		counts[i] = int64(math.Round(v * 50000))
	}
	for b := 20; b < 50; b++ { // a surplus stretch: amounts pushed into 2,000 to 4,999
		counts[b-10] += 120
	}
	r, err := Analyze(FirstTwo, counts)
	if err != nil {
		t.Fatal(err)
	}
	rr := r.Runs
	if rr.Runs >= FewRunsFirstTwo {
		t.Fatalf("%d runs: the population does not exercise the note", rr.Runs)
	}
	if rr.Expected < 44 || rr.Expected > 47.5 || rr.Simulations != NullSimulations || rr.ExpectedGivenMarks == rr.Expected {
		t.Errorf("expected %.1f (given marks %.1f) from %d simulations", rr.Expected, rr.ExpectedGivenMarks, rr.Simulations)
	}
	if rr.FewRunsRate < 0.002 || rr.FewRunsRate > 0.03 {
		t.Errorf("fewer than 35 runs in %.4f of conforming populations", rr.FewRunsRate)
	}
	want := []string{numfmt.Stat(rr.Expected) + " expected", fmt.Sprintf("%.1f%% of draws", 100*rr.FewRunsRate)}
	for _, w := range want {
		if !hasNote(r, w) {
			t.Errorf("no note quoting %q: %q", w, r.Notes)
		}
	}
	if rr.P > 0.01 || rr.P <= 0 {
		t.Errorf("simulated p %v for %d runs", rr.P, rr.Runs)
	}
}

// TestFlagExcluding: a second-order population whose bins 10, 20, ..., 90
// hold a large surplus (the differences of 1 to 9 cents) over counts that
// otherwise follow the expectation. The plain flag marks those bins and,
// through the shares, a shortfall in nearly every other bin; with them left
// out, nothing is flagged, while a planted 40% surplus in bin 47 is.
func TestFlagExcluding(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	p := Expected(SecondOrder)
	counts := Multinomial(rng, p, 200000)
	discrete := []int{10, 20, 30, 40, 50, 60, 70, 80, 90}
	for _, b := range discrete {
		counts[b-10] += 10000
	}
	r, err := Analyze(SecondOrder, counts)
	if err != nil {
		t.Fatal(err)
	}
	if r.Flagged < 60 {
		t.Fatalf("plain flag: %d bins flagged; the population does not exercise the rule", r.Flagged)
	}
	if was := r.FlagExcluding(discrete); was != 9 || r.Flagged != 0 || len(r.TopFlagged) != 0 {
		t.Errorf("excluding 10..90: %d of them were flagged, %d flagged now (top %v)", was, r.Flagged, r.TopFlagged)
	}
	counts[47-10] = counts[47-10] * 14 / 10
	r, _ = Analyze(SecondOrder, counts)
	r.FlagExcluding(discrete)
	if r.Flagged != 1 || !r.Bins[47-10].Flagged || r.TopFlagged[0] != 47 {
		t.Errorf("bin 47 +40%%: %d flagged, top %v", r.Flagged, r.TopFlagged)
	}
}

// TestFlagAgreesWithMADSeverity: the bin flag's margin and the MAD's
// severity verdict agree on what is material in the first-digit test. At
// 470,000 amounts with 1s at 33.5% (3.4 points over Benford's law, the
// other digits scaled down alike; MAD 0.0076, acceptable, Nigrini 2012)
// every bin is beyond chance, no bin is material and the verdict says
// immaterial; with 1s at 38.1% (8 points over; MAD 0.0178,
// nonconforming) digit 1 is flagged and the verdict says material.
func TestFlagAgreesWithMADSeverity(t *testing.T) {
	p := Expected(FirstDigit)
	at := func(p1 float64) []int64 {
		c := make([]int64, 9)
		for i := range c {
			q := p[i] * (1 - p1) / (1 - p[0])
			if i == 0 {
				q = p1
			}
			c[i] = int64(math.Round(q * 470000))
		}
		return c
	}
	r, err := Analyze(FirstDigit, at(0.335))
	if err != nil {
		t.Fatal(err)
	}
	if r.Conformity != Acceptable || r.Flagged != 0 || r.Severity != BeyondChanceImmaterial {
		t.Errorf("1s at 33.5%%: MAD %.4f %s, %d bins flagged, verdict %q; want acceptable, none, %q", r.MAD, r.Conformity, r.Flagged, r.Severity, BeyondChanceImmaterial)
	}
	r, err = Analyze(FirstDigit, at(0.381))
	if err != nil {
		t.Fatal(err)
	}
	if r.Conformity != Nonconforming || r.Flagged == 0 || r.TopFlagged[0] != 1 || r.Severity != BeyondChanceMaterial {
		t.Errorf("1s at 38.1%%: MAD %.4f %s, %d bins flagged (top %v), verdict %q; want nonconforming, digit 1 flagged, %q", r.MAD, r.Conformity, r.Flagged, r.TopFlagged, r.Severity, BeyondChanceMaterial)
	}
}
