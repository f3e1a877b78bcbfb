package benford

import (
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"sync"
)

// NullSimulations is the number of conforming populations drawn to
// calibrate a statistic whose textbook distribution fails at small N (the
// runs test over the ordered bins). With 2,000 draws a p-value near 0.05
// is known to about ±0.005 (binomial standard error).
const NullSimulations = 2000

// Multinomial draws n amounts into len(p) bins with probabilities p (which
// sum to 1) and returns the counts, by conditional binomial draws: bin k
// receives Binomial(n left, p_k / probability left). It costs K binomial
// draws whatever n, so conforming populations of millions are cheap.
func Multinomial(rng *rand.Rand, p []float64, n int64) []int64 {
	c := make([]int64, len(p))
	multinomialInto(rng, p, n, c)
	return c
}

// multinomialInto is Multinomial into c (len(p), all zero).
func multinomialInto(rng *rand.Rand, p []float64, n int64, c []int64) {
	multinomialCond(rng, conditionals(p), n, c)
}

// conditionals returns the conditional probabilities of Multinomial's
// binomial draws over p: p_k / (probability left), up to the bin that
// takes all that is left (the last, or the first whose p_k reaches the
// probability left), whose entry is last.
func conditionals(p []float64) []binomialProb {
	cond := make([]binomialProb, 0, len(p))
	mass := 1.0
	for k, pk := range p {
		if k == len(p)-1 || pk >= mass {
			break
		}
		cond = append(cond, newBinomialProb(pk/mass))
		mass -= pk
	}
	return cond
}

// multinomialCond draws n amounts into c (all zero) by the conditional
// binomials cond (from conditionals); the bin after them takes the rest.
func multinomialCond(rng *rand.Rand, cond []binomialProb, n int64, c []int64) {
	left := n
	for k, b := range cond {
		if left == 0 {
			return
		}
		x := binomialDraw(rng, left, b)
		c[k] = x
		left -= x
	}
	if left > 0 && len(c) > 0 {
		c[len(cond)] = left
	}
}

// Binomial draws from Binomial(n, q) by inversion: one uniform U, and the
// probabilities subtracted from it in a fixed order until it falls inside
// one. Any fixed order gives an exact draw; this one starts at the mode and
// steps outwards (down, up, down, ...), so a draw costs about one standard
// deviation of steps, and the mode's probability comes from the log-gamma
// function. For small means it walks up from 0. (Inversion is the textbook
// method, e.g. L. Devroye, Non-Uniform Random Variate Generation, 1986,
// chapter X, from memory.)
func Binomial(rng *rand.Rand, n int64, q float64) int64 {
	return binomialDraw(rng, n, newBinomialProb(q))
}

// binomialProb is what a binomial draw needs of its probability, computed
// once when many draws share it (the conditional probabilities of a
// multinomial over fixed proportions); the draw is the same as with the
// logarithms taken afresh.
type binomialProb struct {
	q0              float64 // the probability asked for
	q, logQ, log1mQ float64 // of min(q0, 1 - q0): q, ln q, ln(1 - q)
	odds            float64 // q / (1 - q)
	flip            bool    // q0 > 0.5: the draw is n - Binomial(n, 1 - q0)
}

func newBinomialProb(q0 float64) binomialProb {
	b := binomialProb{q0: q0, q: q0}
	if q0 <= 0 || q0 >= 1 {
		return b
	}
	if q0 > 0.5 {
		b.q, b.flip = 1-q0, true
	}
	b.logQ, b.log1mQ, b.odds = math.Log(b.q), math.Log1p(-b.q), b.q/(1-b.q)
	return b
}

func binomialDraw(rng *rand.Rand, n int64, b binomialProb) int64 {
	switch {
	case n <= 0 || b.q0 <= 0:
		return 0
	case b.q0 >= 1:
		return n
	case b.flip:
		return n - binomialLow(rng, n, b)
	}
	return binomialLow(rng, n, b)
}

