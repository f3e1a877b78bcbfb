package benford

import (
	"fmt"
	"math"
	"sort"
	"strconv"

	"github.com/leadline/leadline/engine/numfmt"
)

// Rules of thumb applied by Analyze (common practice, no source).
const (
	// MinAmounts is the number of amounts below which a note warns that
	// digit tests flag more bins by chance.
	MinAmounts = 5000
	// MaxFlaggedFirstTwo is the number of flagged first-two bins above
	// which a note asks whether the population should follow Benford's law.
	MaxFlaggedFirstTwo = 10
	// FewRunsFirstTwo is the number of runs over the 90 first-two bins
	// below which a note suggests looking for a threshold at work.
	FewRunsFirstTwo = 35
	// TopFlagged is the number of flagged bins to follow up first.
	TopFlagged = 4
)

// Bin is one bin of a digit test.
type Bin struct {
	Bin            int     `json:"bin"`
	Label          string  `json:"label"`                // e.g. "1", "10", "05" for last-two
	Count          int64   `json:"count"`                // for Summation: count of amounts in the bin (informational)
	Amount         float64 `json:"amount,omitempty"`     // Summation only: sum of absolute amounts in the bin
	Actual         float64 `json:"actual"`               // p̂ = count/N (Summation: amount/total)
	Expected       float64 `json:"expected"`             // p
	Diff           float64 `json:"diff"`                 // actual - expected
	Z              float64 `json:"z"`                    // ZStat, never negative (0 for Summation): the trade's reference
	Lower          float64 `json:"lower"`                // p - (1.96 sqrt(p(1-p)/N) + 1/(2N)): reference bound
	Upper          float64 `json:"upper"`                // p + (1.96 sqrt(p(1-p)/N) + 1/(2N)): reference bound
	ZFlagged       bool    `json:"z_flagged"`            // actual outside [Lower, Upper]: the per-bin reference, about 5% of bins by chance
	P              float64 `json:"p"`                    // exact two-sided binomial p-value of the count (1 for Summation)
	PAdjusted      float64 `json:"p_adjusted"`           // P adjusted by Holm's step-down over the test's bins
	MinDiff        float64 `json:"min_diff"`             // the materiality margin: smallest |Diff| that is material
	Neighbours     float64 `json:"neighbours,omitempty"` // Summation only: the median share of the bins beside it, part of its margin
	Material       bool    `json:"material"`             // |Diff| >= MinDiff
	Flagged        bool    `json:"flagged"`              // the flag: PAdjusted < alpha and Material (Summation: its own rule); in a segment, also PSegments < alpha
	PSegments      float64 `json:"p_segments,omitempty"` // in a segment: PAdjusted adjusted again over the ranking's segments (AcrossSegments)
	GoodmanLower   float64 `json:"goodman_lower"`        // simultaneous 95% interval for the bin's proportion
	GoodmanUpper   float64 `json:"goodman_upper"`
	OutsideGoodman bool    `json:"outside_goodman"` // expected outside [GoodmanLower, GoodmanUpper]
}

