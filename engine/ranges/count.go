package ranges

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Counts says what a selection holds: the rows the filter keeps, why some
// were left out, and the range of the tested absolute amounts, so that N
// is always explained: Rows = Tested + Zero + OtherSign + BelowMin.
type Counts struct {
	Rows      int64   `json:"rows"`       // rows the filter keeps
	Zero      int64   `json:"zero"`       // left out: amount zero
	OtherSign int64   `json:"other_sign"` // left out: of the sign not kept
	BelowMin  int64   `json:"below_min"`  // left out: |amount| below the minimum
	Tested    int64   `json:"tested"`     // amounts tested
	Min       float64 `json:"min"`        // smallest tested |amount| (0 if none)
	Max       float64 `json:"max"`        // largest tested |amount| (0 if none)
}

// Left returns the rows left out as the population counts them (the
// filter's are not among Rows).
func (c Counts) Left() population.Left {
	return population.Left{Zero: c.Zero, OtherSign: c.OtherSign, BelowMin: c.BelowMin}
}

// Add adds the counts of o and widens the range to cover it.
func (c *Counts) Add(o Counts) {
	if o.Tested > 0 {
		if c.Tested == 0 || o.Min < c.Min {
			c.Min = o.Min
		}
		if c.Tested == 0 || o.Max > c.Max {
			c.Max = o.Max
		}
	}
	c.Rows += o.Rows
	c.Zero += o.Zero
	c.OtherSign += o.OtherSign
	c.BelowMin += o.BelowMin
	c.Tested += o.Tested
}

// Group is one segment's counts (Key nil for the whole selection).
type Group struct {
	Key Key
	Counts
	Bins Bins
}

// Population is a checked selection of the ledger ready to count.
type Population struct {
	Spec       population.Spec // as given, defaults filled in
	AmountType population.AmountType
	MinAmount  float64 // Spec.Min as a number
	pop        *population.Population
}

// Prepare checks the selection (filter, signs, minimum) against the
// workspace.
func Prepare(ctx context.Context, ws *workspace.Workspace, spec population.Spec) (*Population, error) {
	pop, err := population.Prepare(ctx, ws, spec)
	if err != nil {
		return nil, err
	}
	return &Population{Spec: pop.Spec, AmountType: pop.AmountType, MinAmount: pop.MinAmount(), pop: pop}, nil
}

func (p *Population) render(name string, segs []Segment) string {
	var sel, names []string
	for i, s := range segs {
		n := fmt.Sprintf("ll_seg_%d", i+1)
		sel = append(sel, s.Row()+" AS "+n+",")
		names = append(names, n)
	}
	groupBy := ""
	segNames := ""
	if len(names) > 0 {
		groupBy = "GROUP BY " + strings.Join(names, ", ")
		segNames = strings.Join(names, ", ") + ","
	}
	return queries.Render(name, map[string]string{
		"filter": p.pop.Filter, "tested": p.pop.Tested().SQL, "x": p.pop.Abs("amount"), "sign_ok": p.pop.Sign("ll_amount"),
		"segment_select": strings.Join(sel, "\n           "), "segment_names": segNames, "group_by": groupBy,
	})
}

// Summary counts the whole selection (one cheap scan, no bins).
func (p *Population) Summary(ctx context.Context, ws *workspace.Workspace) (Counts, error) {
	var c Counts
	var lo, hi sql.NullFloat64
	err := ws.Conn.QueryRowContext(ctx, p.render("ranges_summary", nil), p.pop.Tested().Args...).
		Scan(&c.Rows, &c.Zero, &c.OtherSign, &c.Tested, &lo, &hi)
	if err != nil {
		return c, fmt.Errorf("counting the amounts: %w", err)
	}
	c.BelowMin = c.Rows - c.Tested - c.Zero - c.OtherSign
	c.Min, c.Max = lo.Float64, hi.Float64
	return c, nil
}