// binomialLow draws Binomial(n, b.q) for n > 0 and 0 < b.q <= 0.5.
func binomialLow(rng *rand.Rand, n int64, b binomialProb) int64 {
	q, odds := b.q, b.odds
	N := float64(n)
	u := rng.Float64()
	if N*q < 10 {
		f := math.Exp(N * b.log1mQ) // P(X = 0) >= e^-20
		for x := int64(0); x < n; x++ {
			if u < f {
				return x
			}
			u -= f
			f *= odds * float64(n-x) / float64(x+1)
		}
		return n
	}
	m := int64((N + 1) * q)
	if m > n {
		m = n
	}
	M := float64(m)
	fm := math.Exp(logFactorial(n) - logFactorial(m) - logFactorial(n-m) + M*b.logQ + (N-M)*b.log1mQ)
	if u < fm {
		return m
	}
	u -= fm
	lo, hi, flo, fhi := m, m, fm, fm
	for lo > 0 || hi < n {
		if lo > 0 {
			flo *= float64(lo) / (float64(n-lo+1) * odds)
			lo--
			if u < flo {
				return lo
			}
			u -= flo
		}
		if hi < n {
			fhi *= odds * float64(n-hi) / float64(hi+1)
			hi++
			if u < fhi {
				return hi
			}
			u -= fhi
		}
		if flo < 1e-300 && fhi < 1e-300 {
			break // rounding left a sliver of U: give the mode
		}
	}
	return m
}

// logFactorials[k] = ln k! for the segment sizes the null simulations
// draw at most often, from math.Lgamma (the same values, looked up).
var logFactorials = sync.OnceValue(func() []float64 {
	t := make([]float64, 1<<14)
	for k := range t {
		t[k], _ = math.Lgamma(float64(k) + 1)
	}
	return t
})

// logFactorial returns ln k! (k >= 0).
func logFactorial(k int64) float64 {
	if t := logFactorials(); k < int64(len(t)) {
		return t[k]
	}
	v, _ := math.Lgamma(float64(k) + 1)
	return v
}

// runsNull is the distribution of the number of runs over the ordered bins
// of a test when the counts follow the test's expectation, at one N.
type runsNull struct {
	n      int64   // the N simulated
	cdf    []int   // cdf[r] = draws with at most r runs
	sims   int     // draws
	mean   float64 // mean runs
	sd     float64 // standard deviation of the runs
	fewRun float64 // share of draws with fewer than FewRunsFirstTwo runs

	// the MAD of the same draws
	mads           []float64 // ascending
	madMean, madSD float64
}

// atMost returns P(R <= r), counting the observed population among the
// draws ((count + 1) / (draws + 1)), so it is never 0.
func (d *runsNull) atMost(r int) float64 {
	c := 0
	switch {
	case r >= len(d.cdf):
		c = d.sims
	case r >= 0:
		c = d.cdf[r]
	}
	return float64(c+1) / float64(d.sims+1)
}

type nullKey struct {
	t Test
	n int64
}

var runsCache sync.Map // nullKey -> *runsNull, filled once per key

// simulatedN is the N at which the null distribution is drawn for a test
// of N amounts: N itself up to 10,000, above that N rounded to two
// significant digits, so that a thousand segments of similar sizes share
// a few dozen simulations (the distribution of the runs changes slowly
// with N once bins expect tens of amounts).
func simulatedN(n int64) int64 {
	if n <= 10000 {
		return n
	}
	e := int64(1)
	for n/e >= 100 {
		e *= 10
	}
	return (n + e/2) / e * e
}

// runsNullFor returns the null distribution of the runs for test t at N
// (simulatedN), drawn once with a seed fixed by the test and N and kept
// for the life of the process. The first-digit, second-digit, first-two
// and first-three tests share their draws: each conforming population is
// drawn once as first-three counts, and the others are its sums (bins of
// a multinomial summed together are again multinomial, with the summed
// probabilities, which are those tests' expected proportions), so one
// simulation fills the four nulls at N.
func runsNullFor(t Test, n int64) *runsNull {
	key := nullKey{t, simulatedN(n)}
	if v, ok := runsCache.Load(key); ok {
		return v.(*runsNull)
	}
	// family[i] sums its counts from the bins of from[i]: first-two from
	// first-three, first and second digit from first-two
	base, family, from := t, []Test{t}, []int{-1}
	if leadingFamily(t) {
		base = FirstThree
		family = []Test{FirstThree, FirstTwo, FirstDigit, SecondDigit}
		from = []int{-1, -1, 1, 1}
	}
	h := fnv.New64a()
	h.Write([]byte(base))
	src := rand.NewPCG(h.Sum64(), uint64(key.n))
	rng := rand.New(src)
	s := samplerFor(base)
	draw := make([]int64, len(s.p))
	accs := make([]*nullAcc, len(family))
	for i, ft := range family {
		srcTest := base
		if from[i] >= 0 {
			srcTest = family[from[i]]
		}
		accs[i] = newNullAcc(ft, srcTest)
	}
	for range NullSimulations {
		s.draw(src, rng, key.n, draw)
		for i, a := range accs {
			if from[i] >= 0 {
				a.add(accs[from[i]].counts, key.n)
			} else {
				a.add(draw, key.n)
			}
		}
	}
	var d *runsNull
	for i, ft := range family {
		v, _ := runsCache.LoadOrStore(nullKey{ft, key.n}, accs[i].null(key.n))
		if ft == t {
			d = v.(*runsNull)
		}
	}
	return d
}

