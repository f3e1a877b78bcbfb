package compare

import (
	"math"
	"math/big"
	"math/rand/v2"
	"sort"
	"testing"

	"github.com/leadline/leadline/engine/benford"
)

// The statistic of a 2×3 table computed by hand, and its p-value from the
// closed form of the chi-square upper tail at 2 degrees of freedom,
// P(χ²₂ >= x) = exp(-x/2) (the chi-square with 2 df is exponential with
// mean 2; Abramowitz and Stegun 1964, 26.4.21 with ν = 2), not through
// gonum.
func TestCompareChiSquareHandExample(t *testing.T) {
	a := []int64{10, 20, 30}
	b := []int64{20, 20, 20}
	// N = 120, each side 60, column totals 30, 40, 50: every expected
	// count is half its column total: 15, 20, 25 on both sides.
	// χ² = 2 (25/15 + 0/20 + 25/25) = 16/3.
	h := homogeneity(a, b, 199, rand.New(rand.NewPCG(1, 2)))
	if math.Abs(h.Chi2-16.0/3) > 1e-12 || h.DF != 2 {
		t.Fatalf("chi2 %v df %d, want 16/3 and 2", h.Chi2, h.DF)
	}
	if want := math.Exp(-8.0 / 3); math.Abs(h.PAsymptotic-want) > 1e-12 {
		t.Fatalf("p %v, want exp(-8/3) = %v", h.PAsymptotic, want)
	}
	if h.Method != "asymptotic" || h.PSimulated != nil || h.P != h.PAsymptotic {
		t.Fatalf("every cell expects 15 or more: want the asymptotic p, got %+v", h)
	}
}

// For an even number of degrees of freedom 2m the chi-square upper tail is
// a Poisson sum, P(χ²_{2m} >= x) = exp(-x/2) Σ_{j<m} (x/2)^j / j!
// (Abramowitz and Stegun 1964, 26.4.21): the first-digit comparison (8 df)
// checked against it on random tables, with the statistic recomputed here
// from its definition.
func TestCompareChiSquareEvenDF(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	p := benford.Expected(benford.FirstDigit)
	for i := range 20 {
		n1, n2 := int64(500+rng.IntN(5000)), int64(500+rng.IntN(5000))
		a, b := benford.Multinomial(rng, p, n1), benford.Multinomial(rng, p, n2)
		if i%2 == 1 {
			b[0] += 40 // a real difference, so that small p-values are checked too
			n2 += 40
		}
		tr, err := CompareTest(benford.FirstDigit, a, b, Options{Alpha: 0.05, MinExcess: 0.2, Simulations: 99, Seed: 1, SkipSides: true})
		if err != nil {
			t.Fatal(err)
		}
		var x float64
		N := float64(n1 + n2)
		for k := range a {
			col := float64(a[k] + b[k])
			for _, c := range []struct{ o, n float64 }{{float64(a[k]), float64(n1)}, {float64(b[k]), float64(n2)}} {
				e := c.n * col / N
				x += (c.o - e) * (c.o - e) / e
			}
		}
		var s, term float64 = 0, 1
		for j := 0; j < 4; j++ {
			if j > 0 {
				term *= x / 2 / float64(j)
			}
			s += term
		}
		want := math.Exp(-x/2) * s
		h := tr.Homogeneity
		if h.DF != 8 || math.Abs(h.Chi2-x) > 1e-9*x || math.Abs(h.PAsymptotic-want) > 1e-9*math.Max(want, 1e-300)+1e-15 {
			t.Fatalf("table %d: chi2 %v df %d p %v; want %v, 8, %v", i, h.Chi2, h.DF, h.PAsymptotic, x, want)
		}
	}
}