// Count counts the tested amounts between the edges (ascending, distinct,
// finite), per segment of segs (one group for the whole selection when
// segs is empty), in one scan. Groups are sorted by key.
func (p *Population) Count(ctx context.Context, ws *workspace.Workspace, segs []Segment, edges []float64) ([]Group, error) {
	if len(edges) == 0 {
		return nil, fmt.Errorf("ranges: no edges to count between")
	}
	if err := checkEdges(edges); err != nil {
		return nil, err
	}
	neg := make([]float64, len(edges))
	for i, e := range edges {
		neg[len(edges)-1-i] = -e
	}
	args := append(append([]any(nil), p.pop.Tested().Args...), neg)
	rows, err := ws.Conn.QueryContext(ctx, p.render("ranges_counts", segs), args...)
	if err != nil {
		return nil, fmt.Errorf("counting the amounts in ranges: %w", err)
	}
	defer rows.Close()
	var out []Group
	for rows.Next() {
		g := Group{Key: make(Key, len(segs))}
		var lo, hi sql.NullFloat64
		var keys, counts any
		dest := make([]any, 0, len(segs)+8)
		for i := range segs {
			dest = append(dest, &g.Key[i])
		}
		dest = append(dest, &g.Rows, &g.Zero, &g.OtherSign, &g.Tested, &lo, &hi, &keys, &counts)
		if err := rows.Scan(dest...); err != nil {
			return nil, fmt.Errorf("reading the range counts: %w", err)
		}
		g.BelowMin = g.Rows - g.Tested - g.Zero - g.OtherSign
		g.Min, g.Max = lo.Float64, hi.Float64
		if len(segs) == 0 {
			g.Key = nil
		}
		g.Bins, err = histogramBins(edges, keys, counts)
		if err != nil {
			return nil, err
		}
		out = append(out, g)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("counting the amounts in ranges: %w", err)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Key.Less(out[j].Key) })
	if len(out) == 0 && len(segs) == 0 {
		b, _ := NewBins(edges)
		out = append(out, Group{Bins: b})
	}
	return out, nil
}

// histogramBins reads DuckDB's histogram of -x over the negated edges
// (see queries/ranges.sql) into Bins.
func histogramBins(edges []float64, keys, counts any) (Bins, error) {
	b, err := NewBins(edges)
	if err != nil {
		return b, err
	}
	if keys == nil {
		return b, nil // no tested amounts in the group
	}
	ks, ok1 := keys.([]any)
	cs, ok2 := counts.([]any)
	if !ok1 || !ok2 || len(ks) != len(cs) {
		return b, fmt.Errorf("ranges: unexpected histogram result %T %T", keys, counts)
	}
	for i, k := range ks {
		kf, ok := k.(float64)
		if !ok {
			return b, fmt.Errorf("ranges: unexpected histogram key %T", k)
		}
		n, err := toInt64(cs[i])
		if err != nil {
			return b, err
		}
		if math.IsInf(kf, 1) {
			b.Counts[0] += n // below the first edge
			continue
		}
		j, ok := b.edgeIndex(-kf)
		if !ok {
			return b, fmt.Errorf("ranges: histogram key %v is not an edge", -kf)
		}
		b.Counts[j+1] += n
	}
	return b, nil
}

func toInt64(v any) (int64, error) {
	switch n := v.(type) {
	case uint64:
		return int64(n), nil
	case int64:
		return n, nil
	case uint32:
		return int64(n), nil
	case int32:
		return int64(n), nil
	}
	return 0, fmt.Errorf("ranges: unexpected count type %T", v)
}

// Merge returns the whole selection's group: the sum of groups over the
// same edges, with key nil.
func Merge(groups []Group, edges []float64) (Group, error) {
	b, err := NewBins(edges)
	if err != nil {
		return Group{}, err
	}
	all := Group{Bins: b}
	for _, g := range groups {
		all.Counts.Add(g.Counts)
		if err := all.Bins.Merge(g.Bins); err != nil {
			return Group{}, err
		}
	}
	return all, nil
}
