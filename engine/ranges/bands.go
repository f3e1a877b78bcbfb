package ranges

import (
	"fmt"
	"math"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/field"
)

// MaxBands bounds the bands of one range table.
const MaxBands = 10000

// DefaultPerDecade is the number of logarithmic bands to a decade when no
// layout is given.
const DefaultPerDecade = 10

// Layout says how the amounts are cut into bands: Width > 0 gives bands of
// that fixed width, otherwise PerDecade bands of equal width on a
// logarithmic scale. From and To bound the bands; 0 takes them from the
// data (fixed-width bands start at 0 by default; logarithmic bands at the
// smallest tested amount), snapped outwards to the band grid.
type Layout struct {
	Width     float64 `json:"width,omitempty"`      // fixed band width, in currency units
	PerDecade int     `json:"per_decade,omitempty"` // logarithmic bands per decade
	From      float64 `json:"from"`
	To        float64 `json:"to"`
}

// Scale names the layout: "fixed" or "logarithmic".
func (l Layout) Scale() string {
	if l.Width > 0 {
		return "fixed"
	}
	return "logarithmic"
}

// Check validates the layout before any data is read. A refusal is a
// *field.Error naming the fields width, per_decade, from and to.
func (l Layout) Check() error {
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	switch {
	case bad(l.Width) || bad(l.From) || bad(l.To):
		return &field.Error{Reason: "{width}, {from} and {to} must be plain numbers"}
	case l.Width < 0:
		return &field.Error{Field: "width", Value: fmt.Sprint(l.Width), Reason: "a band width is a positive amount, e.g. 500"}
	case l.Width > 0 && l.PerDecade > 0:
		return &field.Error{Reason: "give either {width} (fixed-width bands) or {per_decade} (logarithmic bands), not both"}
	case l.PerDecade < 0:
		return &field.Error{Field: "per_decade", Value: fmt.Sprint(l.PerDecade), Reason: "give a positive number of bands to a decade, e.g. 10"}
	case l.From < 0 || l.To < 0:
		return &field.Error{Reason: "{from} and {to} are absolute amounts: give 0 or more (choose the sign with {signs})"}
	case l.To > 0 && l.To <= l.From:
		return &field.Error{Reason: "{from} {0} {to} {1}: the bands need FROM < TO", Args: []any{l.From, l.To}}
	}
	return nil
}

// Bands returns the empty bands of the layout for tested amounts in
// [lo, hi].
func (l Layout) Bands(lo, hi float64) ([]benford.Band, error) {
	if err := l.Check(); err != nil {
		return nil, err
	}
	from, to := l.From, l.To
	if l.Width > 0 {
		if to == 0 {
			to = hi
		}
		if !(to > from) {
			return nil, fmt.Errorf("no tested amounts at or above --from %v: lower --from", from)
		}
		if n := math.Ceil((to-from)/l.Width - 1e-9); n > MaxBands {
			return nil, fmt.Errorf("--width %v from %v to %v makes %.0f bands; at most %d: give a larger --width or a narrower --from/--to", l.Width, from, to, n, MaxBands)
		}
		bands := benford.LinearBands(from, to, l.Width)
		if bands == nil {
			return nil, fmt.Errorf("--width %v from %v to %v: no bands", l.Width, from, to)
		}
		for i := range bands {
			bands[i].From = CleanEdge(bands[i].From)
			bands[i].To = CleanEdge(bands[i].To)
		}
		return bands, nil
	}
	pd := l.PerDecade
	if pd == 0 {
		pd = DefaultPerDecade
	}
	if from == 0 {
		from = lo
	}
	if to == 0 {
		to = hi
	}
	if !(from > 0) {
		return nil, fmt.Errorf("logarithmic bands need amounts above zero: give --from, or --min above 0")
	}
	if !(to > from) {
		to = from * 10 // a single amount value: one decade around it
	}
	if n := math.Ceil(math.Log10(to/from)*float64(pd)) + 1; n > MaxBands {
		return nil, fmt.Errorf("--per-decade %d from %v to %v makes about %.0f bands; at most %d", pd, from, to, n, MaxBands)
	}
	bands := benford.LogBands(from, to, pd)
	if bands == nil {
		return nil, fmt.Errorf("--per-decade %d from %v to %v: no bands", pd, from, to)
	}
	return bands, nil
}

