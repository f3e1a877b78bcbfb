package battery

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/parallel"
	"github.com/leadline/leadline/engine/workspace"
)

// Report is the result of a battery run: the document `leadline scan
// --format json` prints and the workspace stores with the run (see
// docs/json.md, section scan).
type Report struct {
	Kind       string  `json:"kind"` // "scan"
	RunID      int64   `json:"run_id"`
	Params     Options `json:"params"`
	AmountType string  `json:"amount_type"`
	Rows       int64   `json:"rows"`            // rows in the ledger
	Input      *Input  `json:"input,omitempty"` // what the loads read and rejected, beside N
	// CurrencyNote says that the amounts tested are in several currencies,
	// pooled: the digit tests are scale invariant, so pooling is sound,
	// and --by currency splits them.
	CurrencyNote string           `json:"currency_note,omitempty"`
	Tested       int64            `json:"tested"`     // amounts tested (N of the count-based tests)
	Exclusions   Left             `json:"exclusions"` // rows = tested + the sum of these
	Tests        []benford.Result `json:"tests"`      // the whole selection, in canonical test order
	// LastTwoMin is the smallest |amount| the last-two digits test takes
	// ("" when it takes all: --last-two-all).
	LastTwoMin  string       `json:"last_two_min"`
	Duplication *Duplication `json:"duplication,omitempty"`
	Segments    *Segments    `json:"segments,omitempty"`
	Seconds     Timing       `json:"seconds"`

	// Counts is the bin-count table of the whole selection, and
	// SegmentResults each segment's table and test results (for the CSV
	// long format); neither is part of the JSON document.
	Counts         *Counts         `json:"-"`
	SegmentResults []SegmentResult `json:"-"`
}

// Input is what the workspace's loads read and rejected, so that N is
// read beside the share of the client's rows that never reached the
// ledger.
type Input struct {
	Files         int64   `json:"files"`
	RowsRead      int64   `json:"rows_read"`
	RowsLoaded    int64   `json:"rows_loaded"`
	RowsRejected  int64   `json:"rows_rejected"`
	RejectedShare float64 `json:"rejected_share"` // rows_rejected / rows_read
}

// Timing records where the time went, in seconds.
type Timing struct {
	Scan        float64 `json:"scan"`         // the one aggregate scan
	SecondOrder float64 `json:"second_order"` // the second-order test's query (0 when not run)
	Duplication float64 `json:"duplication"`  // the number duplication query (0 when not run)
	Statistics  float64 `json:"statistics"`   // every test of every segment, in Go
	Total       float64 `json:"total"`
}

// Segments is the segment part of a report.
type Segments struct {
	By       []string      `json:"by"`
	MinRows  int64         `json:"min_rows"` // fewest tested amounts ranked
	Count    int           `json:"count"`    // segments found
	Ranked   int           `json:"ranked"`   // segments with at least MinRows amounts
	Rankings []Ranking     `json:"rankings"` // one per test run
	TooSmall []SegmentInfo `json:"too_small"`
	All      []SegmentInfo `json:"populations"` // every segment: tested amounts and what was left out
}

// SegmentInfo says how many amounts of a segment were tested and how many
// of the rows read were left out (zero, below the minimum). Rows of the
// other sign and rows the filter drops are not read by the scan and are
// counted for the whole selection only.
type SegmentInfo struct {
	Segment  string             `json:"segment"` // values joined with " / ", blanks as (blank)
	Values   map[string]*string `json:"values"`  // column -> value, null for blank
	Tested   int64              `json:"tested"`
	Zero     int64              `json:"zero"`
	BelowMin int64              `json:"below_min"`
}

// Ranking ranks the segments on one test, most distorted first: by excess
// MAD (MAD less the MAD expected from sampling alone for the segment's N),
// so that segments of different sizes compare fairly. The summation test
// has no expected MAD and ranks by MAD.
type Ranking struct {
	Test   benford.Test `json:"test"`
	SortBy string       `json:"sort_by"` // "excess_mad" or "mad"
	// AdjustedOver is the number of segments the flags were adjusted
	// over (Holm over the ranked segments: benford.AcrossSegments).
	AdjustedOver int          `json:"adjusted_over"`
	Rows         []SegmentRow `json:"rows"`
}

