package compare

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
)

// Defaults.
const (
	// DefaultSimulations is the number of Monte Carlo tables drawn for the
	// homogeneity p-value when cells expect few amounts: a p-value near
	// 0.05 is then known to about ±0.005 (binomial standard error).
	DefaultSimulations = 2000
	// DefaultSeed seeds the Monte Carlo draws, so a comparison repeats
	// exactly.
	DefaultSeed = 1
	// DefaultTop is the number of bins listed as changed most per test.
	DefaultTop = 10
	// SmallExpected is the expected count below which a cell is small for
	// the chi-square approximation (Cochran's rule: no cell below 1 and at
	// most a fifth below 5; W. G. Cochran, Some methods for strengthening
	// the common χ² tests, Biometrics 10, 417-451, 1954, from memory).
	SmallExpected = 5
)

// Tests are the count-based digit tests compare takes, in canonical order.
// The summation test compares shares of amounts and the second-order test
// differences of sorted amounts, neither a count of the amounts tested.
var Tests = []benford.Test{benford.FirstDigit, benford.SecondDigit, benford.FirstTwo, benford.FirstThree, benford.LastTwo}

// Options say how two tables are compared.
type Options struct {
	Alpha       float64 `json:"alpha"`       // family-wise error of the bin flag (benford.FlagAlpha)
	MinExcess   float64 `json:"min_excess"`  // materiality margin of the bin flag (benford.MaterialDiff)
	Simulations int     `json:"simulations"` // Monte Carlo tables for the homogeneity p-value
	Seed        uint64  `json:"seed"`
	Top         int     `json:"top"` // bins listed as changed most per test
	// Only lists the tests compared, in any order (empty: every test of
	// Tests). Each test's flags are adjusted over its own bins, so leaving
	// tests out changes no other test's result.
	Only []benford.Test `json:"only,omitempty"`
	// SkipSides leaves out each side's conformity (the rate simulations
	// need only the comparison).
	SkipSides bool `json:"-"`
}

// DefaultOptions are the settings of leadline compare without flags.
func DefaultOptions() Options {
	return Options{Alpha: benford.FlagAlpha, MinExcess: benford.DefaultMinExcess, Simulations: DefaultSimulations, Seed: DefaultSeed, Top: DefaultTop}
}

// Check reports an out-of-range setting.
func (o Options) Check() error {
	if err := (benford.Flagging{Alpha: o.Alpha, MinExcess: o.MinExcess}).Check(); err != nil {
		return err
	}
	if o.Simulations < 99 {
		return fmt.Errorf("--simulations %d: give 99 or more", o.Simulations)
	}
	if o.Top < 0 {
		return fmt.Errorf("--top %d: give 0 or more", o.Top)
	}
	for _, t := range o.Only {
		if !slices.Contains(Tests, t) {
			return fmt.Errorf("--tests %s: compare takes the count-based digit tests: %s", t, testNames())
		}
	}
	return nil
}

// testNames lists Tests for messages.
func testNames() string {
	names := make([]string, len(Tests))
	for i, t := range Tests {
		names[i] = string(t)
	}
	return strings.Join(names, ", ")
}

// Side is one of the two tables: a label and the bin counts of each test
// (counts[i] is bin lo+i of the test's range).
type Side struct {
	Label  string                   `json:"label"`
	Counts map[benford.Test][]int64 `json:"-"`
}

// Homogeneity is Pearson's chi-square test that the two sides share one
// distribution over the test's bins.
type Homogeneity struct {
	Chi2 float64 `json:"chi2"`
	DF   int     `json:"df"` // bins with a count on either side, less one (0: not computed)
	// PAsymptotic is the upper tail of the chi-square distribution with DF
	// degrees of freedom (gonum's distuv.ChiSquared).
	PAsymptotic float64 `json:"p_asymptotic"`
	// SmallCells counts the cells of the 2×K table expecting fewer than
	// SmallExpected amounts; MinExpected is the smallest expectation.
	SmallCells  int     `json:"small_cells"`
	Cells       int     `json:"cells"`
	MinExpected float64 `json:"min_expected"`
	// PSimulated is the Monte Carlo p-value, computed when Cochran's rule
	// fails: the share of Simulations tables drawn with the margins of the observed table (a random assignment of the amounts to
	// the sides), whose chi-square reaches the observed one
	// ((count+1)/(simulations+1)).
	PSimulated  *float64 `json:"p_simulated,omitempty"`
	Simulations int      `json:"simulations,omitempty"`
	// P is the p-value to read (PSimulated when computed, else
	// PAsymptotic) and Method names it: "asymptotic" or "simulated".
	P      float64 `json:"p"`
	Method string  `json:"method"`
}

