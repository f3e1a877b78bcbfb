package limits

import (
	"context"
	"fmt"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/workspace"
)

// Options are the parameters of a probe run.
type Options struct {
	population.Spec
	Limits   []float64 `json:"limits,omitempty"` // nil: scan the round values
	Width    float64   `json:"width"`            // fraction of the limit; 0 means DefaultWidth
	By       []string  `json:"by,omitempty"`     // segment columns; the segment is their combination
	MinCount int64     `json:"min_count"`        // 0 means DefaultMinCount
}

// Report is one probe run; it is what --format json prints and what the
// workspace stores (docs/json.md, "limits").
type Report struct {
	RunID         int64           `json:"run_id"`
	Kind          string          `json:"kind"` // "limits"
	Population    population.Spec `json:"population"`
	AmountType    string          `json:"amount_type"`
	Currency      string          `json:"currency,omitempty"` // of every amount tested ("" when they name none)
	Counts        ranges.Counts   `json:"counts"`             // the whole selection
	Width         float64         `json:"width"`
	ExpectedRatio float64         `json:"expected_ratio"`
	LimitSource   string          `json:"limit_source"` // "given" or "round values"
	Limits        []float64       `json:"limits"`
	By            []string        `json:"by"`
	Segments      int             `json:"segments"` // segments with rows (0 without --by)
	MinCount      int64           `json:"min_count"`
	Tested        int             `json:"tested"` // pairs tested: the Holm family
	Flagged       int             `json:"flagged"`
	TooFew        int             `json:"too_few"`       // pairs with fewer than MinCount amounts in the band
	OutsideRange  int             `json:"outside_range"` // pairs whose band is not within the segment's amounts
	Rows          []Row           `json:"rows"`
}

// Run probes the limits in one aggregate scan over all limits and segments
// (after a cheap scan for the amounts' range). It does not store the run.
func Run(ctx context.Context, ws *workspace.Workspace, o Options) (*Report, error) {
	o, err := o.Checked()
	if err != nil {
		return nil, err
	}
	pop, err := ranges.Prepare(ctx, ws, o.Spec)
	if err != nil {
		return nil, err
	}
	currency, err := pop.OneCurrency(ctx, ws, "a limit is an amount in one currency")
	if err != nil {
		return nil, err
	}
	segs, err := segment.Resolve(ctx, ws, o.By)
	if err != nil {
		return nil, err
	}
	rep := NewReport(o, pop.Spec, pop.AmountType.SQL(), currency, segs)
	if len(o.Limits) == 0 {
		// The round limits depend on the amounts' range: one cheap scan first.
		sum, err := pop.Summary(ctx, ws)
		if err != nil {
			return nil, err
		}
		if err := rep.ScanRoundLimits(sum); err != nil {
			return nil, err
		}
	}
	edges := Edges(rep.Limits, o.Width)
	step := "limits: counting the amounts around each limit"
	if len(rep.By) > 0 {
		step += " by " + strings.Join(rep.By, ", ")
	}
	defer ws.Step(step)()
	groups, err := pop.Count(ctx, ws, segs, edges)
	if err != nil {
		return nil, err
	}
	err = rep.Finish(groups, segs, edges, pop.AmountType.Scale, func(r Row) string {
		return ranges.DrillCommand(ws.Path, r.Range, pop.Spec, r.key.DrillSegments(segs))
	})
	if err != nil {
		return nil, err
	}
	return rep, nil
}

// Checked fills the defaults of o and checks the width, the minimum count
// and the limits given.
func (o Options) Checked() (Options, error) {
	if o.Width == 0 {
		o.Width = DefaultWidth
	}
	if o.MinCount == 0 {
		o.MinCount = DefaultMinCount
	}
	if err := CheckWidth(o.Width); err != nil {
		return o, err
	}
	if o.MinCount < 1 {
		return o, fmt.Errorf("--min-count %d: give at least 1", o.MinCount)
	}
	for _, t := range o.Limits {
		if err := benford.CheckLimit(t, o.Width); err != nil {
			return o, fmt.Errorf("--limits: %w", err)
		}
	}
	return o, nil
}

// NewReport starts the report of a run with checked options o over the
// population spec (defaults filled in): the limits given, or none yet
// (ScanRoundLimits finds them).
func NewReport(o Options, spec population.Spec, amountType, currency string, segs []ranges.Segment) *Report {
	rep := &Report{
		Kind: "limits", Population: spec, AmountType: amountType, Currency: currency,
		Width: o.Width, ExpectedRatio: benford.ExpectedBelowAboveRatio(o.Width),
		Limits: ranges.SortedEdges(o.Limits), LimitSource: "given", By: []string{}, MinCount: o.MinCount,
	}
	for _, s := range segs {
		rep.By = append(rep.By, s.Name)
	}
	return rep
}

// ScanRoundLimits sets the limits to the round values whose band lies
// within the whole selection's tested amounts (sum).
func (rep *Report) ScanRoundLimits(sum ranges.Counts) error {
	if sum.Tested == 0 {
		return noAmounts(sum, rep.Population.Min)
	}
	rep.LimitSource = "round values"
	rep.Limits = ScanLimits(sum.Min, sum.Max, rep.Width)
	if len(rep.Limits) == 0 {
		return fmt.Errorf("the tested amounts (%s to %s) are too narrow for any round limit with its band of ±%s%%: give --limits or a smaller --width", numfmt.MoneyFloat(sum.Min), numfmt.MoneyFloat(sum.Max), strconv.FormatFloat(100*rep.Width, 'f', -1, 64))
	}
	return nil
}

// Finish probes the limits on the counted groups (one group, key nil,
// without segments; else one per segment, sorted by key, each counted
// between edges) and fills the report's rows and tallies. drill writes
// the command or query that lists the records below a row's limit (its
// Range set); scale is the amounts' decimal places.
func (rep *Report) Finish(groups []ranges.Group, segs []ranges.Segment, edges []float64, scale int, drill func(Row) string) error {
	var all ranges.Group
	var err error
	if len(segs) == 0 {
		all = groups[0]
		groups = nil
	} else {
		if all, err = ranges.Merge(groups, edges); err != nil {
			return err
		}
		rep.Segments = len(groups)
		if len(groups) > MaxSegments {
			return fmt.Errorf("--by %s makes %d segments, more than %d: choose a coarser column or narrow the selection with --where",
				strings.Join(rep.By, " --by "), len(groups), MaxSegments)
		}
	}
	rep.Counts = all.Counts
	if all.Tested == 0 {
		return noAmounts(all.Counts, rep.Population.Min)
	}
	rows, err := Probe(all, groups, segs, rep.Limits, rep.Width, rep.MinCount)
	if err != nil {
		return err
	}
	rep.Rows = rows[:0]
	for _, r := range rows {
		switch r.Status {
		case StatusTested:
			rep.Tested++
			if r.Flagged {
				rep.Flagged++
			}
		case StatusTooFew:
			rep.TooFew++
		case StatusOutRange:
			rep.OutsideRange++
		}
		// Pairs not tested are listed for the whole selection only; per
		// segment they are counted (there may be many thousands).
		if r.Status != StatusTested && r.key != nil {
			continue
		}
		r.Range = ranges.DrillRange(r.From, r.Limit, scale)
		r.Drill = drill(r)
		rep.Rows = append(rep.Rows, r)
	}
	return nil
}

// MaxSegments bounds the segments of one probe run.
const MaxSegments = 100000

func noAmounts(c ranges.Counts, min string) error {
	return population.NoAmounts(c.Rows, c.Left(), min)
}
