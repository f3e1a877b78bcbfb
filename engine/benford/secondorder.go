package benford

import (
	"fmt"
	"maps"
	"math"
	"slices"
	"sync"
)

// The second-order test on amounts in whole units of the ledger's scale.
//
// Sorted amounts following a smooth density f have neighbouring
// differences that are, locally, exponential with mean 1/(N f(x)) (the
// spacings of order statistics). For Benford's law over
// [min, min·10^D), f(x) = 1/(x D ln 10), so a difference at x has mean
// μ(x) = x D ln 10 / N, and the positions of the differences are spread
// like the amounts: log10 μ is uniform over D decades. With μ over whole
// decades, the first two digits of the differences follow Benford's law
// (a scale mixture over whole decades; Nigrini and Miller 2009 give the
// test).
//
// Amounts in whole units (cents at scale 2) change this where μ is a few
// units or less. Two neighbours a continuous distance g apart, rounded to
// units, differ by ⌊g⌋ or ⌈g⌉ units, ⌈g⌉ with probability g − ⌊g⌋ (the
// position inside a unit being uniform): the whole-unit difference D has
// P(D = d | g) = max(0, 1 − |g − d|), a triangle around g. For an
// exponential g with rate λ = 1/μ this gives, for d >= 1,
//
//	P(D = d) = λ ∫ max(0, 1 − |t|) e^{−λ(d + t)} dt = e^{−λd} · 4 sinh²(λ/2) / λ
//
// (a geometric law in d; d = 0, a tie, is dropped by the test). The
// expected share of first-two bin k is this summed over the whole numbers
// whose first two digits are k (1 to 9 for bins 10, 20, ..., 90), averaged
// over log10 μ uniform on its D decades, and divided by the share of
// non-zero differences. As the unit shrinks it returns to Benford's law
// (TestSecondOrderScaledContinuousLimit), and on simulated cent amounts it
// matches the sorted differences (TestSecondOrderCents).

// secondOrderKey rounds a model for the cache.
type secondOrderKey struct {
	n       int64   // N on a grid of 100 steps a decade
	decades float64 // to 0.05
	logLow  float64 // log10(min / unit), to 0.01
}

var secondOrderCache sync.Map // secondOrderKey -> []float64

// secondOrderSteps is the number of integration points a decade of log10 μ.
const secondOrderSteps = 200

// SecondOrderExpectedScaled returns the expected shares of the
// second-order bins 10..99 for s.N amounts following Benford's law from
// s.Min over the decades whose mean is s.Mean (FitDecades), held in whole
// units of s.Unit. With s.Unit == 0 (continuous amounts) or an invalid
// scale it returns Expected(SecondOrder).
func SecondOrderExpectedScaled(s Scale) []float64 {
	if !(s.Unit > 0) || !s.Valid() || s.N < 2 {
		return Expected(SecondOrder)
	}
	d, _ := FitDecades(s.Min, s.Mean)
	n := int64(math.Round(math.Pow(10, math.Round(100*math.Log10(float64(s.N)))/100)))
	key := secondOrderKey{n: n, decades: math.Round(d*20) / 20, logLow: math.Round(100*math.Log10(s.Min/s.Unit)) / 100}
	if v, ok := secondOrderCache.Load(key); ok {
		return append([]float64(nil), v.([]float64)...)
	}
	p := secondOrderShares(float64(key.n), key.decades, key.logLow)
	secondOrderCache.Store(key, p)
	return append([]float64(nil), p...)
}

// secondOrderShares integrates the model: n amounts log-uniform over
// decades D from 10^logLow units.
func secondOrderShares(n, D, logLow float64) []float64 {
	p := make([]float64, 90)
	// log10 μ runs over [logLow + log10(D ln10 / n), ... + D)
	base := logLow + math.Log10(D*math.Ln10/n)
	steps := int(math.Ceil(D * secondOrderSteps))
	var nonzero float64
	for i := range steps {
		lm := base + (float64(i)+0.5)*D/float64(steps)
		nonzero += addGapShares(p, math.Pow(10, -lm), 1)
	}
	return normalizeGapShares(p, nonzero)
}

