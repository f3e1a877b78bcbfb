package benford

import "math"

// ZCritical is the two-sided 5% critical value of the standard normal
// distribution used for the per-bin bounds (1.96, as published; the exact
// quantile is 1.959964).
const ZCritical = 1.96

// ZStat returns the Z-statistic of one bin with the continuity correction
// (Nigrini 2012, Benford's Law, Wiley):
//
//	Z = (|p̂ - p| - 1/(2N)) / sqrt(p(1 - p)/N)
//
// where the 1/(2N) term is used only when it is smaller than |p̂ - p|
// (otherwise Z = |p̂ - p| / sqrt(p(1 - p)/N)). Z is never negative: the
// sign of the deviation is that of p̂ - p. ZStat returns 0 when n <= 0 or
// p is not in (0, 1).
func ZStat(phat, p float64, n int64) float64 {
	if n <= 0 || !(p > 0 && p < 1) {
		return 0
	}
	N := float64(n)
	d := math.Abs(phat - p)
	if c := 1 / (2 * N); c < d {
		d -= c
	}
	return d / math.Sqrt(p*(1-p)/N)
}

// Bounds returns the per-bin 95% bounds around the expected proportion p
// for N = n amounts (Nigrini 2012):
//
//	p ± (1.96 sqrt(p(1 - p)/N) + 1/(2N))
//
// A proportion outside [lower, upper] has Z > 1.96. The bounds are not
// clipped to [0, 1]; a negative lower bound simply cannot be crossed.
// For n <= 0 Bounds returns (0, 1).
func Bounds(p float64, n int64) (lower, upper float64) {
	if n <= 0 {
		return 0, 1
	}
	N := float64(n)
	h := ZCritical*math.Sqrt(p*(1-p)/N) + 1/(2*N)
	return p - h, p + h
}
