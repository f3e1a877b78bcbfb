package ranges

import (
	"context"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/workspace"
)

// Options are the parameters of a range table.
type Options struct {
	population.Spec
	Layout
	By         []string `json:"by,omitempty"`          // segment columns; a segment is their combination
	MinSegment int64    `json:"min_segment,omitempty"` // with By: fewest tested amounts for a segment to be scored (0: DefaultMinSegment)
}

// Report is the range table of one run; it is what --format json prints
// and what the workspace stores (docs/json.md, "ranges").
type Report struct {
	RunID      int64           `json:"run_id"`
	Kind       string          `json:"kind"` // "ranges"
	Population population.Spec `json:"population"`
	AmountType string          `json:"amount_type"`
	Currency   string          `json:"currency,omitempty"` // of every amount tested ("" when they name none)
	Layout     Layout          `json:"layout"`             // as run: From and To filled in
	BandScale  string          `json:"scale"`              // fixed or logarithmic
	Counts     Counts          `json:"counts"`
	BelowBands int64           `json:"below_bands"` // tested amounts below the first band
	AboveBands int64           `json:"above_bands"` // tested amounts at or above the end of the last band
	Scored     int             `json:"scored"`      // bands scored (the Holm family)
	Flagged    int             `json:"flagged"`
	Dispersion float64         `json:"dispersion"` // quasi-Poisson dispersion of the scored bands
	Fit        benford.BandFit `json:"fit"`        // the local fit chosen by cross-validation
	Bands      []Row           `json:"bands"`
	Stretches  []Stretch       `json:"stretches"`          // adjacent flagged bands joined, largest excess first
	Segments   *SegmentTable   `json:"segments,omitempty"` // with --by: the table run in every segment
}

// Run counts the tested amounts in the bands of the layout in one scan
// (after a cheap scan for the amounts' range) and scores the bands.
// It does not store the run.
func Run(ctx context.Context, ws *workspace.Workspace, o Options) (*Report, error) {
	if err := o.Layout.Check(); err != nil {
		return nil, err
	}
	o, err := o.CheckSegments()
	if err != nil {
		return nil, err
	}
	pop, err := Prepare(ctx, ws, o.Spec)
	if err != nil {
		return nil, err
	}
	currency, err := pop.OneCurrency(ctx, ws, "a range band is an amount range in one currency")
	if err != nil {
		return nil, err
	}
	segs, err := segment.Resolve(ctx, ws, o.By)
	if err != nil {
		return nil, err
	}
	sum, err := pop.Summary(ctx, ws)
	if err != nil {
		return nil, err
	}
	if sum.Tested == 0 {
		return nil, population.NoAmounts(sum.Rows, sum.Left(), pop.Spec.Min)
	}
	bands, err := o.Layout.Bands(sum.Min, sum.Max)
	if err != nil {
		return nil, err
	}
	edges := Edges(bands)
	step := "ranges: counting the amounts per band"
	if len(segs) > 0 {
		step += " by " + strings.Join(o.By, ", ")
	}
	defer ws.Step(step)()
	groups, err := pop.Count(ctx, ws, segs, edges)
	if err != nil {
		return nil, err
	}
	all := groups[0]
	if len(segs) > 0 {
		if all, err = Merge(groups, edges); err != nil {
			return nil, err
		}
	}
	rep, err := Finish(o, pop.Spec, pop.AmountType.SQL(), currency, pop.MinAmount, pop.AmountType.Scale, bands, all,
		func(_, _ float64, rangeSpec string) string { return DrillCommand(ws.Path, rangeSpec, pop.Spec, nil) })
	if err != nil {
		return nil, err
	}
	if len(segs) > 0 {
		rep.Segments, err = ScoreSegments(bands, groups, segs, pop.MinAmount, o.MinSegment, pop.AmountType.Scale,
			func(key Key, _, _ float64, rangeSpec string) string {
				return DrillCommand(ws.Path, rangeSpec, pop.Spec, key.DrillSegments(segs))
			})
		if err != nil {
			return nil, err
		}
	}
	return rep, nil
}

// Finish scores the bands of the layout on g, the whole selection's
// counts between the bands' edges, and builds the report. spec is the
// population (defaults filled in), minAmount its minimum as a number;
// drill writes the command or query that lists the records of a range
// FROM:TO (DrillRange at the amounts' scale).
func Finish(o Options, spec population.Spec, amountType, currency string, minAmount float64, scale int, bands []benford.Band, g Group, drill func(from, to float64, rangeSpec string) string) (*Report, error) {
	rows, str, fit, err := ScoreFit(bands, g.Bins, minAmount, g.Min, g.Max)
	if err != nil {
		return nil, err
	}
	layout := o.Layout
	layout.From, layout.To = bands[0].From, bands[len(bands)-1].To
	if layout.Width == 0 && layout.PerDecade == 0 {
		layout.PerDecade = DefaultPerDecade
	}
	rep := &Report{
		Kind: "ranges", Population: spec, AmountType: amountType, Currency: currency,
		Layout: layout, BandScale: layout.Scale(), Counts: g.Counts,
		BelowBands: g.Bins.Below(), AboveBands: g.Bins.Above(),
		Bands: rows, Stretches: str, Fit: fit,
	}
	var scored []benford.Band
	for i := range rep.Bands {
		r := &rep.Bands[i]
		r.Range = DrillRange(r.From, r.To, scale)
		if r.Scored {
			rep.Scored++
			scored = append(scored, r.Band)
		}
		if r.Flagged {
			rep.Flagged++
			r.Drill = drill(r.From, r.To, r.Range)
		}
	}
	rep.Dispersion = benford.BandDispersion(scored)
	for i := range rep.Stretches {
		s := &rep.Stretches[i]
		s.Range = DrillRange(s.From, s.To, scale)
		s.Drill = drill(s.From, s.To, s.Range)
	}
	sortStretches(rep.Stretches)
	if rep.Stretches == nil {
		rep.Stretches = []Stretch{}
	}
	return rep, nil
}

func sortStretches(s []Stretch) {
	for i := 1; i < len(s); i++ {
		for j := i; j > 0 && s[j].Excess > s[j-1].Excess; j-- {
			s[j], s[j-1] = s[j-1], s[j]
		}
	}
}
