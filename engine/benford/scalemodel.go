package benford

import "math"

// Scale describes where a population's amounts lie, for the tests whose
// null distribution depends on more than the bin shares: the summation
// test (its shares are of amounts, so the spread of the amounts matters)
// and the second-order test (differences of amounts in whole units of the
// ledger's scale are discrete).
//
// The null model is Benford's law itself: amounts log-uniform over
// [Min, Min·10^Decades), with Decades fitted so that the model's mean
// equals the population's mean |amount| (FitDecades).
type Scale struct {
	N    int64   // amounts tested
	Min  float64 // the smallest |amount| the test takes (currency units), > 0
	Mean float64 // the population's mean |amount|
	Unit float64 // one unit of the ledger's scale (0.01 at scale 2); 0: continuous
}

// Valid reports whether the scale can fit a model.
func (s Scale) Valid() bool {
	return s.N > 0 && s.Min > 0 && s.Mean > 0 && !math.IsInf(s.Mean, 0) && !math.IsNaN(s.Mean)
}

// Model bounds of the fitted number of decades: fewer than one decade
// cannot hold Benford's law over the 90 first-two bins; more than 15 is
// beyond any ledger's amounts.
const (
	minDecades = 1
	maxDecades = 15
)

// FitDecades returns D such that amounts log-uniform over [min, min·10^D)
// have mean mean:
//
//	mean / min = (10^D − 1) / (D ln 10)
//
// (the mean of a log-uniform variable on [a, b) is (b − a)/ln(b/a)). The
// right side increases with D, so bisection finds it. The result is held
// to [1, 15]; fitted reports whether it was inside (false: the amounts'
// mean is below what one whole decade gives, or above 15 decades).
func FitDecades(min, mean float64) (d float64, fitted bool) {
	if !(min > 0) || !(mean > 0) {
		return minDecades, false
	}
	target := mean / min
	f := func(D float64) float64 { return math.Expm1(D*math.Ln10) / (D * math.Ln10) }
	if target <= f(minDecades) {
		return minDecades, false
	}
	if target >= f(maxDecades) {
		return maxDecades, false
	}
	lo, hi := float64(minDecades), float64(maxDecades)
	for range 100 {
		mid := (lo + hi) / 2
		if f(mid) < target {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2, true
}

// logUniformMoments returns E[X] and Var[X] of X log-uniform on [a, b).
func logUniformMoments(a, b float64) (mean, variance float64) {
	l := math.Log(b / a)
	if l <= 0 {
		return a, 0
	}
	mean = (b - a) / l
	m2 := (b*b - a*a) / (2 * l)
	return mean, math.Max(0, m2-mean*mean)
}