// SegmentRow is one segment's line in a ranking.
type SegmentRow struct {
	Rank           int                `json:"rank"`
	Segment        string             `json:"segment"`
	Values         map[string]*string `json:"values"`
	Test           benford.Test       `json:"test"`
	N              int64              `json:"n"`
	MAD            float64            `json:"mad"`
	Conformity     string             `json:"conformity"`
	ExpectedMAD    float64            `json:"expected_mad"`
	ExcessMAD      float64            `json:"excess_mad"`
	Chi2           float64            `json:"chi2"`
	DF             int                `json:"df"`
	PValue         float64            `json:"p_value"`
	CvMU2          float64            `json:"cvm_u2"`   // discrete Cramér–von Mises U²
	CvMU2P         float64            `json:"cvm_u2_p"` // its asymptotic p-value
	Flagged        int                `json:"flagged"`
	PSegments      float64            `json:"p_segments"`                 // the segment's bin-flag p-value adjusted over the ranked segments (benford.AcrossSegments)
	LocalFlagged   *int               `json:"local_flagged,omitempty"`    // first-two: stretches the local surplus flag marks
	LocalPSegments *float64           `json:"local_p_segments,omitempty"` // first-two: the local surplus flag's p-value adjusted over the ranked segments
	OutsideGoodman int                `json:"outside_goodman"`
	TopFlagged     []int              `json:"top_flagged"`
	Runs           *int               `json:"runs,omitempty"`   // runs test (first-two, first-three, second-order)
	RunsP          *float64           `json:"runs_p,omitempty"` // its one-sided p
}

// SegmentResult is one segment's bin-count table and test results.
type SegmentResult struct {
	Key     Key
	Counts  *Counts
	Results []benford.Result // nil when the segment is too small
}

// Run runs the battery: Prepare, the one aggregate scan, the second-order
// and number duplication queries when asked for, and the statistics of the
// whole selection and of every segment large enough to rank.
func Run(ctx context.Context, ws *workspace.Workspace, o Options) (*Report, error) {
	start := time.Now()
	p, err := Prepare(ctx, ws, o)
	if err != nil {
		return nil, err
	}
	o = p.Options
	rep := &Report{Kind: "scan", Params: o, AmountType: p.AmountType.SQL(), Tests: []benford.Result{}}

	defer ws.Step("scan")()
	ws.Step(scanStep(p))
	t := time.Now()
	all, segs, err := p.Scan(ctx, ws)
	if err != nil {
		return nil, err
	}
	rep.Seconds.Scan = time.Since(t).Seconds()
	if o.Has(benford.SecondOrder) {
		ws.Step("scan: the second-order test")
		t = time.Now()
		if err := p.SecondOrder(ctx, ws, all, segs); err != nil {
			return nil, err
		}
		rep.Seconds.SecondOrder = time.Since(t).Seconds()
	}
	// What the loads read and rejected, stated beside N in every output
	// that shows this run (terminal, JSON, report, pack results). A run
	// on counts made elsewhere (FromCounts) has no such input.
	in, err := load.Inputs(ctx, ws)
	if err != nil {
		return nil, err
	}
	rep.Input = &Input{Files: in.Files, RowsRead: in.RowsRead, RowsLoaded: in.RowsLoaded, RowsRejected: in.RowsRejected, RejectedShare: in.RejectedShare()}
	if rep.CurrencyNote, err = currencyNote(ctx, ws, p); err != nil {
		return nil, err
	}
	if o.Duplication {
		ws.Step("scan: number duplication")
		t = time.Now()
		if rep.Duplication, err = p.Duplicates(ctx, ws, all.N(), o.Top); err != nil {
			return nil, err
		}
		rep.Seconds.Duplication = time.Since(t).Seconds()
	}

	t = time.Now()
	if err := rep.statistics(p, all, segs); err != nil {
		return nil, err
	}
	rep.Seconds.Statistics = time.Since(t).Seconds()
	rep.Seconds.Total = time.Since(start).Seconds()
	return rep, nil
}

// scanStep names the one aggregate scan for the progress display: the
// tests it counts for and the segments.
func scanStep(p *Plan) string {
	var names []string
	for _, t := range p.Options.Tests {
		if t != benford.SecondOrder {
			names = append(names, t.Name())
		}
	}
	// One scan counts for every test; past two, their number keeps the
	// line short.
	s := "scan: counting digits for " + strings.Join(names, ", ")
	if len(names) > 2 {
		s = fmt.Sprintf("scan: counting digits for %d tests", len(names))
	}
	if len(p.Segments) > 0 {
		var by []string
		for _, g := range p.Segments {
			by = append(by, g.Name)
		}
		s += " by " + strings.Join(by, ", ")
	}
	return s
}