// The published 5% critical value of the chi-square distribution at 8
// degrees of freedom is 15.507 (NIST/SEMATECH e-Handbook of Statistical
// Methods, section 1.3.6.7.4, upper critical values of the chi-square
// distribution): the p-value there is 0.05 to the table's precision.
func TestCompareChiSquareTable(t *testing.T) {
	// A first-digit pair built to reach about 15.5: walk a shift of counts
	// between two bins until the statistic crosses the critical value, and
	// check the p-value on each side of it.
	base := []int64{3010, 1761, 1249, 969, 792, 669, 580, 512, 458}
	var prevX, prevP float64
	for d := int64(0); d < 200; d++ {
		b := append([]int64(nil), base...)
		b[0] += d
		b[8] -= d
		h := homogeneity(base, b, 99, rand.New(rand.NewPCG(1, 1)))
		if h.Chi2 < 15.507 {
			prevX, prevP = h.Chi2, h.PAsymptotic
			continue
		}
		// Interpolate log p linearly in the statistic between the two
		// tables that straddle the critical value.
		f := (15.507 - prevX) / (h.Chi2 - prevX)
		p := math.Exp(math.Log(prevP) + f*(math.Log(h.PAsymptotic)-math.Log(prevP)))
		if prevP <= 0.05 || h.PAsymptotic > 0.05 || math.Abs(p-0.05) > 2e-4 {
			t.Fatalf("p %.5f at chi2 %.3f, %.5f at %.3f: %.5f at 15.507, want 0.05", prevP, prevX, h.PAsymptotic, h.Chi2, p)
		}
		return
	}
	t.Fatal("the shift never reached the critical value")
}

// The exact conditional p-value of one bin checked against exact
// rational arithmetic (math/big): 10 of a bin's 12 amounts fall left, each
// with probability 1/2: P(X >= 10) = (C(12,10) + C(12,11) + C(12,12)) / 2^12
// = 79/4096, doubled: 158/4096.
func TestCompareBinExactP(t *testing.T) {
	a := make([]int64, 9)
	b := make([]int64, 9)
	for i := range a {
		a[i], b[i] = 100, 100
	}
	a[4], b[4] = 10, 2
	b[0] += 8 // both sides 808 amounts: each falls left with probability 1/2
	tr, err := CompareTest(benford.FirstDigit, a, b, Options{Alpha: 0.05, MinExcess: 0.2, Simulations: 99, Seed: 1, SkipSides: true})
	if err != nil {
		t.Fatal(err)
	}
	var num big.Int
	for k := int64(10); k <= 12; k++ {
		num.Add(&num, new(big.Int).Binomial(12, k))
	}
	want, _ := new(big.Rat).SetFrac(new(big.Int).Mul(&num, big.NewInt(2)), big.NewInt(4096)).Float64()
	if got := tr.Bin(5).P; math.Abs(got-want) > 1e-12 {
		t.Fatalf("bin 5: p %v, want 158/4096 = %v", got, want)
	}
}

// Holm's step-down over the bins, checked against a hand-computed example
// and against the definition applied to the bins' own p-values.
func TestCompareHolm(t *testing.T) {
	// By hand: p = 0.01, 0.04, 0.03, 0.005 (m = 4). Sorted: 0.005 x4 =
	// 0.02; 0.01 x3 = 0.03; 0.03 x2 = 0.06; 0.04 x1 = 0.04, raised to the
	// running maximum 0.06. In the original order: 0.03, 0.06, 0.06, 0.02.
	got := benford.Holm([]float64{0.01, 0.04, 0.03, 0.005})
	want := []float64{0.03, 0.06, 0.06, 0.02}
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-15 {
			t.Fatalf("Holm: %v, want %v", got, want)
		}
	}
	rng := rand.New(rand.NewPCG(3, 3))
	p := benford.Expected(benford.FirstTwo)
	a, b := benford.Multinomial(rng, p, 20000), benford.Multinomial(rng, p, 20000)
	b[37] += 300
	b[38] += 120
	tr, err := CompareTest(benford.FirstTwo, a, b, Options{Alpha: 0.05, MinExcess: 0.2, Simulations: 99, Seed: 1, Top: 10, SkipSides: true})
	if err != nil {
		t.Fatal(err)
	}
	m := len(tr.Bins)
	order := make([]int, m)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(x, y int) bool { return tr.Bins[order[x]].P < tr.Bins[order[y]].P })
	run := 0.0
	for j, i := range order {
		run = math.Max(run, math.Min(1, float64(m-j)*tr.Bins[i].P))
		if math.Abs(tr.Bins[i].PAdjusted-run) > 1e-12 {
			t.Fatalf("bin %s: adjusted %v, want %v", tr.Bins[i].Label, tr.Bins[i].PAdjusted, run)
		}
	}
	if !tr.Bin(47).Flagged {
		t.Fatalf("bin 47 (+300 amounts on about 300) not flagged: %+v", tr.Bin(47))
	}
	if tr.Changed[0] != 47 {
		t.Fatalf("changed most: %v, want bin 47 first", tr.Changed)
	}
}

