package benford

import (
	"math"

	"gonum.org/v1/gonum/mathext"
)

// BinomialUpperTail returns P(X >= k) for X ~ Binomial(n, q), through the
// identity
//
//	P(X >= k) = I_q(k, n - k + 1)     (1 <= k <= n)
//
// with I the regularized incomplete beta function (gonum's
// mathext.RegIncBeta; Abramowitz and Stegun 1964, 26.5.24). Unlike 1 - CDF
// it keeps its relative precision far into the tail, and it stays sound for
// n in the millions.
func BinomialUpperTail(k, n int64, q float64) float64 {
	switch {
	case k <= 0:
		return 1
	case k > n:
		return 0
	case q <= 0:
		return 0
	case q >= 1:
		return 1
	}
	return mathext.RegIncBeta(float64(k), float64(n-k+1), q)
}

// PoissonUpperTail returns P(X >= k) for X ~ Poisson(lambda), through
//
//	P(X >= k) = P(k, λ)     (k >= 1)
//
// with P the regularized lower incomplete gamma function (gonum's
// mathext.GammaIncReg; Abramowitz and Stegun 1964, 26.4.21). k need not be
// an integer: for scaled (quasi-Poisson) counts the same expression is the
// continuous extension.
func PoissonUpperTail(k, lambda float64) float64 {
	switch {
	case k <= 0:
		return 1
	case lambda <= 0:
		return 0
	}
	return mathext.GammaIncReg(k, lambda)
}

// BinomialLowerTail returns P(X <= k) for X ~ Binomial(n, q), through the
// mirror of the identity above,
//
//	P(X <= k) = I_{1-q}(n - k, k + 1)     (0 <= k < n)
//
// so that it, too, keeps its relative precision deep in the tail.
func BinomialLowerTail(k, n int64, q float64) float64 {
	switch {
	case k < 0:
		return 0
	case k >= n:
		return 1
	case q <= 0:
		return 1
	case q >= 1:
		return 0
	}
	return mathext.RegIncBeta(float64(n-k), float64(k+1), 1-q)
}

// BinomialTwoSided returns the two-sided exact p-value of observing k
// successes in n trials of probability q: twice the smaller tail,
//
//	p = min(1, 2 min(P(X <= k), P(X >= k))),
//
// the "doubled tail" convention. It is never smaller than the probability
// of a result at least as far out on the same side, so under the null it
// is super-uniform (P(p <= a) <= a), which Holm's procedure needs.
func BinomialTwoSided(k, n int64, q float64) float64 {
	lo := BinomialLowerTail(k, n, q)
	hi := BinomialUpperTail(k, n, q)
	return math.Min(1, 2*math.Min(lo, hi))
}