// leadingFamily reports whether t's bins are sums of first-three bins
// with Benford's proportions.
func leadingFamily(t Test) bool {
	switch t {
	case FirstDigit, SecondDigit, FirstTwo, FirstThree:
		return true
	}
	return false
}

// samplers holds one multinomialSampler per test (its alias table).
var samplers sync.Map // Test -> *multinomialSampler

func samplerFor(t Test) *multinomialSampler {
	if v, ok := samplers.Load(t); ok {
		return v.(*multinomialSampler)
	}
	v, _ := samplers.LoadOrStore(t, newMultinomialSampler(Expected(t)))
	return v.(*multinomialSampler)
}

// nullAcc accumulates the runs and the MAD of one test over the draws.
type nullAcc struct {
	exp    []float64
	bin    []int // bin of the test holding each bin of the draw
	counts []int64
	actual []float64
	hist   []int
	sum    float64
	sum2   float64
	few    int
	mads   []float64
}

// newNullAcc accumulates test t from counts over the bins of base (t
// itself, or a leading-digit test with more digits).
func newNullAcc(t, base Test) *nullAcc {
	exp := Expected(t)
	a := &nullAcc{exp: exp, counts: make([]int64, len(exp)), actual: make([]float64, len(exp)),
		hist: make([]int, len(exp)+1), mads: make([]float64, 0, NullSimulations)}
	lo, hi := base.Bins()
	tlo, _ := t.Bins()
	for b := lo; b <= hi; b++ {
		v := b
		if t != base {
			// the leading digits of b (base first-two or first-three)
			if base == FirstThree {
				v = b / 10
			}
			switch t {
			case FirstDigit:
				v /= 10
			case SecondDigit:
				v %= 10
			}
		}
		a.bin = append(a.bin, v-tlo)
	}
	return a
}

func (a *nullAcc) add(draw []int64, n int64) {
	clear(a.counts)
	for i, c := range draw {
		a.counts[a.bin[i]] += c
	}
	for i, c := range a.counts {
		a.actual[i] = float64(c) / float64(n)
	}
	a.mads = append(a.mads, MAD(a.actual, a.exp))
	r := countRuns(a.actual, a.exp)
	a.hist[r]++
	a.sum += float64(r)
	a.sum2 += float64(r) * float64(r)
	if r < FewRunsFirstTwo {
		a.few++
	}
}

func (a *nullAcc) null(n int64) *runsNull {
	K := len(a.exp)
	d := &runsNull{n: n, sims: NullSimulations, cdf: make([]int, K+1)}
	acc := 0
	for r := range a.hist {
		acc += a.hist[r]
		d.cdf[r] = acc
	}
	s := float64(NullSimulations)
	d.mean = a.sum / s
	d.sd = math.Sqrt(math.Max(0, (a.sum2-a.sum*a.sum/s)/(s-1)))
	d.fewRun = float64(a.few) / s
	var ms, ms2 float64
	for _, m := range a.mads {
		ms += m
		ms2 += m * m
	}
	d.madMean = ms / s
	d.madSD = math.Sqrt(math.Max(0, (ms2-ms*ms/s)/(s-1)))
	slices.Sort(a.mads)
	d.mads = a.mads
	return d
}

// countRuns counts the runs of over (actual > expected) and under marks,
// as RunsTest does, without building the stretches.
func countRuns(actual, expected []float64) int {
	r := 0
	prev := false
	for i := range actual {
		over := actual[i] > expected[i]
		if i == 0 || over != prev {
			r++
		}
		prev = over
	}
	return r
}

// calibrateRuns replaces the textbook expectation, spread, z and p of the
// runs test of t at N by those of its simulated null distribution, keeping
// the textbook values (which hold only when every bin expects many amounts
// and the marks are exchangeable) in ExpectedGivenMarks and PNormal.
func calibrateRuns(r *Runs, t Test, n int64) {
	d := runsNullFor(t, n)
	r.ExpectedGivenMarks, r.PNormal = r.Expected, r.P
	r.Expected, r.SD = d.mean, d.sd
	r.Z = 0
	if d.sd > 0 {
		r.Z = (float64(r.Runs) - d.mean) / d.sd
	}
	r.P = d.atMost(r.Runs)
	r.Simulations = d.sims
	r.SimulatedN = d.n
	if t == FirstTwo {
		r.FewRunsRate = d.fewRun
	}
}