// Result is the result of one digit test.
type Result struct {
	Test        Test    `json:"test"`
	N           int64   `json:"n"`               // amounts tested (Summation: amounts contributing)
	Total       float64 `json:"total,omitempty"` // Summation: total absolute amount
	Bins        []Bin   `json:"bins"`
	MAD         float64 `json:"mad"`
	Conformity  string  `json:"conformity"` // Close, Acceptable, Marginal, Nonconforming, NoPublishedRange or NoAmounts
	ExpectedMAD float64 `json:"expected_mad"`
	ExcessMAD   float64 `json:"excess_mad"`
	// MADNull is the MAD's simulated distribution under conformity at N,
	// and Severity reads the MAD against it and against the published
	// class (WithinChance, BeyondChanceImmaterial, BeyondChanceMaterial,
	// BeyondChance); nil and "" for the summation test and N == 0.
	MADNull    *MADNull `json:"mad_null,omitempty"`
	Severity   string   `json:"severity,omitempty"`
	Chi2       float64  `json:"chi2"`
	DF         int      `json:"df"` // 0: chi-square not computed (N == 0, Summation)
	PValue     float64  `json:"p_value"`
	KSD        float64  `json:"ks_d"`
	KSCritical float64  `json:"ks_critical"` // 0: not computed (N == 0, Summation)
	CvMU2      float64  `json:"cvm_u2"`      // discrete Cramér–von Mises: Watson's U² (cvm.go), the same wherever the cycle of bins starts
	CvMU2P     float64  `json:"cvm_u2_p"`    // its asymptotic p-value (1: not computed, N == 0, Summation)
	CvMW2      float64  `json:"cvm_w2"`      // discrete Cramér–von Mises W²
	CvMW2P     float64  `json:"cvm_w2_p"`    // its asymptotic p-value
	Flagged    int      `json:"flagged"`     // bins flagged (Bin.Flagged)
	// LocalSurplus is the first-two test's local surplus flag: stretches
	// of adjacent bins against the smooth expectation of their neighbours
	// (localsurplus.go); nil for the other tests and N == 0.
	LocalSurplus   *LocalSurplus `json:"local_surplus,omitempty"`
	ZFlagged       int           `json:"z_flagged"` // bins outside the per-bin 95% reference bounds
	FlagRule       Flagging      `json:"flag_rule"` // the family-wise alpha and the materiality margin of Flagged
	OutsideGoodman int           `json:"outside_goodman"`
	// GoodmanHolds is false when some bin expects fewer than
	// GoodmanMinExpected amounts: there the simultaneous intervals flag
	// conforming populations far more often than 5% (measured in
	// TestFalseAlarmRates), and OutsideGoodman is not a family-wise signal.
	GoodmanHolds bool  `json:"goodman_holds"`
	TopFlagged   []int `json:"top_flagged"` // up to four flagged bins: surplus first, each kind by Z descending
	Runs         *Runs `json:"runs,omitempty"`
	// Summation only: the null model's range in decades (fitted to the
	// mean |amount|, rounded to whole decades) and the N it was simulated at.
	SummationDecades float64 `json:"summation_decades,omitempty"`
	SimulatedN       int64   `json:"simulated_n,omitempty"`
	// SegmentFamily is set on a segment's result: how its flags were
	// adjusted over the segments of its ranking (AcrossSegments).
	SegmentFamily *SegmentFamily `json:"segment_family,omitempty"`
	Notes         []string       `json:"notes"`
}

// Analyze runs digit test t from its bin counts with DefaultFlagging: see
// AnalyzeWith.
func Analyze(t Test, counts []int64) (Result, error) {
	return AnalyzeWith(t, counts, DefaultFlagging)
}

// AnalyzeWith runs digit test t from its bin counts: counts[i] is the count
// of bin lo+i, where lo, hi := t.Bins() and len(counts) == hi-lo+1. Counts
// are additive, so counts of partitions can be merged (Merge) before
// testing. Use AnalyzeSummation for the summation test.
//
// Per bin it reports the proportion; the flag (Flagging: the exact
// binomial p-value, Holm-adjusted over the bins, and the materiality
// margin); as the trade's reference, the Z-statistic and 95% bounds
// (ZStat, Bounds; ZFlagged, about 5% of the bins of a conforming
// population by chance) and Goodman's simultaneous 95% interval (Goodman).
// Over the bins: the MAD with its published conformity range
// (Conformity), the MAD expected for N (ExpectedMAD) and the excess over
// it, the chi-square test (ChiSquare), the Kolmogorov-Smirnov distance
// with its 5% critical value (KS, KSCritical), the discrete Cramér–von
// Mises U² and W² with their asymptotic p-values (CramerVonMises) and, for
// the first-two,
// first-three and second-order tests, the runs test over the ordered bins
// (RunsTest).
//
// Notes carry the rules of thumb of the trade (common practice, no
// source): fewer than MinAmounts amounts; more than MaxFlaggedFirstTwo
// flagged first-two bins; fewer than FewRunsFirstTwo runs over the
// first-two bins; Goodman's intervals where bins expect too few amounts;
// and "no amounts" when N == 0, in which case only the bins' expected
// proportions are filled and Conformity is NoAmounts.
//
// No field of the result is NaN or infinite, so it always encodes as JSON.
func AnalyzeWith(t Test, counts []int64, f Flagging) (Result, error) {
	return analyze(t, counts, f, nil)
}