// BinChange is one bin's share on each side and how it changed.
type BinChange struct {
	Bin        int     `json:"bin"`
	Label      string  `json:"label"`
	Left       int64   `json:"left"`        // count on the left side
	Right      int64   `json:"right"`       // count on the right side
	LeftShare  float64 `json:"left_share"`  // left / left N
	RightShare float64 `json:"right_share"` // right / right N
	Diff       float64 `json:"diff"`        // right share - left share
	// Z is the two-proportion Z with the pooled share (the textbook
	// reference; about 5% of the bins beyond 1.96 by chance).
	Z float64 `json:"z"`
	// P is the exact two-sided binomial p-value of the left count given
	// the bin's total (each of the bin's amounts falls left with
	// probability left N / both Ns); PAdjusted is P adjusted by Holm's
	// step-down over the test's bins.
	P         float64 `json:"p"`
	PAdjusted float64 `json:"p_adjusted"`
	// MinDiff is the materiality margin: benford.MaterialDiff of the
	// bin's pooled share with MinExcess.
	MinDiff  float64 `json:"min_diff"`
	Material bool    `json:"material"`
	Flagged  bool    `json:"flagged"` // PAdjusted < Alpha and Material
}

// SideConformity is one side's conformity on the test (package benford).
type SideConformity struct {
	N           int64   `json:"n"`
	MAD         float64 `json:"mad"`
	Conformity  string  `json:"conformity"`
	ExpectedMAD float64 `json:"expected_mad"`
	ExcessMAD   float64 `json:"excess_mad"`
	Severity    string  `json:"severity"`
	MADP        float64 `json:"mad_p"`   // share of conforming draws at N with a MAD at least this one
	Flagged     int     `json:"flagged"` // bins flagged against the test's expectation (the battery's bin flag)
	PValue      float64 `json:"p_value"` // chi-square against the expectation
}

// TestResult is the comparison of one test.
type TestResult struct {
	Test        benford.Test `json:"test"`
	LeftN       int64        `json:"left_n"`
	RightN      int64        `json:"right_n"`
	Homogeneity Homogeneity  `json:"homogeneity"`
	// Bins holds every bin; Changed the Top bins that changed most
	// (flagged first, then by |Z|), as bin numbers.
	Bins    []BinChange `json:"bins"`
	Changed []int       `json:"changed"`
	Flagged int         `json:"flagged"` // bins flagged as changed
	// Left and Right are each side's conformity (nil with SkipSides or
	// N == 0); ConformityChanged is set when the published class or the
	// severity verdict differs.
	Left              *SideConformity `json:"left,omitempty"`
	Right             *SideConformity `json:"right,omitempty"`
	ConformityChanged bool            `json:"conformity_changed"`
	Notes             []string        `json:"notes"`
}

// Result is the comparison of two sides.
type Result struct {
	Left    Side         `json:"left"`
	Right   Side         `json:"right"`
	Options Options      `json:"options"`
	Tests   []TestResult `json:"tests"`
}

// Compare compares the two sides on every test of Tests both hold.
func Compare(left, right Side, o Options) (*Result, error) {
	if err := o.Check(); err != nil {
		return nil, err
	}
	res := &Result{Left: left, Right: right, Options: o, Tests: []TestResult{}}
	for _, t := range Tests {
		if len(o.Only) > 0 && !slices.Contains(o.Only, t) {
			continue
		}
		a, b := left.Counts[t], right.Counts[t]
		if a == nil || b == nil {
			continue
		}
		tr, err := CompareTest(t, a, b, o)
		if err != nil {
			return nil, err
		}
		res.Tests = append(res.Tests, tr)
	}
	return res, nil
}

// CompareTest compares the bin counts a (left) and b (right) of test t.
func CompareTest(t benford.Test, a, b []int64, o Options) (TestResult, error) {
	k := t.K()
	if len(a) != k || len(b) != k {
		return TestResult{}, fmt.Errorf("%s: %d and %d bin counts, want %d", t, len(a), len(b), k)
	}
	for i := range a {
		if a[i] < 0 || b[i] < 0 {
			return TestResult{}, fmt.Errorf("%s: negative count in bin %s", t, t.Label(i+lo(t)))
		}
	}
	tr := TestResult{Test: t, LeftN: sum(a), RightN: sum(b), Bins: []BinChange{}, Changed: []int{}, Notes: []string{}}
	tr.Homogeneity = homogeneity(a, b, o.Simulations, rngFor(o.Seed, t))
	tr.Bins = binChanges(t, a, b, o)
	for _, bc := range tr.Bins {
		if bc.Flagged {
			tr.Flagged++
		}
	}
	tr.Changed = changedMost(tr.Bins, o.Top)
	if !o.SkipSides {
		f := benford.Flagging{Alpha: o.Alpha, MinExcess: o.MinExcess}
		var err error
		if tr.Left, err = conformity(t, a, f); err != nil {
			return tr, err
		}
		if tr.Right, err = conformity(t, b, f); err != nil {
			return tr, err
		}
		if tr.Left != nil && tr.Right != nil {
			tr.ConformityChanged = tr.Left.Conformity != tr.Right.Conformity || tr.Left.Severity != tr.Right.Severity
		}
	}
	tr.Notes = notes(tr)
	return tr, nil
}

func lo(t benford.Test) int { l, _ := t.Bins(); return l }

