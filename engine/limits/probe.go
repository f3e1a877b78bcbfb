package limits

import (
	"fmt"
	"math"
	"sort"
	"strconv"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/field"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
)

// Defaults.
const (
	DefaultWidth = 0.10
	// DefaultMinCount is the fewest amounts (below + above) a band must
	// hold for its split to be tested. With fewer the binomial test has
	// little power, and every such pair would only widen the Holm family;
	// 30 amounts all below the limit still give p = 0.525^30 ≈ 4e-9.
	DefaultMinCount = 30
)

// Status of a (segment, limit) pair.
const (
	StatusTested   = "tested"
	StatusTooFew   = "too few amounts"
	StatusOutRange = "band outside the amounts"
)

// Row is the probe at one limit in one segment (Segment nil: the whole
// selection).
type Row struct {
	Rank    int                `json:"rank"` // 1 = strongest; 0 when not tested
	Segment map[string]*string `json:"segment"`
	benford.LimitResult
	Status string `json:"status"`
	Range  string `json:"range"` // the band below the limit, FROM:TO for leadline drill --range
	Drill  string `json:"drill"` // the drill-down command for the amounts below the limit

	key ranges.Key
}

// Label is the row's segment as text ("all" for the whole selection).
func (r Row) Label() string {
	if r.key == nil {
		return "all"
	}
	return r.key.Label()
}

// Key is the row's segment key (nil for the whole selection).
func (r Row) Key() ranges.Key { return r.key }

// ParseLimits reads limits written as plain numbers ("5000", "2500.50"),
// each given once or more; it returns them ascending without repeats.
func ParseLimits(texts []string) ([]float64, error) {
	var out []float64
	for _, t := range texts {
		v, err := ParseLimit(t)
		if err != nil {
			return nil, err
		}
		out = append(out, v)
	}
	return ranges.SortedEdges(out), nil
}

// ParseLimit reads one limit: a positive amount in the one grammar of
// amounts given by the user (population.ParseDecimal). A refusal is a
// *field.Error of the field "limits".
func ParseLimit(t string) (float64, error) {
	r, ok := population.ParseDecimal(t)
	if !ok {
		return 0, &field.Error{Field: "limits", Value: strconv.Quote(t), Reason: "not a number; give plain numbers separated by commas, e.g. {limits} 1000,5000,10000"}
	}
	if r.Sign() <= 0 {
		return 0, &field.Error{Field: "limits", Value: strconv.Quote(t), Reason: "a limit is a positive amount"}
	}
	v, _ := r.Float64()
	if math.IsInf(v, 0) {
		return 0, &field.Error{Field: "limits", Value: strconv.Quote(t), Reason: "too large for a limit"}
	}
	return v, nil
}

// CheckWidth validates the band width w, a fraction of the limit. A
// refusal is a *field.Error of the field "width".
func CheckWidth(w float64) error {
	if !(w > 0 && w < 1) {
		return &field.Error{Field: "width", Value: fmt.Sprint(w), Reason: "the band width is a fraction of the limit, strictly between 0 and 1 (0.10 for 10%)"}
	}
	return nil
}

// Band returns the band [T(1-w), T(1+w)) of a limit, its ends rounded to
// 15 significant digits (ranges.CleanEdge) so that round limits have round
// bands: 5000 at 10% covers [4500, 5500).
func Band(limit, w float64) (lo, hi float64) {
	return ranges.CleanEdge(limit * (1 - w)), ranges.CleanEdge(limit * (1 + w))
}

// Edges returns every band edge of the limits (T(1-w), T, T(1+w)),
// ascending and distinct: the edges to count the amounts between. Bands of
// neighbouring limits may overlap; each limit's counts are sums over the
// elementary intervals between the edges.
func Edges(limits []float64, w float64) []float64 {
	var e []float64
	for _, t := range limits {
		lo, hi := Band(t, w)
		e = append(e, lo, t, hi)
		if w < 0.5 {
			flo, fhi := Flanks(t, w)
			e = append(e, flo, fhi)
		}
	}
	return ranges.SortedEdges(e)
}

// Flanks returns the outer ends of the flanking bands of a limit,
// T(1-2w) and T(1+2w) (rounded like Band): the probe models the density
// near T from the amounts in [T(1-2w), T(1-w)) and [T(1+w), T(1+2w)).
func Flanks(limit, w float64) (lo, hi float64) {
	return ranges.CleanEdge(limit * (1 - 2*w)), ranges.CleanEdge(limit * (1 + 2*w))
}