// statistics fills the report from the bin-count tables: N and what was
// left out, the whole selection's tests with the battery's notes, and the
// segments' rankings. Run and FromCounts both use it, so that a scan on
// counts made elsewhere reports what a local scan of the same rows does.
func (rep *Report) statistics(p *Plan, all *Counts, segs []SegmentCounts) error {
	o := p.Options
	rep.Counts = all
	rep.Tested = all.N()
	rep.Exclusions = all.Left
	rep.Rows = rep.Tested + all.Left.Total()
	rep.LastTwoMin = LastTwoMin(o, p.AmountType)
	var err error
	if rep.Tests, err = analyzeNoted(all, o, noteCtx{lastTwoMin: rep.LastTwoMin, scale: p.AmountType.Scale}); err != nil {
		return err
	}
	if len(p.Segments) > 0 {
		if rep.Segments, rep.SegmentResults, err = rankSegments(p, segs, noteCtx{lastTwoMin: rep.LastTwoMin, scale: p.AmountType.Scale}); err != nil {
			return err
		}
	}
	return nil
}

// AnalyzeAll runs the tests on one bin-count table, in canonical order,
// with the default bin flag.
func AnalyzeAll(c *Counts, tests []benford.Test) ([]benford.Result, error) {
	return AnalyzeAllWith(c, tests, benford.DefaultFlagging)
}

// AnalyzeAllWith is AnalyzeAll with the bin flag's settings f. The
// summation test's null starts at 10, the default minimum amount.
func AnalyzeAllWith(c *Counts, tests []benford.Test, f benford.Flagging) ([]benford.Result, error) {
	return analyzeAll(c, tests, f, 10)
}

// noteCtx is what the battery's own notes and rules need beyond the
// counts: the last-two test's minimum and the ledger's scale.
type noteCtx struct {
	lastTwoMin string
	scale      int
}

// minAmount returns the smallest |amount| the population takes, in
// currency units: the minimum given (--min), or one unit of the ledger's
// scale when it is 0.
func minAmount(o Options, scale int) float64 {
	m, err := strconv.ParseFloat(strings.ReplaceAll(o.Min, "_", ""), 64)
	unit := math.Pow10(-scale)
	if err != nil || !(m > unit) {
		return unit
	}
	return m
}

func analyzeAll(c *Counts, tests []benford.Test, f benford.Flagging, minAmt float64) ([]benford.Result, error) {
	return analyzeEach(c, tests, f, minAmt, nil)
}

// analyzeEach is analyzeAll with the second-order test analysed by
// secondOrder when it is not nil.
func analyzeEach(c *Counts, tests []benford.Test, f benford.Flagging, minAmt float64, secondOrder func() (benford.Result, error)) ([]benford.Result, error) {
	out := []benford.Result{}
	for _, t := range benford.AllTests() {
		if !contains(tests, t) {
			continue
		}
		var r benford.Result
		var err error
		if b := c.Bins(t); t == benford.SecondOrder && secondOrder != nil {
			r, err = secondOrder()
		} else if t == benford.Summation {
			r, err = benford.AnalyzeSummationWith(c.SummationSums(), b, minAmt, f)
		} else if b != nil {
			r, err = benford.AnalyzeWith(t, b, f)
		} else {
			r, err = c.Analyze(t)
		}
		if err != nil {
			return nil, err
		}
		out = append(out, r)
	}
	return out, nil
}

// analyzeNoted runs the battery's tests on one table with the options'
// flag and adds the battery's own notes and rules: which amounts the
// last-two digits test took, and the second-order bins that the
// discreteness of the amounts explains.
func analyzeNoted(c *Counts, o Options, nc noteCtx) ([]benford.Result, error) {
	res, err := analyzeEach(c, o.Tests, o.Flagging(), minAmount(o, nc.scale), func() (benford.Result, error) { return secondOrderInUnits(c, o, nc) })
	if err != nil {
		return nil, err
	}
	for i := range res {
		if res[i].Test == benford.LastTwo {
			noteLastTwo(&res[i], nc.lastTwoMin, c.N())
		}
	}
	return res, nil
}

func contains(ts []benford.Test, t benford.Test) bool {
	for _, x := range ts {
		if x == t {
			return true
		}
	}
	return false
}