// Edges returns the distinct edges of bands (ascending bands that meet).
func Edges(bands []benford.Band) []float64 {
	e := make([]float64, 0, len(bands)+1)
	for _, b := range bands {
		e = append(e, b.From, b.To)
	}
	return SortedEdges(e)
}

// Notes on bands that are listed but not scored.
const (
	NoteBelowMin   = "starts below the minimum amount tested"
	NoteBelowData  = "below the smallest tested amount"
	NoteAboveData  = "reaches past the largest tested amount"
	NoteAtZero     = "starts at zero"
	NoteTooFewBand = "too few bands to score"
	// NoteEdge marks the first and the last band that could be scored:
	// their expectation would be an extrapolation, so they only help fit
	// their neighbours.
	NoteEdge = "not scored: no band beyond it"
	// NoteNearEdge marks the second and the second-last such band when the
	// fit is a quadratic, which one band on a side does not pin.
	NoteNearEdge = "not scored: one band beyond it, too few for the fit"
)

// Row is one band of the range table.
type Row struct {
	benford.Band
	Note  string `json:"note,omitempty"`  // why the band is not scored
	Range string `json:"range"`           // FROM:TO for leadline drill --range, at the ledger's scale
	Drill string `json:"drill,omitempty"` // the drill-down command, for flagged bands
}

// Stretch is a run of adjacent flagged bands: an inflated range.
type Stretch struct {
	From     float64 `json:"from"`
	To       float64 `json:"to"`
	Bands    int     `json:"bands"`
	Count    int64   `json:"count"`
	Expected float64 `json:"expected"`
	Excess   float64 `json:"excess"` // count - expected
	Range    string  `json:"range"`
	Drill    string  `json:"drill"`
}

// Score fills the counts of bands from b (whose edges include every band
// edge), marks the bands that cannot be scored fairly (cut by the minimum
// amount minCut, or outside the tested amounts [lo, hi]), scores the rest
// with benford.ScoreBands and joins adjacent flagged bands into stretches.
// Drill ranges and commands are left to the caller.
func Score(bands []benford.Band, b Bins, minCut, lo, hi float64) ([]Row, []Stretch, error) {
	rows, str, _, err := ScoreFit(bands, b, minCut, lo, hi)
	return rows, str, err
}

// ScoreFit is Score that also returns the local fit that
// benford.ScoreBands chose by cross-validation.
func ScoreFit(bands []benford.Band, b Bins, minCut, lo, hi float64) ([]Row, []Stretch, benford.BandFit, error) {
	rows := make([]Row, len(bands))
	var scorable []benford.Band
	var idx []int
	for i, band := range bands {
		n, err := b.Between(band.From, band.To)
		if err != nil {
			return nil, nil, benford.BandFit{}, err
		}
		band.Count = n
		rows[i] = Row{Band: band}
		switch {
		case band.From <= 0 && minCut <= 0:
			rows[i].Note = NoteAtZero
		case band.From < minCut:
			rows[i].Note = NoteBelowMin
		case band.To <= lo:
			rows[i].Note = NoteBelowData
		case band.To > hi:
			rows[i].Note = NoteAboveData
		default:
			scorable = append(scorable, band)
			idx = append(idx, i)
		}
	}
	fit := benford.ScoreBands(scorable)
	for k, i := range idx {
		rows[i].Band = scorable[k]
		switch {
		case scorable[k].Scored:
		case len(scorable) >= benford.MinScoredBands && (k == 0 || k == len(scorable)-1):
			rows[i].Note = NoteEdge
		case len(scorable) >= benford.MinScoredBands && (k == 1 || k == len(scorable)-2):
			rows[i].Note = NoteNearEdge
		default:
			rows[i].Note = NoteTooFewBand
		}
	}
	for i := range rows {
		if !rows[i].Scored {
			rows[i].P, rows[i].PAdjusted = 1, 1
		}
	}
	return rows, stretches(rows), fit, nil
}

func stretches(rows []Row) []Stretch {
	var out []Stretch
	for i := 0; i < len(rows); i++ {
		if !rows[i].Flagged {
			continue
		}
		s := Stretch{From: rows[i].From}
		for ; i < len(rows) && rows[i].Flagged; i++ {
			s.To = rows[i].To
			s.Bands++
			s.Count += rows[i].Count
			s.Expected += rows[i].Expected
		}
		s.Excess = float64(s.Count) - s.Expected
		out = append(out, s)
	}
	return out
}
