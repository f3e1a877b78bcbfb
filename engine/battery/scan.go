package battery

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"math/big"
	"sort"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Last-two digits readings (Options.LastTwo): see engine/population.
const (
	LastTwoScale = population.LastTwoScale
	LastTwoUnits = population.LastTwoUnits
)

// Plan is a checked battery, its SQL built, ready to scan.
type Plan struct {
	Options    Options
	AmountType population.AmountType
	Segments   []Segment
	MinUnits   int64 // Options.Min in units of the ledger's scale (ceiling)

	pop      *population.Population
	filter   string // checked filter, ready to paste after WHERE
	units    string // SQL: the signed amount in whole units
	first3   string // SQL macro: first three significant digits of units
	signOK   string // SQL over ll_u: the row is of a sign tested
	signMay  string // SQL over amount: the row is of a sign tested, or zero
	absU     string // SQL over ll_u: |ll_u| for the rows signMay keeps
	last2    string // SQL over ll_a: the last-two bin
	wide     bool   // units are HUGEINT (precision > 18)
	prepared bool
}

// Prepare checks the options against the workspace (amount type, filter,
// signs, minimum, segment columns) and builds the battery's SQL.
func Prepare(ctx context.Context, ws *workspace.Workspace, o Options) (*Plan, error) {
	o = o.WithDefaults()
	if err := o.Check(); err != nil {
		return nil, err
	}
	pop, err := population.Prepare(ctx, ws, o.Spec)
	if err != nil {
		return nil, err
	}
	at := pop.AmountType
	p := &Plan{Options: o, AmountType: at, pop: pop, filter: pop.Filter}
	if !pop.MinUnits.IsInt64() {
		// Units are bound as BIGINT; only a DECIMAL wider than 18 digits
		// holds amounts beyond them.
		return nil, &population.FieldError{Field: population.FieldMin, Value: o.Min, Reason: "above the largest minimum the digit battery takes (9223372036854775807 units)"}
	}
	p.MinUnits = pop.MinUnits.Int64()
	p.Segments, err = segment.Resolve(ctx, ws, o.By)
	if err != nil {
		return nil, err
	}
	p.wide = at.Precision > 18
	p.units = unitsSQL(at)
	if plain, ok := plainUnitsSQL(at); ok {
		var lo, hi sql.NullString
		if err := ws.Conn.QueryRowContext(ctx, queries.Get("battery_amount_range")).Scan(&lo, &hi); err != nil {
			return nil, fmt.Errorf("reading the range of the amounts: %w", err)
		}
		if within(lo, at) && within(hi, at) {
			p.units = plain
		}
	}
	p.first3 = "ll_first3_i64"
	if p.wide {
		p.first3 = "ll_first3_i128"
	}
	p.signOK, p.signMay, p.absU = pop.Sign("ll_u"), pop.SignOrZero("amount"), pop.Abs("ll_u")
	p.last2 = lastTwoSQL(o, at)
	return p, nil
}

// unitsSQL returns the SQL of the signed amount as a whole number of units
// of 10^-scale, exactly. DuckDB keeps amount * 10^s in the amount's own
// width, so the plain product is used only below the amount where it would
// overflow; above it the integer and fractional parts are scaled apart
// (both exact, and both fit: |trunc(amount)| < 10^(p-s)).
func unitsSQL(at population.AmountType) string {
	s := at.Scale
	it := "BIGINT"
	if at.Precision > 18 {
		it = "HUGEINT"
	}
	if s == 0 {
		return "CAST(amount AS " + it + ")"
	}
	m := pow10Text(s)
	split := fmt.Sprintf("CAST(trunc(amount) AS %[1]s) * %[2]s + CAST((amount - trunc(amount)) * %[2]s AS %[1]s)", it, m)
	safe := at.Precision - 2*s // |amount| < 10^safe: amount * 10^s stays within the width
	if at.Precision > 18 || safe < 1 {
		return "(" + split + ")"
	}
	t := pow10Text(safe)
	return fmt.Sprintf("(CASE WHEN amount < %[1]s AND amount > -%[1]s THEN CAST(amount * %[2]s AS BIGINT) ELSE %[3]s END)", t, m, split)
}

// plainUnitsSQL returns the plain product amount * 10^s as BIGINT, exact
// for |amount| < 10^(p-2s) (see unitsSQL), and whether it applies to the
// type at all.
func plainUnitsSQL(at population.AmountType) (string, bool) {
	if at.Precision > 18 || at.Scale == 0 || at.Precision-2*at.Scale < 1 {
		return "", false
	}
	return fmt.Sprintf("CAST(amount * %s AS BIGINT)", pow10Text(at.Scale)), true
}

