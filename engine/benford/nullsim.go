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
	left, mass := n, 1.0
	for k, pk := range p {
		if left == 0 {
			break
		}
		if k == len(p)-1 || pk >= mass {
			c[k] = left
			break
		}
		x := Binomial(rng, left, pk/mass)
		c[k] = x
		left -= x
		mass -= pk
	}
	return c
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
	switch {
	case n <= 0 || q <= 0:
		return 0
	case q >= 1:
		return n
	case q > 0.5:
		return n - Binomial(rng, n, 1-q)
	}
	N := float64(n)
	odds := q / (1 - q)
	u := rng.Float64()
	if N*q < 10 {
		f := math.Exp(N * math.Log1p(-q)) // P(X = 0) >= e^-20
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
	lf := func(x float64) float64 { v, _ := math.Lgamma(x); return v }
	fm := math.Exp(lf(N+1) - lf(M+1) - lf(N-M+1) + M*math.Log(q) + (N-M)*math.Log1p(-q))
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
// for the life of the process.
func runsNullFor(t Test, n int64) *runsNull {
	key := nullKey{t, simulatedN(n)}
	if v, ok := runsCache.Load(key); ok {
		return v.(*runsNull)
	}
	h := fnv.New64a()
	h.Write([]byte(t))
	rng := rand.New(rand.NewPCG(h.Sum64(), uint64(key.n)))
	exp := Expected(t)
	K := len(exp)
	hist := make([]int, K+1)
	actual := make([]float64, K)
	var sum, sum2 float64
	few := 0
	mads := make([]float64, 0, NullSimulations)
	for range NullSimulations {
		c := Multinomial(rng, exp, key.n)
		for i := range c {
			actual[i] = float64(c[i]) / float64(key.n)
		}
		mads = append(mads, MAD(actual, exp))
		r := countRuns(actual, exp)
		hist[r]++
		sum += float64(r)
		sum2 += float64(r) * float64(r)
		if r < FewRunsFirstTwo {
			few++
		}
	}
	d := &runsNull{n: key.n, sims: NullSimulations, cdf: make([]int, K+1)}
	acc := 0
	for r := range hist {
		acc += hist[r]
		d.cdf[r] = acc
	}
	s := float64(NullSimulations)
	d.mean = sum / s
	d.sd = math.Sqrt(math.Max(0, (sum2-sum*sum/s)/(s-1)))
	d.fewRun = float64(few) / s
	var ms, ms2 float64
	for _, m := range mads {
		ms += m
		ms2 += m * m
	}
	d.madMean = ms / s
	d.madSD = math.Sqrt(math.Max(0, (ms2-ms*ms/s)/(s-1)))
	slices.Sort(mads)
	d.mads = mads
	v, _ := runsCache.LoadOrStore(key, d)
	return v.(*runsNull)
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