// ScanLimits returns the round limits whose whole band lies within the
// tested amounts [lo, hi] (benford.ScanLimits, checked again on the rounded
// bands).
func ScanLimits(lo, hi, w float64) []float64 {
	var out []float64
	for _, t := range benford.ScanLimits(lo, hi, w) {
		if a, b := Band(t, w); a >= lo && b <= hi {
			out = append(out, t)
		}
	}
	return out
}

// Probe probes every limit in the whole selection (all, key nil) and in
// every segment group, from their bin counts (whose edges must include
// Edges(limits, w)). A pair is tested when its band lies within the
// group's tested amounts [Min, Max] and holds at least minCount amounts;
// the tested pairs are adjusted together with Holm's procedure and ranked
// (P ascending, then Z descending, the whole selection before segments,
// then limit ascending, then segment). Untested pairs follow, unranked,
// with P and PAdjusted 1.
func Probe(all ranges.Group, groups []ranges.Group, segs []ranges.Segment, limits []float64, w float64, minCount int64) ([]Row, error) {
	if err := CheckWidth(w); err != nil {
		return nil, err
	}
	for _, t := range limits {
		if err := benford.CheckLimit(t, w); err != nil {
			return nil, err
		}
	}
	var rows []Row
	probeGroup := func(g ranges.Group) error {
		for _, t := range limits {
			lo, hi := Band(t, w)
			below, err := g.Bins.Between(lo, t)
			if err != nil {
				return err
			}
			above, err := g.Bins.Between(t, hi)
			if err != nil {
				return err
			}
			// The density near T is modelled from the flanking bands when
			// both lie within the group's amounts; otherwise the probe
			// falls back to the 1/x density (Flanked false).
			res := benford.LimitProbe(t, w, below, above)
			if flo, fhi := Flanks(t, w); w < 0.5 && g.Tested > 0 && flo >= g.Min && fhi <= g.Max {
				left, err := g.Bins.Between(flo, lo)
				if err != nil {
					return err
				}
				right, err := g.Bins.Between(hi, fhi)
				if err != nil {
					return err
				}
				res = benford.LimitProbeFlanked(t, w, below, above, left, right)
			}
			r := Row{LimitResult: res, key: g.Key}
			r.From, r.To = lo, hi
			switch {
			case g.Tested == 0 || lo < g.Min || hi > g.Max:
				r.Status = StatusOutRange
			case below+above < minCount:
				r.Status = StatusTooFew
			default:
				r.Status = StatusTested
			}
			r.Segment = g.Key.Values(segs)
			rows = append(rows, r)
		}
		return nil
	}
	if err := probeGroup(all); err != nil {
		return nil, err
	}
	for _, g := range groups {
		if err := probeGroup(g); err != nil {
			return nil, err
		}
	}
	adjust(rows)
	return rows, nil
}

// adjust applies Holm's procedure over the tested rows (benford.Holm, the
// adjustment benford.AdjustLimits makes), flags at benford.LimitAlpha and
// ranks; untested rows get P and PAdjusted 1 and go last.
func adjust(rows []Row) {
	var p []float64
	var idx []int
	for i := range rows {
		if rows[i].Status == StatusTested {
			p = append(p, rows[i].P)
			idx = append(idx, i)
		} else {
			rows[i].P, rows[i].PAdjusted, rows[i].Flagged = 1, 1, false
		}
	}
	adj := benford.Holm(p)
	for k, i := range idx {
		rows[i].PAdjusted = adj[k]
		rows[i].Flagged = adj[k] < benford.LimitAlpha
	}
	sort.SliceStable(rows, func(i, j int) bool {
		a, b := rows[i], rows[j]
		ta, tb := a.Status == StatusTested, b.Status == StatusTested
		if ta != tb {
			return ta
		}
		if ta && a.P != b.P {
			return a.P < b.P
		}
		if ta && a.Z != b.Z {
			return a.Z > b.Z
		}
		if (a.key == nil) != (b.key == nil) {
			return a.key == nil
		}
		if !ta && !equalKeys(a.key, b.key) {
			return a.key.Less(b.key)
		}
		if a.Limit != b.Limit {
			return a.Limit < b.Limit
		}
		return a.key.Less(b.key)
	})
	for i := range rows {
		if rows[i].Status == StatusTested {
			rows[i].Rank = i + 1
		}
	}
}

func equalKeys(a, b ranges.Key) bool {
	return !a.Less(b) && !b.Less(a)
}
