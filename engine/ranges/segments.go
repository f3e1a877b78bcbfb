package ranges

import (
	"sort"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/field"
	"github.com/leadline/leadline/engine/segment"
)

// Segment is one --by column; see package segment.
type Segment = segment.Segment

// Key names one segment: the value of each --by column; see package segment.
type Key = segment.Key

// DefaultMinSegment is the fewest tested amounts a segment needs to be
// scored on its own (the digit battery's default for a ranked segment).
const DefaultMinSegment = 1000

// MaxSegments bounds the segments of one run.
const MaxSegments = 100000

// SegmentAdjustment states the multiplicity adjustment of a segmented run.
const SegmentAdjustment = "Holm over all scored (segment, band) pairs of the segments at 5%; the whole selection's table is adjusted over its own bands"

// CheckSegments fills the default minimum segment size and checks it. A
// refusal is a *field.Error of the field min_segment.
func (o Options) CheckSegments() (Options, error) {
	if o.MinSegment == 0 {
		o.MinSegment = DefaultMinSegment
	}
	return o, CheckMinSegment(o.MinSegment)
}

// CheckMinSegment refuses a minimum segment size below 1 (a *field.Error
// of the field min_segment).
func CheckMinSegment(n int64) error {
	if n < 1 {
		return &field.Error{Field: "min_segment", Value: strconv.FormatInt(n, 10), Reason: "give 1 or more tested amounts, e.g. 1000"}
	}
	return nil
}

// SegmentTable is the range table run in every segment of --by: the
// bands of the whole selection's layout, scored in each segment with at
// least MinSegment tested amounts on the segment's own counts, and the
// flags adjusted together over all scored (segment, band) pairs.
type SegmentTable struct {
	By              []string     `json:"by"`
	MinSegment      int64        `json:"min_segment"`
	Count           int          `json:"count"`            // segments with rows
	Scored          int          `json:"scored"`           // segments with at least min_segment tested amounts and a band scored: the rows
	TooSmall        int          `json:"too_small"`        // segments with fewer, not scored
	TooSmallTested  int64        `json:"too_small_tested"` // tested amounts in those segments
	NoBand          int          `json:"no_band"`          // segments large enough whose amounts span too few bands to score one
	NoBandTested    int64        `json:"no_band_tested"`   // tested amounts in those segments
	Pairs           int          `json:"pairs"`            // scored (segment, band) pairs: the Holm family
	Flagged         int          `json:"flagged"`          // flagged pairs
	FlaggedSegments int          `json:"flagged_segments"` // segments with a flagged band
	Adjustment      string       `json:"adjustment"`
	Rows            []SegmentRow `json:"rows"` // the scored segments, ranked by their strongest band
}

// SegmentRow is the range table of one segment.
type SegmentRow struct {
	Rank       int                `json:"rank"`    // 1 = strongest band (smallest adjusted p, then largest z)
	Segment    map[string]*string `json:"segment"` // each --by column's value (null when blank)
	Label      string             `json:"label"`   // the values joined with " / "
	Counts     Counts             `json:"counts"`
	BelowBands int64              `json:"below_bands"`
	AboveBands int64              `json:"above_bands"`
	Scored     int                `json:"scored"` // bands scored in this segment
	Flagged    int                `json:"flagged"`
	Dispersion float64            `json:"dispersion"`
	Fit        benford.BandFit    `json:"fit"`
	Strongest  *Row               `json:"strongest,omitempty"` // the scored band of smallest adjusted p (largest z on a tie)
	Bands      []Row              `json:"bands"`
	Stretches  []Stretch          `json:"stretches"`
	key        Key
}

// Key is the segment's key.
func (r *SegmentRow) Key() Key { return r.key }