// within reports whether the decimal text v (an amount of type at) is
// strictly between -10^(p-2s) and 10^(p-2s); a NULL (empty ledger) is.
func within(v sql.NullString, at population.AmountType) bool {
	if !v.Valid {
		return true
	}
	r, ok := new(big.Rat).SetString(v.String)
	if !ok {
		return false
	}
	t := new(big.Rat).SetInt(new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(at.Precision-2*at.Scale)), nil))
	return r.Abs(r).Cmp(t) < 0
}

func pow10Text(n int) string { return "1" + strings.Repeat("0", n) }

// segmentSQL returns the select list (raw values as ll_s1...), the names
// list and the normalising list, each ending in ", " when not empty.
func (p *Plan) segmentSQL(perRow bool) (sel, names, normal string) {
	var a, b, c []string
	for i, s := range p.Segments {
		n := fmt.Sprintf("ll_s%d", i+1)
		expr := s.Raw()
		if perRow {
			expr = s.Row()
		}
		a = append(a, expr+" AS "+n)
		b = append(b, n)
		c = append(c, s.Normal(n)+" AS "+n)
	}
	j := func(x []string) string {
		if len(x) == 0 {
			return ""
		}
		return strings.Join(x, ", ") + ", "
	}
	return j(a), j(b), j(c)
}

// ScanSQL returns the one aggregate scan of the battery; its single
// parameter is max(MinUnits, 1).
func (p *Plan) ScanSQL() string {
	sel, names, normal := p.segmentSQL(false)
	q := queries.Render("battery_scan", map[string]string{
		"segment_select": sel, "segment_names": names, "units": p.units, "filter": p.filter,
		"sign_where": p.signMay, "abs": p.absU, "first3": p.first3, "last2": p.last2,
	})
	if len(p.Segments) == 0 {
		return q
	}
	q = strings.TrimSuffix(strings.TrimSpace(q), ";")
	return queries.Render("battery_scan_segments", map[string]string{"segment_normal": normal, "scan": q})
}

func (p *Plan) macros(ctx context.Context, ws *workspace.Workspace) error {
	if p.prepared {
		return nil
	}
	if err := CreateMacros(ctx, ws); err != nil {
		return err
	}
	p.prepared = true
	return nil
}

// CreateMacros creates the battery's SQL macros (ll_first3_i64,
// ll_first3_i128) on the workspace's connection.
func CreateMacros(ctx context.Context, ws *workspace.Workspace) error {
	if _, err := ws.Conn.ExecContext(ctx, queries.Get("battery_macros")); err != nil {
		return fmt.Errorf("creating the battery's macros: %w", err)
	}
	return nil
}

// SegmentCounts is the bin-count table of one segment.
type SegmentCounts struct {
	Key    Key
	Counts *Counts
}

