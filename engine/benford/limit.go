package benford

import (
	"fmt"
	"math"
	"sort"
)

// LimitAlpha is the family-wise error rate at which AdjustLimits flags a
// limit.
const LimitAlpha = 0.05

// ExpectedBelowAboveRatio returns the ratio expected, under a
// scale-invariant density f(x) ∝ 1/x, between the count in [T(1-w), T)
// and the count in [T, T(1+w)):
//
//	r(w) = ln(1/(1 - w)) / ln(1 + w)
//
// (∫ dx/x over each band; r(0.10) ≈ 1.1053). The ratio does not depend on
// T. It returns NaN unless 0 < w < 1.
func ExpectedBelowAboveRatio(w float64) float64 {
	if !(w > 0 && w < 1) {
		return math.NaN()
	}
	return -math.Log1p(-w) / math.Log1p(w)
}

// LimitResult is the limit-clustering probe at one limit.
type LimitResult struct {
	Limit         float64 `json:"limit"`
	Width         float64 `json:"width"`
	From          float64 `json:"from"` // T(1-w)
	To            float64 `json:"to"`   // T(1+w): the band [From, To) covered
	Below         int64   `json:"below"`
	Above         int64   `json:"above"`
	ExpectedRatio float64 `json:"expected_ratio"`
	ObservedRatio float64 `json:"observed_ratio"`  // below/above; 0 when above == 0
	ExpectedBelow float64 `json:"expected_below"`  // (below+above) r/(1+r)
	Excess        float64 `json:"excess"`          // below - expected_below
	ExcessVsAbove float64 `json:"excess_vs_above"` // below - r·above: the surplus below if the amounts above are untouched
	Z             float64 `json:"z"`               // excess / sqrt(n q (1-q)), for display and ranking ties
	P             float64 `json:"p"`               // one-sided exact binomial P(X >= below | n, q)
	PAdjusted     float64 `json:"p_adjusted"`      // Holm over the limits adjusted together
	Flagged       bool    `json:"flagged"`         // PAdjusted < 0.05
	// With the density modelled from the flanking bands
	// (LimitProbeFlanked): their counts and the fitted exponent of the
	// local density x^β (−1 is the 1/x of LimitProbe).
	Flanked bool    `json:"flanked"`
	Left    int64   `json:"left,omitempty"`  // amounts in [T(1-2w), T(1-w))
	Right   int64   `json:"right,omitempty"` // amounts in [T(1+w), T(1+2w))
	Beta    float64 `json:"beta"`
}

// CheckLimit reports whether limit and width can be probed: limit must be
// positive and finite, width in (0, 1).
func CheckLimit(limit, w float64) error {
	if !(limit > 0) || math.IsInf(limit, 0) {
		return fmt.Errorf("benford: limit %v: a limit must be a positive amount", limit)
	}
	if !(w > 0 && w < 1) {
		return fmt.Errorf("benford: limit width %v: the width is a fraction of the limit, strictly between 0 and 1 (0.10 for 10%%)", w)
	}
	return nil
}