// analyze is AnalyzeWith against the expected shares exp (nil: Expected(t)).
func analyze(t Test, counts []int64, f Flagging, exp []float64) (Result, error) {
	if !t.Valid() {
		return Result{}, fmt.Errorf("benford: unknown test %q", t)
	}
	if t == Summation {
		return Result{}, fmt.Errorf("benford: the summation test needs amounts per bin: use AnalyzeSummation")
	}
	if err := f.Check(); err != nil {
		return Result{}, fmt.Errorf("benford: %w", err)
	}
	lo, hi := t.Bins()
	if len(counts) != hi-lo+1 {
		return Result{}, fmt.Errorf("benford: %s needs %d bin counts (bins %s to %s), got %d",
			t.Name(), hi-lo+1, t.Label(lo), t.Label(hi), len(counts))
	}
	var n int64
	for i, c := range counts {
		if c < 0 {
			return Result{}, fmt.Errorf("benford: %s: negative count %d in bin %s", t.Name(), c, t.Label(lo+i))
		}
		n += c
	}

	if exp == nil {
		exp = Expected(t)
	}
	res := Result{Test: t, N: n, Bins: make([]Bin, len(counts)), TopFlagged: []int{}, Notes: []string{}, FlagRule: f}
	actual := make([]float64, len(counts))
	gl, gu := Goodman(counts, GoodmanAlpha)
	minExp := math.Inf(1)
	for i, c := range counts {
		b := Bin{Bin: lo + i, Label: t.Label(lo + i), Count: c, Expected: exp[i],
			GoodmanLower: gl[i], GoodmanUpper: gu[i], P: 1, PAdjusted: 1}
		b.Lower, b.Upper = Bounds(exp[i], n)
		b.MinDiff = MaterialDiff(exp[i], f.MinExcess)
		if n > 0 {
			b.Actual = float64(c) / float64(n)
			b.Diff = b.Actual - b.Expected
			b.Z = ZStat(b.Actual, b.Expected, n)
			b.ZFlagged = b.Actual < b.Lower || b.Actual > b.Upper
			b.OutsideGoodman = b.Expected < b.GoodmanLower || b.Expected > b.GoodmanUpper
		}
		minExp = math.Min(minExp, float64(n)*exp[i])
		actual[i] = b.Actual
		res.Bins[i] = b
	}
	res.GoodmanHolds = n > 0 && minExp >= GoodmanMinExpected
	if n == 0 {
		res.Conformity = NoAmounts
		res.PValue, res.CvMU2P, res.CvMW2P = 1, 1, 1
		res.Notes = append(res.Notes, "no amounts")
		return res, nil
	}
	res.flagBins(f)

	res.MAD = MAD(actual, exp)
	res.Conformity = Conformity(t, res.MAD)
	res.ExpectedMAD = ExpectedMAD(t, n)
	res.ExcessMAD = res.MAD - res.ExpectedMAD
	res.MADNull = madNullFor(t, n, res.MAD)
	res.Severity = Severity(res.Conformity, res.MADNull)
	res.Chi2, res.DF, res.PValue = ChiSquare(counts, exp)
	res.KSD = KS(actual, exp)
	res.KSCritical = KSCritical(n)
	res.CvMU2, res.CvMU2P = CramerVonMises(CvMU2, counts, exp)
	res.CvMW2, res.CvMW2P = CramerVonMises(CvMW2, counts, exp)
	res.countFlags()
	if t == FirstTwo {
		l := LocalSurplusTest(counts, f.Alpha, LocalMinExcess)
		res.LocalSurplus = &l
	}
	if t == FirstTwo || t == FirstThree || t == SecondOrder {
		r := RunsTest(actual, exp, lo)
		calibrateRuns(&r, t, n)
		res.Runs = &r
	}

	if n < MinAmounts {
		res.Notes = append(res.Notes, fmt.Sprintf(
			"only %s amounts: digit tests want about %s or more; with fewer, only large deviations can be told from chance (common practice, no source)",
			numfmt.Int(n), numfmt.Int(MinAmounts)))
	}
	if !res.GoodmanHolds {
		res.Notes = append(res.Notes, fmt.Sprintf(
			"some bins expect fewer than %d amounts (the smallest %.1f): Goodman's simultaneous intervals flag conforming populations far more often than 5%% here, so bins outside them are not a family-wise signal; the bin flag (exact binomial tails with Holm's step-down) still holds its 5%%",
			GoodmanMinExpected, minExp))
	}
	res.noteManyFlagged()
	if t == FirstTwo && res.Runs != nil && res.Runs.Runs < FewRunsFirstTwo {
		msg := fmt.Sprintf("%d runs over the 90 first-two bins (fewer than %d; %s expected; conforming populations of this size have fewer than %d runs in %.1f%% of draws, by simulation): long stretches of surplus and shortfall, look for a threshold at work",
			res.Runs.Runs, FewRunsFirstTwo, numfmt.Stat(res.Runs.Expected), FewRunsFirstTwo, 100*res.Runs.FewRunsRate)
		if s, ok := res.Runs.LargestSurplus(); ok {
			msg += fmt.Sprintf(", starting with the surplus in bins %d to %d", s.From, s.To)
		}
		res.Notes = append(res.Notes, msg+" (common practice, no source)")
	}
	return res, nil
}