// Scan runs the one aggregate scan and returns the bin-count table of the
// whole selection and, with segments, of each segment (sorted by key). The
// whole selection's table is the sum of the segments' tables, and its Left
// also counts the rows the filter left out and those of the other sign
// (from the ledger's row count and, with a filter, the rows it keeps; the
// scan itself does not read them). A segment's Left counts its zeros and
// amounts below the minimum.
func (p *Plan) Scan(ctx context.Context, ws *workspace.Workspace) (*Counts, []SegmentCounts, error) {
	if err := p.macros(ctx, ws); err != nil {
		return nil, nil, err
	}
	rows, err := ws.Conn.QueryContext(ctx, p.ScanSQL(), max(p.MinUnits, 1))
	if err != nil {
		return nil, nil, fmt.Errorf("the battery's scan: %s", firstLine(err.Error()))
	}
	defer rows.Close()
	nseg := len(p.Segments)
	bySeg := map[string]*SegmentCounts{}
	var order []*SegmentCounts
	key := make([]sql.NullString, nseg)
	dest := make([]any, nseg, nseg+4)
	for i := range key {
		dest[i] = &key[i]
	}
	scale := math.Pow10(p.AmountType.Scale)
	var f3, l2 sql.NullInt64
	var n int64
	var sum sql.NullFloat64
	var packed string
	if nseg == 0 {
		dest = append(dest, &f3, &l2, &n, &sum)
	} else {
		dest = append(dest, &packed)
	}
	for rows.Next() {
		if err := rows.Scan(dest...); err != nil {
			return nil, nil, fmt.Errorf("the battery's scan: %w", err)
		}
		k := Key(key)
		ks := k.String()
		sc := bySeg[ks]
		if sc == nil {
			sc = &SegmentCounts{Key: append(Key(nil), key...), Counts: NewCounts()}
			bySeg[ks] = sc
			order = append(order, sc)
		}
		if nseg == 0 {
			if err := addGroup(sc.Counts, f3, l2, n, sum, scale); err != nil {
				return nil, nil, err
			}
		} else if err := addPacked(sc.Counts, packed, scale); err != nil {
			return nil, nil, err
		}
	}
	if err := rows.Err(); err != nil {
		return nil, nil, fmt.Errorf("the battery's scan: %s", firstLine(err.Error()))
	}
	// Sum the segments in key order: the summation sums are floats, and
	// adding them in the order the scan happens to return groups would make
	// the whole selection's figures differ in the last digits from run to run.
	sort.Slice(order, func(i, j int) bool { return order[i].Key.Less(order[j].Key) })
	all := NewCounts()
	for _, sc := range order {
		all.Add(sc.Counts)
	}
	// The rows the scan did not read: of the other sign, or dropped by the
	// filter.
	total, kept, err := p.pop.Rows(ctx, ws)
	if err != nil {
		return nil, nil, err
	}
	unread := kept - all.N() - all.Left.Total()
	if p.Options.Signs == population.Both {
		all.Left.NoAmount = unread // NULL amounts: none in a committed ledger
	} else {
		all.Left.OtherSign = unread // and NULL amounts, of which there are none
	}
	all.Left.Filtered = total - kept
	if nseg == 0 {
		return all, nil, nil
	}
	segs := make([]SegmentCounts, len(order))
	for i, sc := range order {
		segs[i] = *sc
	}
	return all, segs, nil
}

// SecondOrder runs the second-order test's query and stores its counts in
// all and in each segment's table (segments as returned by Scan).
func (p *Plan) SecondOrder(ctx context.Context, ws *workspace.Workspace, all *Counts, segs []SegmentCounts) error {
	if err := p.macros(ctx, ws); err != nil {
		return err
	}
	sel, names, _ := p.segmentSQL(true)
	partition := ""
	if names != "" {
		partition = "PARTITION BY " + strings.TrimSuffix(names, ", ") + " "
	}
	q := queries.Render("battery_second_order", map[string]string{
		"segment_select": sel, "segment_names": names, "units": p.units, "filter": p.filter,
		"sign_ok": p.signOK, "first3": p.first3, "partition": partition,
		"window": strconv.Itoa(benford.SpacingWindow), "steps": strconv.Itoa(benford.SpacingSteps),
	})
	rows, err := ws.Conn.QueryContext(ctx, q, p.MinUnits)
	if err != nil {
		return fmt.Errorf("the second-order test: %s", firstLine(err.Error()))
	}
	defer rows.Close()
	idx := map[string]*Counts{}
	for i := range segs {
		segs[i].Counts.SecondOrder = make([]int64, 90)
		segs[i].Counts.Spacing = map[int]int64{}
		idx[segs[i].Key.String()] = segs[i].Counts
	}
	all.SecondOrder = make([]int64, 90)
	all.Spacing = map[int]int64{}
	nseg := len(p.Segments)
	key := make([]sql.NullString, nseg)
	dest := make([]any, nseg+4)
	for i := range key {
		dest[i] = &key[i]
	}
	var f2, mu sql.NullInt64
	var set, n int64
	dest[nseg], dest[nseg+1], dest[nseg+2], dest[nseg+3] = &f2, &mu, &set, &n
	for rows.Next() {
		if err := rows.Scan(dest...); err != nil {
			return fmt.Errorf("the second-order test: %w", err)
		}
		var c *Counts
		if nseg > 0 {
			if c = idx[Key(key).String()]; c == nil {
				return fmt.Errorf("the second-order test found segment %q that the scan did not: an internal error, please report it", Key(key).Label())
			}
		}
		switch {
		case set == 0 && f2.Valid:
			if f2.Int64 < 10 || f2.Int64 > 99 {
				return fmt.Errorf("the second-order test returned first-two digits %d: an internal error, please report it", f2.Int64)
			}
			all.SecondOrder[f2.Int64-10] += n
			if c != nil {
				c.SecondOrder[f2.Int64-10] += n
			}
		case set == 1 && mu.Valid:
			all.Spacing[int(mu.Int64)] += n
			if c != nil {
				c.Spacing[int(mu.Int64)] += n
			}
		}
	}
	if err := rows.Err(); err != nil {
		return fmt.Errorf("the second-order test: %s", firstLine(err.Error()))
	}
	return nil
}