func rankSegments(p *Plan, segs []SegmentCounts, nc noteCtx) (*Segments, []SegmentResult, error) {
	o := p.Options
	out := &Segments{By: make([]string, len(p.Segments)), MinRows: o.MinSegmentRows, Count: len(segs),
		Rankings: []Ranking{}, TooSmall: []SegmentInfo{}, All: []SegmentInfo{}}
	for i, s := range p.Segments {
		out.By[i] = s.Name
	}
	results := make([]SegmentResult, len(segs))
	analysed, err := analyzeSegments(segs, o, nc)
	if err != nil {
		return nil, nil, err
	}
	adjustAcrossSegments(analysed)
	rows := map[benford.Test][]SegmentRow{}
	for i, sc := range segs {
		info := SegmentInfo{Segment: sc.Key.Label(), Values: sc.Key.Values(p.Segments), Tested: sc.Counts.N(),
			Zero: sc.Counts.Left.Zero, BelowMin: sc.Counts.Left.BelowMin}
		out.All = append(out.All, info)
		results[i] = SegmentResult{Key: sc.Key, Counts: sc.Counts}
		if info.Tested < o.MinSegmentRows {
			out.TooSmall = append(out.TooSmall, info)
			continue
		}
		out.Ranked++
		res := analysed[i]
		results[i].Results = res
		for _, r := range res {
			row := SegmentRow{Segment: info.Segment, Values: info.Values, Test: r.Test, N: r.N, MAD: r.MAD,
				Conformity: r.Conformity, ExpectedMAD: r.ExpectedMAD, ExcessMAD: r.ExcessMAD, Chi2: r.Chi2, DF: r.DF,
				PValue: r.PValue, CvMU2: r.CvMU2, CvMU2P: r.CvMU2P, Flagged: r.Flagged, OutsideGoodman: r.OutsideGoodman, TopFlagged: r.TopFlagged}
			if r.Runs != nil {
				n, pv := r.Runs.Runs, r.Runs.P
				row.Runs, row.RunsP = &n, &pv
			}
			if f := r.SegmentFamily; f != nil {
				row.PSegments = f.P
			}
			if l := r.LocalSurplus; l != nil && l.Tested {
				k := len(l.Flagged)
				row.LocalFlagged = &k
				if f := r.SegmentFamily; f != nil {
					p := f.LocalP
					row.LocalPSegments = &p
				}
			}
			rows[r.Test] = append(rows[r.Test], row)
		}
	}
	for _, t := range benford.AllTests() {
		if !o.Has(t) {
			continue
		}
		rk := Ranking{Test: t, SortBy: "excess_mad", Rows: rows[t], AdjustedOver: len(rows[t])}
		if rk.Rows == nil {
			rk.Rows = []SegmentRow{}
		}
		key := func(r SegmentRow) float64 { return r.ExcessMAD }
		if t == benford.Summation {
			rk.SortBy = "mad"
			key = func(r SegmentRow) float64 { return r.MAD }
		}
		sort.SliceStable(rk.Rows, func(i, j int) bool { return key(rk.Rows[i]) > key(rk.Rows[j]) })
		for i := range rk.Rows {
			rk.Rows[i].Rank = i + 1
		}
		out.Rankings = append(out.Rankings, rk)
	}
	return out, results, nil
}

// adjustAcrossSegments adjusts every test's flags over the segments
// ranked (benford.AcrossSegments), so that a ranking of segments that all
// follow Benford's law shows a flag in at most 5% of scans, however many
// segments it has. analysed[i] is nil for a segment too small to rank.
func adjustAcrossSegments(analysed [][]benford.Result) {
	byTest := map[benford.Test][]*benford.Result{}
	for _, res := range analysed {
		for k := range res {
			byTest[res[k].Test] = append(byTest[res[k].Test], &res[k])
		}
	}
	for _, rs := range byTest {
		benford.AcrossSegments(rs)
	}
}

// analyzeSegments runs the tests on every segment large enough to rank,
// spread over the machine's cores: each segment is independent, and at
// 1,000 segments the statistics took as long as the scan. Results keep
// the segments' order, so the output does not depend on the scheduling.
func analyzeSegments(segs []SegmentCounts, o Options, nc noteCtx) ([][]benford.Result, error) {
	out := make([][]benford.Result, len(segs))
	errs := make([]error, len(segs))
	parallel.For(len(segs), func(i int) {
		if segs[i].Counts.N() >= o.MinSegmentRows {
			out[i], errs[i] = analyzeNoted(segs[i].Counts, o, nc)
		}
	})
	return out, errors.Join(errs...)
}