// addGapShares adds to p (90 bins) weight times the probability that a
// whole-unit difference of mean spacing 1/lambda units falls in each
// first-two bin, and returns weight times the probability that it is not
// zero.
func addGapShares(p []float64, lambda, weight float64) float64 {
	if lambda > 700 {
		return 0 // differences below a unit: all ties
	}
	c := 4 * math.Pow(math.Sinh(lambda/2), 2) / lambda
	den := -math.Expm1(-lambda)
	// P(a <= D <= b) = c/den · (e^{-λa} − e^{-λ(b+1)}), written so that it
	// keeps its digits when λ is tiny (a mean spacing of millions of units)
	between := func(a, b float64) float64 {
		return c * math.Exp(-lambda*a) * -math.Expm1(-lambda*(b+1-a)) / den
	}
	// Differences below 10^lo units hold a share under 10^-8 of them: the
	// digit lengths start there (at 0, the single digits, when the
	// spacing is small) and run until the exponential's tail is spent.
	lo := max(0, int(math.Floor(-math.Log10(lambda)))-8)
	for k := 10; k <= 99; k++ {
		var q float64
		if k%10 == 0 && lo == 0 {
			q += between(float64(k/10), float64(k/10))
		}
		for L := lo; L <= lo+40; L++ {
			a := float64(k) * math.Pow10(L)
			if lambda*a > 745 {
				break
			}
			q += between(a, (float64(k)+1)*math.Pow10(L)-1)
		}
		p[k-10] += weight * q
	}
	return weight * c * math.Exp(-lambda) / den
}

// normalizeGapShares turns the summed bin probabilities into shares of
// the non-zero differences.
func normalizeGapShares(p []float64, nonzero float64) []float64 {
	if nonzero <= 0 {
		return Expected(SecondOrder)
	}
	var tot float64
	for k := range p {
		p[k] /= nonzero
		tot += p[k]
	}
	for k := range p {
		p[k] /= tot // the digit lengths summed are complete to rounding
	}
	return p
}

// SpacingSteps is the number of buckets a decade of the local spacing's
// histogram (SecondOrderExpectedSpacing): bucket b holds the differences
// whose local mean spacing μ, in units, has round(log10(μ)·SpacingSteps)
// = b.
const SpacingSteps = 50

// SpacingWindow is the number of sorted neighbours on each side over
// which a difference's local mean spacing is taken: (largest - smallest
// amount of the window) / (amounts in it - 1). 50 a side gives the mean
// of 100 differences, about 10% noise.
const SpacingWindow = 50

// SecondOrderExpectedSpacing returns the expected shares of the
// second-order bins 10..99 for differences in whole units whose local
// mean spacings are given, as a histogram: spacing[b] differences (zero
// ones included) have a local mean spacing of about 10^(b/SpacingSteps)
// units. Each difference is taken as the whole-unit rounding of an
// exponential gap of its own local mean (the spacings of order statistics
// of a smooth density, locally), so the expectation follows the
// population's own density instead of a model of it: a population whose
// amounts are not log-uniform (most ledgers, built from ranges and
// mixtures) is read against its own spacing, and what stands out is
// spacing the density does not explain, such as amounts a fixed step
// apart. An empty histogram gives Expected(SecondOrder).
func SecondOrderExpectedSpacing(spacing map[int]int64) []float64 {
	if len(spacing) == 0 {
		return Expected(SecondOrder)
	}
	p := make([]float64, 90)
	var nonzero float64
	// In bucket order: sums of floats depend on their order, and the same
	// histogram must give the same shares to the last bit on every run.
	for _, b := range slices.Sorted(maps.Keys(spacing)) {
		if w := spacing[b]; w > 0 {
			nonzero += addGapShares(p, math.Pow(10, -float64(b)/SpacingSteps), float64(w))
		}
	}
	return normalizeGapShares(p, nonzero)
}

// SpacingHistogram returns the local mean spacing histogram of sorted
// amounts in whole units (ascending), as SecondOrderExpectedSpacing reads
// it and as the battery's second-order query computes it in SQL: the
// difference between amounts i-1 and i has the local mean spacing of the
// amounts i-W .. i+W (W = SpacingWindow, cut at the ends), (last -
// first)/(amounts - 1); where those amounts are all equal the difference
// is left out (all its neighbours are ties).
func SpacingHistogram(sorted []int64) map[int]int64 {
	h := map[int]int64{}
	n := len(sorted)
	for i := 1; i < n; i++ {
		lo, hi := max(0, i-SpacingWindow), min(n-1, i+SpacingWindow)
		mu := float64(sorted[hi]-sorted[lo]) / float64(hi-lo)
		if mu <= 0 {
			continue
		}
		h[int(math.Round(math.Log10(mu)*SpacingSteps))]++
	}
	return h
}

// AnalyzeExpected runs count-based digit test t against the expected
// shares exp (len the test's bins, summing to 1) instead of the test's
// published expectation: the bin flag, the per-bin references, the MAD
// (with ExpectedMAD still from the published shares), chi-square and
// Kolmogorov-Smirnov all read exp. The runs test's null stays the one
// drawn from the published shares. Used for the second-order test on
// amounts in whole units (SecondOrderExpectedScaled).
func AnalyzeExpected(t Test, counts []int64, f Flagging, exp []float64) (Result, error) {
	lo, hi := t.Bins()
	if len(exp) != hi-lo+1 {
		return Result{}, fmt.Errorf("benford: %s needs %d expected shares, got %d", t.Name(), hi-lo+1, len(exp))
	}
	return analyze(t, counts, f, exp)
}