// Duplicate is one exact amount of the number duplication test.
type Duplicate struct {
	Rank   int     `json:"rank"`
	Amount string  `json:"amount"` // exact, as the ledger holds it
	Count  int64   `json:"count"`
	Share  float64 `json:"share"` // count / N
}

// Duplication is the number duplication test: the most frequent exact
// amounts among those tested.
type Duplication struct {
	N        int64       `json:"n"`        // amounts tested
	Distinct int64       `json:"distinct"` // distinct amounts among them
	Top      []Duplicate `json:"top"`
}

// Duplicates runs the number duplication query: the top most frequent
// amounts, n being the number of amounts tested.
func (p *Plan) Duplicates(ctx context.Context, ws *workspace.Workspace, n int64, top int) (*Duplication, error) {
	q := queries.Render("battery_duplicates", map[string]string{"units": p.units, "filter": p.filter, "sign_ok": p.signOK})
	rows, err := ws.Conn.QueryContext(ctx, q, p.MinUnits, top)
	if err != nil {
		return nil, fmt.Errorf("number duplication: %s", firstLine(err.Error()))
	}
	defer rows.Close()
	d := &Duplication{N: n, Top: []Duplicate{}}
	for rows.Next() {
		var x Duplicate
		if err := rows.Scan(&x.Amount, &x.Count, &d.Distinct); err != nil {
			return nil, err
		}
		x.Rank = len(d.Top) + 1
		if n > 0 {
			x.Share = float64(x.Count) / float64(n)
		}
		d.Top = append(d.Top, x)
	}
	return d, rows.Err()
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// addGroup adds one group of the scan to c: a first-three-digits group
// (f3 100..999, or an exclusion code -1 zero, -3 below the minimum) or a
// last-two-digits group (l2 0..99; negative l2 repeats an exclusion
// already counted through f3).
func addGroup(c *Counts, f3, l2 sql.NullInt64, n int64, sum sql.NullFloat64, scale float64) error {
	switch {
	case f3.Valid && f3.Int64 >= 100 && f3.Int64 <= 999:
		c.FirstThree[f3.Int64-100] += n
		if sum.Valid {
			c.FirstThreeSum[f3.Int64-100] += sum.Float64 / scale
		}
	case f3.Valid:
		switch f3.Int64 {
		case -1:
			c.Left.Zero += n
		case -3:
			c.Left.BelowMin += n
		default:
			return fmt.Errorf("the battery's scan returned first-three digits %d: an internal error, please report it", f3.Int64)
		}
	case l2.Valid && l2.Int64 >= 0 && l2.Int64 <= 99:
		c.LastTwo[l2.Int64] += n
	case l2.Valid && l2.Int64 < 0:
		// rows left out, already counted in the first-three set
	default:
		return fmt.Errorf("the battery's scan returned a group with neither digits nor a reason: an internal error, please report it")
	}
	return nil
}

// addPacked adds a segment's groups as battery_scan_segments packs them:
// "f<digits> <count> <sum>" and "l<digits> <count> <sum>", comma-separated.
func addPacked(c *Counts, packed string, scale float64) error {
	bad := func(part string) error {
		return fmt.Errorf("the battery's scan returned the group %q: an internal error, please report it", part)
	}
	for more := packed != ""; more; {
		var part string
		part, packed, more = strings.Cut(packed, ",")
		if part == "" {
			return bad(part)
		}
		kind, rest := part[0], part[1:]
		i := strings.IndexByte(rest, ' ')
		if i < 0 {
			return bad(part)
		}
		j := strings.IndexByte(rest[i+1:], ' ')
		if j < 0 {
			return bad(part)
		}
		digits, err1 := strconv.ParseInt(rest[:i], 10, 64)
		n, err2 := strconv.ParseInt(rest[i+1:i+1+j], 10, 64)
		sum, err3 := strconv.ParseFloat(rest[i+2+j:], 64)
		if err1 != nil || err2 != nil || err3 != nil {
			return bad(part)
		}
		g := sql.NullInt64{Int64: digits, Valid: true}
		var err error
		switch kind {
		case 'f':
			err = addGroup(c, g, sql.NullInt64{}, n, sql.NullFloat64{Float64: sum, Valid: true}, scale)
		case 'l':
			err = addGroup(c, sql.NullInt64{}, g, n, sql.NullFloat64{Float64: sum, Valid: true}, scale)
		default:
			return bad(part)
		}
		if err != nil {
			return err
		}
	}
	return nil
}