// LimitProbe tests for amounts clustered just below a limit T (a method of
// this project's own, see docs/design.md): with below the count of amounts
// in [T(1-w), T) and above the count in [T, T(1+w)), under f(x) ∝ 1/x each
// of the n = below+above amounts falls below with probability
//
//	q = r/(1 + r),  r = ExpectedBelowAboveRatio(w),
//
// so below ~ Binomial(n, q). P is the exact one-sided binomial tail
// P(X >= below) (BinomialUpperTail), ExpectedBelow = n q and Excess =
// below - n q, the excess over the split expected for the pooled count.
// When amounts have been moved from above the limit to below it, or added
// below it, the pooled count includes them, so Excess understates their
// number; ExcessVsAbove = below - r·above takes the count above the limit
// as untouched and estimates it directly (a point estimate, not a test).
// PAdjusted and Flagged are left for AdjustLimits (PAdjusted is set to P,
// which is right for a single limit).
//
// The 1/x density is a local assumption. With millions of amounts a
// density that falls faster or slower than 1/x around T also moves P, so
// read Excess beside it. A limit whose band reaches beyond the data's
// range is not meaningful: see ScanLimits.
//
// LimitProbe panics if CheckLimit(limit, w) fails or a count is negative.
func LimitProbe(limit, w float64, below, above int64) LimitResult {
	if err := CheckLimit(limit, w); err != nil {
		panic(err)
	}
	if below < 0 || above < 0 {
		panic("benford: LimitProbe: negative count")
	}
	r := ExpectedBelowAboveRatio(w)
	q := r / (1 + r)
	n := below + above
	res := LimitResult{
		Limit: limit, Width: w, From: limit * (1 - w), To: limit * (1 + w),
		Below: below, Above: above, ExpectedRatio: r, Beta: -1,
		ExpectedBelow: float64(n) * q,
	}
	if above > 0 {
		res.ObservedRatio = float64(below) / float64(above)
	}
	res.Excess = float64(below) - res.ExpectedBelow
	res.ExcessVsAbove = float64(below) - r*float64(above)
	if n > 0 {
		res.Z = res.Excess / math.Sqrt(float64(n)*q*(1-q))
	}
	res.P = BinomialUpperTail(below, n, q)
	res.PAdjusted = res.P
	res.Flagged = res.PAdjusted < LimitAlpha
	return res
}

// AdjustLimits adjusts the p-values of limits probed together with Holm's
// step-down procedure (Holm), sets Flagged = PAdjusted < 0.05 and sorts rs
// by rank: P ascending, then Z descending (so limits whose P underflows to
// 0 still rank by strength), then Limit ascending.
func AdjustLimits(rs []LimitResult) {
	p := make([]float64, len(rs))
	for i, r := range rs {
		p[i] = r.P
	}
	adj := Holm(p)
	for i := range rs {
		rs[i].PAdjusted = adj[i]
		rs[i].Flagged = adj[i] < LimitAlpha
	}
	sort.SliceStable(rs, func(i, j int) bool {
		a, b := rs[i], rs[j]
		if a.P != b.P {
			return a.P < b.P
		}
		if a.Z != b.Z {
			return a.Z > b.Z
		}
		return a.Limit < b.Limit
	})
}

// roundMantissas are the mantissas of the round limits.
var roundMantissas = []float64{1, 2, 2.5, 5}

// RoundLimits returns the round values m × 10^k, m in {1, 2, 2.5, 5},
// within [min, max], ascending: the limits a scan tries when the client's
// own approval limits are not known. A min <= 0 is treated as 1 (limits
// below one currency unit are not scanned); it returns nil if max < min or
// either is not finite.
func RoundLimits(min, max float64) []float64 {
	if math.IsNaN(min) || math.IsNaN(max) || math.IsInf(min, 0) || math.IsInf(max, 0) {
		return nil
	}
	if min <= 0 {
		min = 1
	}
	if max < min {
		return nil
	}
	var out []float64
	k0 := int(math.Floor(math.Log10(min))) - 1
	k1 := int(math.Ceil(math.Log10(max))) + 1
	for k := k0; k <= k1; k++ {
		for _, m := range roundMantissas {
			var v float64
			if k >= 0 {
				v = m * math.Pow10(k)
			} else {
				v = m / math.Pow10(-k)
			}
			if v >= min && v <= max {
				out = append(out, v)
			}
		}
	}
	return out
}

// ScanLimits returns the round limits (RoundLimits) whose whole band
// [T(1-w), T(1+w)) lies within the data's range [min, max], so that
// neither side of the split is cut off by the range itself: a limit near
// the largest amount would otherwise always show a surplus below it.
// It returns nil if CheckLimit(1, w) fails.
func ScanLimits(min, max, w float64) []float64 {
	if CheckLimit(1, w) != nil {
		return nil
	}
	if min <= 0 {
		min = 1
	}
	return RoundLimits(min/(1-w), max/(1+w))
}