// A change beyond chance but below the materiality margin is not flagged;
// with --min-excess 0 it is.
func TestCompareMateriality(t *testing.T) {
	p := benford.Expected(benford.FirstDigit)
	n := int64(5_000_000)
	a := make([]int64, 9)
	b := make([]int64, 9)
	for i := range p {
		a[i] = int64(math.Round(p[i] * float64(n)))
		b[i] = a[i]
	}
	// 0.3 percentage point of N moved from bin 9 to bin 1: z about 10,
	// margin 0.2 x 2.5 points = 0.5 point.
	b[0] += 15000
	b[8] -= 15000
	o := Options{Alpha: 0.05, MinExcess: 0.2, Simulations: 99, Seed: 1, SkipSides: true}
	tr, err := CompareTest(benford.FirstDigit, a, b, o)
	if err != nil {
		t.Fatal(err)
	}
	if bc := tr.Bin(1); bc.PAdjusted > 1e-6 || bc.Material || bc.Flagged {
		t.Fatalf("bin 1: want beyond chance, immaterial, not flagged: %+v", bc)
	}
	if math.Abs(tr.Bin(1).MinDiff-benford.MaterialDiff((float64(a[0]+b[0]))/float64(2*n), 0.2)) > 1e-15 {
		t.Fatalf("margin %v is not benford.MaterialDiff of the pooled share", tr.Bin(1).MinDiff)
	}
	o.MinExcess = 0
	if tr, _ = CompareTest(benford.FirstDigit, a, b, o); !tr.Bin(1).Flagged || !tr.Bin(9).Flagged || tr.Flagged != 2 {
		t.Fatalf("--min-excess 0: want bins 1 and 9 flagged, got %d flagged", tr.Flagged)
	}
}

// Small expected cells switch the homogeneity p-value to the simulated
// one, seeded: the same seed gives the same p, and conforming pairs give
// p-values spread over (0, 1].
func TestCompareSimulatedP(t *testing.T) {
	p := benford.Expected(benford.FirstThree)
	rng := rand.New(rand.NewPCG(5, 5))
	a, b := benford.Multinomial(rng, p, 1000), benford.Multinomial(rng, p, 1000)
	o := Options{Alpha: 0.05, MinExcess: 0.2, Simulations: 499, Seed: 9, SkipSides: true}
	x, err := CompareTest(benford.FirstThree, a, b, o)
	if err != nil {
		t.Fatal(err)
	}
	y, _ := CompareTest(benford.FirstThree, a, b, o)
	h := x.Homogeneity
	if h.Method != "simulated" || h.PSimulated == nil || h.Simulations != 499 || h.SmallCells == 0 {
		t.Fatalf("first-three at 1,000 a side: want a simulated p, got %+v", h)
	}
	if *y.Homogeneity.PSimulated != *h.PSimulated {
		t.Fatalf("same seed, different p: %v and %v", *h.PSimulated, *y.Homogeneity.PSimulated)
	}
	if len(x.Notes) == 0 {
		t.Fatal("no note says why the p-value is simulated")
	}
}

