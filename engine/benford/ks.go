package benford

import "math"

// KS returns the Kolmogorov-Smirnov distance over the ordered bins,
//
//	D = max_k |Σ_{j<=k} (p̂_j - p_j)|.
//
// It panics if the lengths differ.
func KS(actual, expected []float64) float64 {
	if len(actual) != len(expected) {
		panic("benford: KS: length mismatch")
	}
	var cum, d float64
	for i := range actual {
		cum += actual[i] - expected[i]
		d = math.Max(d, math.Abs(cum))
	}
	return d
}

// KSCritical returns the 5% critical value 1.36/sqrt(N) of the
// Kolmogorov-Smirnov distance (the large-sample value for a continuous
// distribution; over discrete bins the test is conservative). It returns
// 0 for n <= 0 ("not computed").
func KSCritical(n int64) float64 {
	if n <= 0 {
		return 0
	}
	return 1.36 / math.Sqrt(float64(n))
}
