package benford

import (
	"math"
	"math/big"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// aliasProbabilities returns the probability of each bin that the alias
// table gives a uniform 64-bit word (math/big): column i (1/K of the
// words, up to one word in 2^64/K) gives bin i for keep[i] of its 2^64
// fractions and alias[i] for the rest.
func aliasProbabilities(t *aliasTable) []*big.Rat {
	k := len(t.keep)
	two64 := new(big.Int).Lsh(big.NewInt(1), 64)
	out := make([]*big.Rat, k)
	for i := range out {
		out[i] = new(big.Rat)
	}
	for i := range k {
		keep := new(big.Int).SetUint64(t.keep[i])
		if t.keep[i] == math.MaxUint64 {
			keep = two64 // the one fraction not below keep aliases to i itself
		}
		kept := new(big.Rat).SetFrac(keep, new(big.Int).Mul(two64, big.NewInt(int64(k))))
		out[i].Add(out[i], kept)
		rest := new(big.Rat).Sub(new(big.Rat).SetFrac64(1, int64(k)), kept)
		out[int(t.alias[i])].Add(out[int(t.alias[i])], rest)
	}
	return out
}

// TestAliasTableExact checks the alias tables against the probabilities
// they are built from: the share of 64-bit words that draw gives each bin
// (computed exactly with math/big from the table) equals p to 1e-15,
// for every test's expected proportions and a vector with zero and tiny
// probabilities. A column that keeps everything keeps 2^64 - 1 of its
// words and gives the last to itself through its alias, so it is exact.
func TestAliasTableExact(t *testing.T) {
	cases := map[string][]float64{
		"ragged": {0.5, 0, 1e-9, 0.25, 0.125, 0.125 - 1e-9},
		"single": {1},
	}
	for _, tt := range AllTests() {
		cases[string(tt)] = Expected(tt)
	}
	for name, p := range cases {
		at := newAliasTable(p)
		for i := range at.keep {
			if at.keep[i] == math.MaxUint64 && int(at.alias[i]) != i {
				t.Fatalf("%s: column %d keeps all but aliases %d", name, i, at.alias[i])
			}
		}
		var total float64
		for _, x := range p {
			total += x
		}
		for i, q := range aliasProbabilities(at) {
			got, _ := q.Float64()
			if math.Abs(got-p[i]/total) > 1e-15 {
				t.Errorf("%s bin %d: alias gives %.17g, want %.17g", name, i, got, p[i]/total)
			}
		}
	}
}

// TestAliasDrawColumns checks draw's split of a word into column and
// fraction at the edges: the smallest and largest words of each column.
func TestAliasDrawColumns(t *testing.T) {
	at := &aliasTable{keep: []uint64{1 << 63, 0, math.MaxUint64}, alias: []int32{2, 0, 2}}
	// column i covers words [ceil(i 2^64 / K), ceil((i+1) 2^64 / K))
	third := uint64(math.MaxUint64/3) + 1 // ceil(2^64/3)
	for _, c := range []struct {
		x    uint64
		want int
	}{
		{0, 0},              // column 0, fraction 0 < keep
		{third - 1, 2},      // column 0, top fraction: alias
		{third, 0},          // column 1 keeps nothing: alias 0
		{2 * third, 2},      // column 2
		{math.MaxUint64, 2}, // last word
		{third / 2, 2},      // column 0, fraction 2^63 + 1: alias
		{(1 << 63) / 3, 0},  // column 0, fraction 2^63 - 2: kept
	} {
		if got := at.draw(c.x); got != c.want {
			t.Errorf("draw(%#x) = %d, want %d", c.x, got, c.want)
		}
	}
}

// multinomialPMF returns the exact multinomial probability of counts c for
// probabilities p (float64 from math/big factorials).
func multinomialPMF(c []int64, p []float64) float64 {
	var n int64
	for _, x := range c {
		n += x
	}
	coef := new(big.Int).MulRange(1, n)
	for _, x := range c {
		coef.Quo(coef, new(big.Int).MulRange(1, x))
	}
	f, _ := new(big.Float).SetInt(coef).Float64()
	for i, x := range c {
		f *= math.Pow(p[i], float64(x))
	}
	return f
}

// compositions lists every vector of k non-negative counts summing to n.
func compositions(n int64, k int) [][]int64 {
	if k == 1 {
		return [][]int64{{n}}
	}
	var out [][]int64
	for x := int64(0); x <= n; x++ {
		for _, rest := range compositions(n-x, k-1) {
			out = append(out, append([]int64{x}, rest...))
		}
	}
	return out
}

// gof returns the chi-square goodness-of-fit p-value of observed counts
// against expected probabilities over draws, pooling the cells that
// expect fewer than 5 into one (the usual rule for the chi-square
// approximation, common practice, no source).
func gof(observed []int, probs []float64, draws int) (p float64, df int) {
	var chi, poolO, poolE float64
	cells := 0
	for i, q := range probs {
		e := q * float64(draws)
		if e < 5 {
			poolO += float64(observed[i])
			poolE += e
			continue
		}
		d := float64(observed[i]) - e
		chi += d * d / e
		cells++
	}
	if poolE > 0 {
		d := poolO - poolE
		chi += d * d / math.Max(poolE, 1e-300)
		cells++
	}
	df = cells - 1
	return 1 - distuv.ChiSquared{K: float64(df)}.CDF(chi), df
}

// TestSamplerJointExact draws seeded multinomial counts by both paths of
// the sampler (by alias below aliasPerBin amounts a bin, by conditional
// binomials above) and compares the frequency of every outcome with the
// exact multinomial probability (math/big factorials) by a chi-square
// goodness-of-fit test. A sampler off by a few percent in one outcome
// fails; an exact one passes at the 0.001 level in 999 of 1,000 seeds.
func TestSamplerJointExact(t *testing.T) {
	p := []float64{0.5, 0.3, 0.15, 0.05}
	s := newMultinomialSampler(p)
	draws := 200000
	if testing.Short() {
		draws = 40000
	}
	for _, n := range []int64{1, 5, 12, aliasPerBin*int64(len(p)) + 3} {
		comps := compositions(n, len(p))
		index := map[[4]int64]int{}
		probs := make([]float64, len(comps))
		for i, c := range comps {
			index[[4]int64(c)] = i
			probs[i] = multinomialPMF(c, p)
		}
		src := rand.NewPCG(uint64(n), 99)
		rng := rand.New(src)
		obs := make([]int, len(comps))
		c := make([]int64, len(p))
		for range draws {
			s.draw(src, rng, n, c)
			obs[index[[4]int64(c)]]++
		}
		pv, df := gof(obs, probs, draws)
		t.Logf("N %d: %d outcomes, chi-square df %d, p %.4f", n, len(comps), df, pv)
		if pv < 0.001 {
			t.Errorf("N %d: sampler's outcomes differ from the multinomial (p %.2g)", n, pv)
		}
	}
}

// TestSamplerBinMarginals compares, for the first-three bins at a
// segment's N (alias path) and at a large N (binomial path), the count
// of each of a few bins with its exact Binomial(N, p) law (gonum's
// distuv.Binomial pmf) by chi-square goodness of fit; and the first-two
// and first-digit counts summed from the first-three draws, as the null
// simulation sums them, likewise.
func TestSamplerBinMarginals(t *testing.T) {
	s := newMultinomialSampler(Expected(FirstThree))
	draws := 20000
	if testing.Short() {
		draws = 4000
	}
	type marginal struct {
		name string
		p    float64
		of   func(c []int64) int64
	}
	sum := func(lo, hi int) func(c []int64) int64 { // first-three bins lo..hi
		return func(c []int64) int64 {
			var x int64
			for b := lo; b <= hi; b++ {
				x += c[b-100]
			}
			return x
		}
	}
	ms := []marginal{
		{"first-three 100", leading(100), sum(100, 100)},
		{"first-three 999", leading(999), sum(999, 999)},
		{"first-two 10", leading(10), sum(100, 109)},
		{"first-two 57", leading(57), sum(570, 579)},
		{"first digit 1", leading(1), sum(100, 199)},
	}
	for _, n := range []int64{737, 3 * aliasPerBin * 900} {
		src := rand.NewPCG(uint64(n), 7)
		rng := rand.New(src)
		c := make([]int64, 900)
		obs := make([][]int, len(ms))
		for i := range obs {
			obs[i] = make([]int, n+1)
		}
		for range draws {
			s.draw(src, rng, n, c)
			for i, m := range ms {
				obs[i][m.of(c)]++
			}
		}
		for i, m := range ms {
			b := distuv.Binomial{N: float64(n), P: m.p}
			probs := make([]float64, n+1)
			for k := range probs {
				probs[k] = b.Prob(float64(k))
			}
			pv, df := gof(obs[i], probs, draws)
			if pv < 0.001 {
				t.Errorf("N %d, %s: counts differ from Binomial(N, %.5f) (chi-square df %d, p %.2g)", n, m.name, m.p, df, pv)
			}
		}
	}
}

// TestSharedNullsMatchOwnDraws checks the nulls that the first-digit,
// second-digit and first-two tests take from the first-three draws
// against populations drawn for each test alone (Multinomial over its own
// expected proportions, seeded): mean runs and mean MAD agree within four
// standard errors of the difference. Summing the wrong bins (a digit
// misread) moves them by many.
func TestSharedNullsMatchOwnDraws(t *testing.T) {
	for _, n := range []int64{300, 2500} {
		for _, tt := range []Test{FirstDigit, SecondDigit, FirstTwo} {
			d := runsNullFor(tt, n)
			exp := Expected(tt)
			rng := rand.New(rand.NewPCG(uint64(n), 5))
			draws := 4000
			actual := make([]float64, len(exp))
			var r, r2, m, m2 float64
			for range draws {
				c := Multinomial(rng, exp, n)
				for i := range c {
					actual[i] = float64(c[i]) / float64(n)
				}
				x, y := float64(countRuns(actual, exp)), MAD(actual, exp)
				r, r2, m, m2 = r+x, r2+x*x, m+y, m2+y*y
			}
			s := float64(draws)
			rMean, mMean := r/s, m/s
			rSD, mSD := math.Sqrt(r2/s-rMean*rMean), math.Sqrt(m2/s-mMean*mMean)
			seR := math.Hypot(rSD/math.Sqrt(s), d.sd/math.Sqrt(float64(d.sims)))
			seM := math.Hypot(mSD/math.Sqrt(s), d.madSD/math.Sqrt(float64(d.sims)))
			if math.Abs(d.mean-rMean) > 4*seR || math.Abs(d.madMean-mMean) > 4*seM {
				t.Errorf("%s N %d: shared null runs %.3f MAD %.6f, own draws runs %.3f (se %.3f) MAD %.6f (se %.6f)",
					tt, n, d.mean, d.madMean, rMean, seR, mMean, seM)
			}
		}
	}
}

// TestNullRatesAtOddN measures, on seeded conforming populations at sizes
// that are not round (a segment's N is simulated exactly up to 10,000),
// how often the calibrated runs test (p < 0.05) and the MAD's severity
// ("beyond chance") fire. Each of the 20 counts must stay within the
// 99.9% upper binomial bound of a 5% rate, so that a true 5% rate fails
// some count in about 2% of seeds (a bound of 99% each would fail one in
// about 18%).
func TestNullRatesAtOddN(t *testing.T) {
	pops := 1000
	if testing.Short() {
		pops = 200
	}
	bound := 0
	for BinomialUpperTail(int64(bound+1), int64(pops), 0.05) > 0.001 {
		bound++
	}
	for _, n := range []int64{1049, 5449} {
		for _, tt := range []Test{FirstDigit, SecondDigit, FirstTwo, FirstThree, LastTwo} {
			exp := Expected(tt)
			rng := rand.New(rand.NewPCG(uint64(n)*31, 78))
			runs, sev := 0, 0
			for range pops {
				r, err := Analyze(tt, Multinomial(rng, exp, n))
				if err != nil {
					t.Fatal(err)
				}
				if r.Runs != nil && r.Runs.P < 0.05 {
					runs++
				}
				if r.Severity != WithinChance {
					sev++
				}
			}
			t.Logf("%s N %d: runs p < 0.05 in %d of %d, MAD beyond chance in %d (bound %d)", tt, n, runs, pops, sev, bound)
			if runs > bound || sev > bound {
				t.Errorf("%s N %d: runs test fired in %d, MAD severity in %d of %d conforming populations (bound %d)", tt, n, runs, sev, pops, bound)
			}
		}
	}
}