// manyFlaggedTail ends the note of noteManyFlagged, so that recountFlags
// can find it again.
const manyFlaggedTail = "a single dominant transaction type (common practice, no source)"

// noteManyFlagged adds the note on a first-two test with more than
// MaxFlaggedFirstTwo flagged bins.
func (res *Result) noteManyFlagged() {
	if res.Test == FirstTwo && res.Flagged > MaxFlaggedFirstTwo {
		res.Notes = append(res.Notes, fmt.Sprintf(
			"%d first-two bins flagged (more than %d): ask whether this population should follow Benford's law at all, e.g. built-in minimums or maximums, assigned numbers, %s",
			res.Flagged, MaxFlaggedFirstTwo, manyFlaggedTail))
	}
}

// countFlags fills Flagged, OutsideGoodman and TopFlagged from the bins.
func (res *Result) countFlags() {
	var flagged []Bin
	for _, b := range res.Bins {
		if b.Flagged {
			res.Flagged++
			flagged = append(flagged, b)
		}
		if b.ZFlagged {
			res.ZFlagged++
		}
		if b.OutsideGoodman {
			res.OutsideGoodman++
		}
	}
	sort.SliceStable(flagged, func(i, j int) bool {
		a, b := flagged[i], flagged[j]
		if (a.Diff > 0) != (b.Diff > 0) {
			return a.Diff > 0
		}
		if a.Z != b.Z {
			return a.Z > b.Z
		}
		return math.Abs(a.Diff) > math.Abs(b.Diff)
	})
	for i := 0; i < len(flagged) && i < TopFlagged; i++ {
		res.TopFlagged = append(res.TopFlagged, flagged[i].Bin)
	}
}

// AnalyzeSummation runs the summation test with DefaultFlagging on a
// population whose smallest amount tested is 10 (the battery's default
// minimum): see AnalyzeSummationWith.
func AnalyzeSummation(sums []float64, counts []int64) (Result, error) {
	return AnalyzeSummationWith(sums, counts, 10, DefaultFlagging)
}