func TestCompareSides(t *testing.T) {
	p := benford.Expected(benford.FirstTwo)
	rng := rand.New(rand.NewPCG(11, 11))
	a := benford.Multinomial(rng, p, 30000)
	b := benford.Multinomial(rng, p, 30000)
	for k := 35; k <= 39; k++ { // bins 45..49: +2,000 amounts
		b[k] += 400
	}
	left := Side{Label: "2024", Counts: map[benford.Test][]int64{benford.FirstTwo: a}}
	right := Side{Label: "2025", Counts: map[benford.Test][]int64{benford.FirstTwo: b}}
	res, err := Compare(left, right, DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Tests) != 1 {
		t.Fatalf("tests compared: %d, want 1 (first-two only given)", len(res.Tests))
	}
	tr := res.Tests[0]
	if tr.Left == nil || tr.Right == nil || tr.Left.N != 30000 || tr.Right.N != 32000 {
		t.Fatalf("sides' conformity: %+v %+v", tr.Left, tr.Right)
	}
	if tr.Right.Flagged == 0 || tr.Right.MAD <= tr.Left.MAD {
		t.Fatalf("the injected side should be further from Benford: left %+v right %+v", tr.Left, tr.Right)
	}
	for k := 45; k <= 49; k++ {
		if !tr.Bin(k).Flagged {
			t.Fatalf("bin %d (+400 amounts on about 280) not flagged", k)
		}
	}
	if tr.Homogeneity.P > 1e-6 {
		t.Fatalf("homogeneity p %v", tr.Homogeneity.P)
	}
	// Only the tests asked for are compared; the others' counts are there.
	fd := benford.Multinomial(rng, benford.Expected(benford.FirstDigit), 30000)
	left.Counts[benford.FirstDigit], right.Counts[benford.FirstDigit] = fd, fd
	o := DefaultOptions()
	o.Only = []benford.Test{benford.FirstDigit}
	if res, err := Compare(left, right, o); err != nil || len(res.Tests) != 1 || res.Tests[0].Test != benford.FirstDigit || res.Tests[0].Flagged != 0 {
		t.Fatalf("only the first-digit test: %+v %v", res, err)
	}
	if _, err := CompareTest(benford.FirstTwo, a[:5], b, DefaultOptions()); err == nil {
		t.Fatal("wrong number of bins accepted")
	}
	if _, err := Compare(left, right, Options{Alpha: 0.05, MinExcess: -1, Simulations: 999, Top: 10}); err == nil {
		t.Fatal("negative --min-excess accepted")
	}
}

// The hypergeometric draws have the law's mean nK/N and variance
// nK(N-K)(N-n)/(N²(N-1)) (textbook formulas), within sampling noise, from
// small to large populations.
func TestCompareHypergeometric(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	for _, c := range []struct{ N, K, n int64 }{{20, 7, 5}, {1000, 3, 500}, {1_000_000, 300_000, 500_000}, {50, 49, 10}} {
		const draws = 20000
		var s, s2 float64
		for range draws {
			x := float64(hypergeometric(rng, c.N, c.K, c.n))
			s += x
			s2 += x * x
		}
		N, K, n := float64(c.N), float64(c.K), float64(c.n)
		mean := n * K / N
		v := n * K * (N - K) * (N - n) / (N * N * (N - 1))
		gotMean := s / draws
		gotVar := s2/draws - gotMean*gotMean
		if math.Abs(gotMean-mean) > 5*math.Sqrt(v/draws) || math.Abs(gotVar-v) > 0.1*v {
			t.Errorf("N %d K %d n %d: mean %.4f var %.4f, want %.4f and %.4f", c.N, c.K, c.n, gotMean, gotVar, mean, v)
		}
	}
}