// ScoreSegments scores the bands in every group (one per segment of segs,
// counted between the bands' edges) with at least minSegment tested
// amounts, each on its own counts and range of amounts (a segment in
// which no band can be scored is counted in NoBand, not listed), then adjusts the
// bands' p-values by Holm over every scored (segment, band) pair of the
// run, so that the flag keeps its 5% family-wise meaning however many
// segments there are. minAmount is the population's minimum, scale the
// amounts' decimal places; drill writes the command or query listing the
// records of a range FROM:TO in a segment.
func ScoreSegments(bands []benford.Band, groups []Group, segs []Segment, minAmount float64, minSegment int64, scale int,
	drill func(key Key, from, to float64, rangeSpec string) string) (*SegmentTable, error) {
	t := &SegmentTable{By: []string{}, MinSegment: minSegment, Count: len(groups), Adjustment: SegmentAdjustment, Rows: []SegmentRow{}}
	for _, s := range segs {
		t.By = append(t.By, s.Name)
	}
	if len(groups) > MaxSegments {
		return nil, &field.Error{Field: "by", Value: strings.Join(t.By, ","),
			Reason: "makes {0} segments, more than {1}: choose a coarser column or narrow the selection with {where}", Args: []any{len(groups), MaxSegments}}
	}
	type ref struct{ seg, band int }
	var p []float64
	var refs []ref
	for _, g := range groups {
		if g.Tested < minSegment {
			t.TooSmall++
			t.TooSmallTested += g.Tested
			continue
		}
		rows, _, fit, err := ScoreFit(bands, g.Bins, minAmount, g.Min, g.Max)
		if err != nil {
			return nil, err
		}
		sr := SegmentRow{Segment: g.Key.Values(segs), Label: g.Key.Label(), Counts: g.Counts,
			BelowBands: g.Bins.Below(), AboveBands: g.Bins.Above(), Fit: fit, Bands: rows, key: g.Key}
		var scored []benford.Band
		for j := range rows {
			rows[j].Range = DrillRange(rows[j].From, rows[j].To, scale)
			if rows[j].Scored {
				p = append(p, rows[j].P)
				refs = append(refs, ref{len(t.Rows), j})
				scored = append(scored, rows[j].Band)
			}
		}
		if len(scored) == 0 {
			// Counted, not listed: a table without a scored band says
			// nothing, and a fine --by would list thousands of them.
			t.NoBand++
			t.NoBandTested += g.Tested
			continue
		}
		sr.Scored = len(scored)
		sr.Dispersion = benford.BandDispersion(scored)
		t.Rows = append(t.Rows, sr)
	}
	t.Scored = len(t.Rows)
	t.Pairs = len(p)
	adj := benford.Holm(p)
	for k, r := range refs {
		b := &t.Rows[r.seg].Bands[r.band]
		b.PAdjusted = adj[k]
		b.Flagged = adj[k] < benford.BandAlpha && float64(b.Count) > b.Expected
	}
	for i := range t.Rows {
		sr := &t.Rows[i]
		var best *Row
		for j := range sr.Bands {
			b := &sr.Bands[j]
			if b.Flagged {
				sr.Flagged++
				b.Drill = drill(sr.key, b.From, b.To, b.Range)
			} else {
				b.Drill = ""
			}
			if b.Scored && (best == nil || b.PAdjusted < best.PAdjusted || b.PAdjusted == best.PAdjusted && b.Z > best.Z) {
				best = b
			}
		}
		if best != nil {
			c := *best
			sr.Strongest = &c
		}
		sr.Stretches = stretches(sr.Bands)
		for j := range sr.Stretches {
			s := &sr.Stretches[j]
			s.Range = DrillRange(s.From, s.To, scale)
			s.Drill = drill(sr.key, s.From, s.To, s.Range)
		}
		sortStretches(sr.Stretches)
		if sr.Stretches == nil {
			sr.Stretches = []Stretch{}
		}
		t.Flagged += sr.Flagged
		if sr.Flagged > 0 {
			t.FlaggedSegments++
		}
	}
	sort.SliceStable(t.Rows, func(i, j int) bool { return t.Rows[i].before(&t.Rows[j]) })
	for i := range t.Rows {
		t.Rows[i].Rank = i + 1
	}
	return t, nil
}

// before ranks segments: flagged ones first, then by the strongest band
// (smallest adjusted p, then largest z), then by key.
func (r *SegmentRow) before(o *SegmentRow) bool {
	if (r.Flagged > 0) != (o.Flagged > 0) {
		return r.Flagged > 0
	}
	switch {
	case r.Strongest == nil || o.Strongest == nil:
		if (r.Strongest == nil) != (o.Strongest == nil) {
			return r.Strongest != nil
		}
	case r.Strongest.PAdjusted != o.Strongest.PAdjusted:
		return r.Strongest.PAdjusted < o.Strongest.PAdjusted
	case r.Strongest.Z != o.Strongest.Z:
		return r.Strongest.Z > o.Strongest.Z
	}
	return r.key.Less(o.key)
}
