package benford

import (
	"math"
	"sort"
)

// atLeast returns the share of draws in sorted (ascending) at or above x,
// counting the observed population among them ((count + 1)/(draws + 1)).
func atLeast(sorted []float64, x float64) float64 {
	i := sort.SearchFloat64s(sorted, x)
	return float64(len(sorted)-i+1) / float64(len(sorted)+1)
}

// tailTop is the number of the largest simulated draws through which
// tailAtLeast fits the tail beyond the draws.
const tailTop = 100

// tailAtLeast returns P(T >= x) from the simulated draws of T (sorted
// ascending), counting the observed population among them: the share
// (count + 1)/(draws + 1) when some draw reaches x. When none does, that
// share would stop at 1/(draws + 1), which a family of many segments
// (AcrossSegments multiplies by their number) cannot use; beyond the
// draws the tail is then read from an exponential fitted to the tailTop
// largest draws (peaks over a threshold; fitting the tail of a simulated
// null to extend its p-values is the approach of T. A. Knijnenburg et al.,
// Fewer permutations, more accurate P-values, Bioinformatics 25, i161,
// 2009, from memory, who fit a generalized Pareto law; the exponential is
// its shape-zero case):
//
//	P(T >= x) ≈ (tailTop + 1)/(draws + 1) · exp(-(x - u)/σ),
//
// u the threshold (the largest draw below the tailTop largest), σ the
// mean excess of those draws over u. The largest of many nearly normal
// statistics has a tail that falls faster than any exponential, so the
// fitted exponential overstates the p-value beyond the draws: it errs on
// the side of fewer flags (TestTailAtLeastConservative). It never
// returns more than 1/(draws + 1).
func tailAtLeast(sorted []float64, x float64) float64 {
	n := len(sorted)
	if n <= tailTop || x <= sorted[n-1] {
		return atLeast(sorted, x)
	}
	u := sorted[n-tailTop-1]
	var excess float64
	for _, v := range sorted[n-tailTop:] {
		excess += v - u
	}
	sigma := excess / tailTop
	floor := 1 / float64(n+1)
	if !(sigma > 0) {
		return floor
	}
	return math.Min(floor, float64(tailTop+1)/float64(n+1)*math.Exp(-(x-u)/sigma))
}
