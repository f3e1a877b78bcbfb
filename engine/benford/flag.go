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
	// expected share (MaterialDiff). With δ = 0.2 a bin must hold 20% more
	// or less than it should. The value is a judgement of this project (no
	// published source): large enough that at millions of amounts a flag
	// still names a deviation worth a follow-up, small enough that the
	// planted anomalies of the demo (surpluses of 40% and more in a bin or a
	// range) stay material. The margin is the same share of every bin's
	// expectation: for first digit 1 (30.1%) it is 6 percentage points, and
	// a shift of that size in one digit, the others making up for it, gives
	// a MAD of about 0.013, at the border of the published acceptable and
	// marginal classes (Nigrini 2012), so that the flag and the MAD's
	// severity verdict agree on what is material. (A former cap of the
	// margin at 0.5 points of N flagged 6 of the demo's 9 first digits while
	// its MAD class was acceptable and its verdict immaterial.)
	DefaultMinExcess = 0.2
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
// counts as material for a bin expecting share p: δ · p, δ of the bin's
// expectation.
func MaterialDiff(p, minExcess float64) float64 {
	return minExcess * p
}

// FlaggedBins returns how many bins of count-based test t the bin flag f
// marks against the test's published expectation, without the rest of an
// analysis: for a note that compares another expectation with it (the
// second-order test on amounts in whole units).
func FlaggedBins(t Test, counts []int64, f Flagging) int {
	exp := Expected(t)
	var n int64
	for _, c := range counts {
		n += c
	}
	if n == 0 || len(counts) != len(exp) {
		return 0
	}
	res := Result{N: n, Bins: make([]Bin, len(counts))}
	for i, c := range counts {
		res.Bins[i] = Bin{Count: c, Expected: exp[i], Diff: float64(c)/float64(n) - exp[i]}
	}
	res.flagBins(f)
	k := 0
	for _, b := range res.Bins {
		if b.Flagged {
			k++
		}
	}
	return k
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

// FlagExcluding flags the bins of a count-based result again with the
// given bins left out of the test: a known property of the data explains
// them (for the second-order test, the differences of 1 to 9 units of the
// ledger's scale that fill bins 10, 20, ..., 90). The other bins are
// tested conditionally, as if the excluded bins did not exist: N' = N less
// their counts, each expected share p / (1 - the excluded shares), exact
// binomial p-values adjusted by Holm over the bins left, and the
// materiality margin on the conditional shares. So the surplus in the
// excluded bins no longer shows as a shortfall everywhere else. The
// excluded bins keep their own P and PAdjusted, and are never flagged. It
// returns how many of the excluded bins the plain flag had flagged.
func (res *Result) FlagExcluding(bins []int) int {
	excluded := map[int]bool{}
	for _, b := range bins {
		excluded[b] = true
	}
	was := 0
	var n int64
	var pOut float64
	for _, b := range res.Bins {
		if excluded[b.Bin] {
			if b.Flagged {
				was++
			}
			pOut += b.Expected
			continue
		}
		n += b.Count
	}
	var idx []int
	var ps []float64
	for i := range res.Bins {
		b := &res.Bins[i]
		b.Flagged = false
		if excluded[b.Bin] || n == 0 || pOut >= 1 {
			continue
		}
		q := b.Expected / (1 - pOut)
		b.P = BinomialTwoSided(b.Count, n, q)
		b.MinDiff = MaterialDiff(q, res.FlagRule.MinExcess)
		b.Material = math.Abs(float64(b.Count)/float64(n)-q) >= b.MinDiff*(1-1e-12)
		idx = append(idx, i)
		ps = append(ps, b.P)
	}
	adj := Holm(ps)
	for k, i := range idx {
		b := &res.Bins[i]
		b.PAdjusted = adj[k]
		b.Flagged = b.PAdjusted < res.FlagRule.Alpha && b.Material
	}
	res.Flagged, res.ZFlagged, res.OutsideGoodman, res.TopFlagged = 0, 0, 0, []int{}
	res.countFlags()
	return was
}
