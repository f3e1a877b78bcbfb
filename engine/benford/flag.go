package benford

import (
	"fmt"
	"math"
)

// Defaults of the bin flag.
const (
	// FlagAlpha is the family-wise error rate of the bin flag of each test:
	// on a population that follows the test's expectation, the chance that
	// any bin of the test is flagged is at most 5%, at every N.
	FlagAlpha = 0.05
	// DefaultMinExcess is the materiality margin δ of the bin flag: a bin is
	// material when its deviation from expectation is at least δ times its
	// expected share, or δ times 2.5 percentage points of N, whichever is
	// smaller (MaterialDiff). With δ = 0.2 a bin must hold 20% more or less
	// than it should, or be off by half a percentage point of all amounts.
	// The value is a judgement of this project (no published source): large
	// enough that at millions of amounts a flag still names a deviation worth
	// a follow-up, small enough that the planted anomalies of the demo (5% to
	// 40% surpluses in a bin or a range) stay material.
	DefaultMinExcess = 0.2
	// materialCap is the expected share above which the margin no longer
	// grows with the bin's share (2.5% of N: for the first-digit bins, whose
	// shares run to 30%, a 20% relative margin would hide a shift of 6
	// percentage points).
	materialCap = 0.025
)

// Flagging says when a bin of a count-based digit test is flagged: its
// exact two-sided binomial p-value, adjusted by Holm's step-down over the
// test's K bins, is below Alpha, and its deviation is material (at least
// MaterialDiff(p, MinExcess) as a share of N).
//
// The first condition controls the family-wise false-alarm rate at Alpha
// for each test, at every N and for every segment: the exact tail needs no
// large-sample approximation, and Holm's procedure holds under any
// dependence between the bins (the multinomial counts are dependent). The
// second keeps flags to deviations that matter: at millions of amounts
// almost every bin of real data differs significantly, by immaterial
// amounts.
type Flagging struct {
	Alpha     float64 `json:"alpha"`
	MinExcess float64 `json:"min_excess"`
}

// DefaultFlagging is the flag every summary, note, ranking, chart and
// extract uses unless the user sets --min-excess.
var DefaultFlagging = Flagging{Alpha: FlagAlpha, MinExcess: DefaultMinExcess}

// Check reports an out-of-range setting.
func (f Flagging) Check() error {
	if !(f.Alpha > 0 && f.Alpha < 1) {
		return fmt.Errorf("flag alpha %v: give a value in (0, 1)", f.Alpha)
	}
	if !(f.MinExcess >= 0 && f.MinExcess < 10) || math.IsNaN(f.MinExcess) {
		return fmt.Errorf("--min-excess %v: give a share from 0 (no materiality margin) to below 10, e.g. 0.2 for 20%%", f.MinExcess)
	}
	return nil
}

// MaterialDiff returns the smallest |actual - expected| (a share of N) that
// counts as material for a bin expecting share p:
//
//	δ · min(p, 0.025)
//
// that is δ of the bin's expectation, but never more than δ × 2.5
// percentage points of N.
func MaterialDiff(p, minExcess float64) float64 {
	return minExcess * math.Min(p, materialCap)
}

// flagBins fills P, PAdjusted, Material and Flagged of the bins from their
// counts (N = n > 0), and the result's flag settings.
func (res *Result) flagBins(f Flagging) {
	n := res.N
	ps := make([]float64, len(res.Bins))
	for i := range res.Bins {
		b := &res.Bins[i]
		ps[i] = BinomialTwoSided(b.Count, n, b.Expected)
		b.P = ps[i]
		b.MinDiff = MaterialDiff(b.Expected, f.MinExcess)
		// A tiny slack so that an excess of exactly the margin, computed
		// through float divisions, counts as material.
		b.Material = math.Abs(b.Diff) >= b.MinDiff*(1-1e-12)
	}
	adj := Holm(ps)
	for i := range res.Bins {
		b := &res.Bins[i]
		b.PAdjusted = adj[i]
		b.Flagged = b.PAdjusted < f.Alpha && b.Material
	}
}

// Unflag clears the flag of the given bins (a rule of the caller: bins a
// known property of the data explains), recounts Flagged and TopFlagged,
// and returns how many of them were flagged. P and PAdjusted stay: Holm
// over all K bins is conservative for the bins left.
func (res *Result) Unflag(bins []int) int {
	n := 0
	for i := range res.Bins {
		b := &res.Bins[i]
		for _, x := range bins {
			if b.Bin == x && b.Flagged {
				b.Flagged = false
				n++
			}
		}
	}
	res.Flagged, res.ZFlagged, res.OutsideGoodman, res.TopFlagged = 0, 0, 0, []int{}
	res.countFlags()
	return n
}