func sum(c []int64) int64 {
	var n int64
	for _, v := range c {
		n += v
	}
	return n
}

// rngFor seeds one stream per test, so a test's Monte Carlo p-value does
// not depend on which other tests ran.
func rngFor(seed uint64, t benford.Test) *rand.Rand {
	h := fnv.New64a()
	h.Write([]byte(t))
	return rand.New(rand.NewPCG(seed, h.Sum64()))
}

// binChanges computes every bin's change and flag. Given a bin's total t,
// its left count is Binomial(t, n1/(n1+n2)) when the counts are Poisson,
// and hypergeometric (fixed sides' N) under the multinomial; the binomial
// is the more dispersed of the two, so its p-values err on the safe side
// (the false-alarm rates measured in rates_test.go stay under 5%).
func binChanges(t benford.Test, a, b []int64, o Options) []BinChange {
	n1, n2 := sum(a), sum(b)
	out := make([]BinChange, len(a))
	ps := make([]float64, len(a))
	l := lo(t)
	for i := range a {
		bc := BinChange{Bin: l + i, Label: t.Label(l + i), Left: a[i], Right: b[i], P: 1}
		if n1 > 0 {
			bc.LeftShare = float64(a[i]) / float64(n1)
		}
		if n2 > 0 {
			bc.RightShare = float64(b[i]) / float64(n2)
		}
		bc.Diff = bc.RightShare - bc.LeftShare
		tot := a[i] + b[i]
		if n1 > 0 && n2 > 0 {
			pooled := float64(tot) / float64(n1+n2)
			if se := math.Sqrt(pooled * (1 - pooled) * (1/float64(n1) + 1/float64(n2))); se > 0 {
				bc.Z = bc.Diff / se
			}
			if tot > 0 {
				bc.P = benford.BinomialTwoSided(a[i], tot, float64(n1)/float64(n1+n2))
			}
			bc.MinDiff = benford.MaterialDiff(pooled, o.MinExcess)
			// The same slack as the battery's flag: a change of exactly
			// the margin, through float divisions, is material.
			bc.Material = math.Abs(bc.Diff) >= bc.MinDiff*(1-1e-12) && tot > 0
		}
		ps[i] = bc.P
		out[i] = bc
	}
	adj := benford.Holm(ps)
	for i := range out {
		out[i].PAdjusted = adj[i]
		out[i].Flagged = adj[i] < o.Alpha && out[i].Material
	}
	return out
}

// changedMost returns up to top bins: flagged ones first, then by |Z|
// descending, ties by bin.
func changedMost(bins []BinChange, top int) []int {
	idx := make([]int, len(bins))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(x, y int) bool {
		a, b := bins[idx[x]], bins[idx[y]]
		if a.Flagged != b.Flagged {
			return a.Flagged
		}
		return math.Abs(a.Z) > math.Abs(b.Z)
	})
	out := []int{}
	for _, i := range idx {
		if len(out) == top {
			break
		}
		if bins[i].Left+bins[i].Right == 0 {
			continue
		}
		out = append(out, bins[i].Bin)
	}
	return out
}

// conformity is one side's conformity from package benford (nil when the
// side has no amounts).
func conformity(t benford.Test, c []int64, f benford.Flagging) (*SideConformity, error) {
	n := sum(c)
	if n == 0 {
		return nil, nil
	}
	r, err := benford.AnalyzeWith(t, c, f)
	if err != nil {
		return nil, err
	}
	s := &SideConformity{N: r.N, MAD: r.MAD, Conformity: r.Conformity, ExpectedMAD: r.ExpectedMAD, ExcessMAD: r.ExcessMAD,
		Severity: r.Severity, Flagged: r.Flagged, PValue: r.PValue}
	if r.MADNull != nil {
		s.MADP = r.MADNull.P
	}
	return s, nil
}

// Bin returns the change of bin b.
func (tr TestResult) Bin(b int) BinChange {
	return tr.Bins[b-lo(tr.Test)]
}

func notes(tr TestResult) []string {
	out := []string{}
	h := tr.Homogeneity
	if tr.LeftN == 0 || tr.RightN == 0 {
		out = append(out, "one side has no amounts in this test: nothing to compare")
		return out
	}
	if h.Method == "simulated" {
		out = append(out, fmt.Sprintf("%d of %d cells expect fewer than %d amounts (smallest %.2g): the chi-square approximation does not hold, so the p-value is simulated (%s tables of the same margins, amounts assigned to the sides at random)",
			h.SmallCells, h.Cells, SmallExpected, h.MinExpected, numfmt.Int(int64(h.Simulations))))
	}
	small, big := tr.LeftN, tr.RightN
	if small > big {
		small, big = big, small
	}
	if big >= 10*small {
		out = append(out, fmt.Sprintf("the sides differ tenfold or more in size (%s and %s amounts): a change of a bin's share is judged mostly by the smaller side", numfmt.Int(tr.LeftN), numfmt.Int(tr.RightN)))
	}
	return out
}