// AnalyzeSummationWith runs the summation test (Nigrini 2012) from the sums
// of absolute amounts per first-two digits bin: sums[i] and counts[i] are
// the sum of absolute amounts and the count of amounts whose first two
// digits are 10+i (len 90 each; counts may be nil, and then no bin is
// flagged, since the flag needs N). Each bin expects 1/90 of the total
// absolute amount; minAmount is the smallest |amount| the population takes
// (currency units; the start of the null model's range).
//
// Per bin it reports Actual = sum/total, Expected = 1/90 and Diff, and
// over the bins the MAD, with Conformity NoPublishedRange (no range is
// published for the summation test).
//
// The per-bin Z of counts, Goodman's intervals, the chi-square and the
// Kolmogorov-Smirnov and Cramér–von Mises tests are built on counts; the
// spread of a share of amounts depends on the spread of the amounts, which
// N does not give. So DF and KSCritical are 0 ("not computed"), PValue,
// CvMU2P and CvMW2P are 1, ExpectedMAD and
// ExcessMAD are 0, and each Goodman interval is [0, 1]. The flag is
// calibrated by simulation instead (flagSummation, summation.go): Z is the
// bin's share standardized against N amounts following Benford's law over
// the fitted range (surpluses only, 0 for a shortfall), P its one-sided
// simulated p-value, PAdjusted the max-T adjusted p-value, Upper the share
// above which the bin is beyond chance, and a bin is flagged when
// PAdjusted < f.Alpha and it holds at least twice 1/90 and twice the
// median share of its neighbours (SummationMinExcess,
// summationNeighbours; --min-excess does not change it). Only
// surpluses are flagged: the test looks for large amounts.
func AnalyzeSummationWith(sums []float64, counts []int64, minAmount float64, f Flagging) (Result, error) {
	t := Summation
	lo, hi := t.Bins()
	K := hi - lo + 1
	if len(sums) != K {
		return Result{}, fmt.Errorf("benford: summation test needs %d bin sums (bins 10 to 99), got %d", K, len(sums))
	}
	if counts != nil && len(counts) != K {
		return Result{}, fmt.Errorf("benford: summation test needs %d bin counts (bins 10 to 99) or none, got %d", K, len(counts))
	}
	if err := f.Check(); err != nil {
		return Result{}, fmt.Errorf("benford: %w", err)
	}
	var total float64
	var n int64
	for i, s := range sums {
		if s < 0 || math.IsNaN(s) || math.IsInf(s, 0) {
			return Result{}, fmt.Errorf("benford: summation test: bin %d has sum %v: sums must be finite sums of absolute amounts", lo+i, s)
		}
		total += s
		if counts != nil {
			if counts[i] < 0 {
				return Result{}, fmt.Errorf("benford: summation test: negative count %d in bin %d", counts[i], lo+i)
			}
			n += counts[i]
		}
	}
	if math.IsInf(total, 0) {
		return Result{}, fmt.Errorf("benford: summation test: total absolute amount overflows")
	}
	exp := Expected(t)
	res := Result{Test: t, N: n, Total: total, Bins: make([]Bin, K), PValue: 1, CvMU2P: 1, CvMW2P: 1, TopFlagged: []int{}, Notes: []string{}, FlagRule: f}
	actual := make([]float64, K)
	for i := range sums {
		b := Bin{Bin: lo + i, Label: t.Label(lo + i), Amount: sums[i], Expected: exp[i],
			Lower: 0, Upper: 1, GoodmanLower: 0, GoodmanUpper: 1, P: 1, PAdjusted: 1}
		if counts != nil {
			b.Count = counts[i]
		}
		if total > 0 {
			b.Actual = sums[i] / total
			b.Diff = b.Actual - b.Expected
		}
		actual[i] = b.Actual
		res.Bins[i] = b
	}
	if total == 0 {
		res.Conformity = NoAmounts
		res.Notes = append(res.Notes, "no amounts")
		return res, nil
	}
	res.MAD = MAD(actual, exp)
	res.Conformity = Conformity(t, res.MAD)
	sc := Scale{N: n, Min: minAmount, Mean: total / float64(max(n, 1))}
	if n > 0 && sc.Valid() {
		res.flagSummation(sc, f)
		d, fitted := FitDecades(sc.Min, sc.Mean)
		msg := fmt.Sprintf(
			"summation test: a bin is flagged when its share of the total is beyond chance for %s amounts following Benford's law from %s over %.0f whole decades (the nearest to the %.1f whose mean is this population's mean |amount|; %s simulated populations, max-T adjusted p < %s) and holds at least %s times both 1/90 (materiality, common practice, no source) and the median share of the %d bins on either side (so that a smooth excess over the low bins, from a top decade that tapers, is not flagged; no source); chi-square and Kolmogorov-Smirnov are not defined for shares of amounts",
			numfmt.Int(n), trimFloat(minAmount), res.SummationDecades, d, numfmt.Int(summationSimulations), trimFloat(f.Alpha), trimFloat(1+SummationMinExcess), summationNeighbours)
		if !fitted {
			msg += fmt.Sprintf("; the amounts' mean lies outside what %d to %d decades give, so the model is held at %.0f decades and the flag's rate is not known here", minDecades, maxDecades, d)
		}
		res.Notes = append(res.Notes, msg)
	} else {
		res.Notes = append(res.Notes, "summation test: no counts per bin, so no bin is flagged (the flag's null needs N)")
	}
	res.countFlags()
	if counts != nil && n < MinAmounts {
		res.Notes = append(res.Notes, fmt.Sprintf(
			"only %d amounts: digit tests want about %d or more (common practice, no source)", n, MinAmounts))
	}
	return res, nil
}

// trimFloat writes x without trailing zeros.
func trimFloat(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }

// Merge returns the element-wise sum of two count vectors, for counts of
// the same test computed over different partitions. A nil argument stands
// for zeros, so Merge(nil, c) copies c. It panics if both are non-nil and
// their lengths differ.
func Merge(a, b []int64) []int64 {
	if a != nil && b != nil && len(a) != len(b) {
		panic("benford: Merge: length mismatch")
	}
	out := make([]int64, max(len(a), len(b)))
	for i := range out {
		if a != nil {
			out[i] += a[i]
		}
		if b != nil {
			out[i] += b[i]
		}
	}
	return out
}

// MergeSums is Merge for the summation test's bin sums.
func MergeSums(a, b []float64) []float64 {
	if a != nil && b != nil && len(a) != len(b) {
		panic("benford: MergeSums: length mismatch")
	}
	out := make([]float64, max(len(a), len(b)))
	for i := range out {
		if a != nil {
			out[i] += a[i]
		}
		if b != nil {
			out[i] += b[i]
		}
	}
	return out
}
