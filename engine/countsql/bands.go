package countsql

import (
	"fmt"
	"math"
	"math/big"
	"sort"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/queries"
)

// Tests whose bands a query counts (Spec.Test); "" is the digit battery.
const (
	TestLimits = "limits"
	TestRanges = "ranges"
)

// Grid is where a band query cuts the tested amounts, in units: a row's
// bin is the number of thresholds at or below its |units|. Either the
// thresholds are listed (ascending, distinct), or they are the linear
// grid From + i*Step, i = 0, 1, ... (Step > 0).
type Grid struct {
	Thresholds []int64 `json:"thresholds,omitempty"`
	From       int64   `json:"from,omitempty"`
	Step       int64   `json:"step,omitempty"`
}

// lower is the smallest |units| of bin b (b >= 1): its threshold T(b-1).
func (g *Grid) lower(b int64) int64 {
	if g.Step > 0 {
		return g.From + (b-1)*g.Step
	}
	return g.Thresholds[b-1]
}

// valid says whether bin b can come out of the query.
func (g *Grid) valid(b int64) bool {
	if b < 0 {
		return false
	}
	if g.Step > 0 {
		return b <= (math.MaxInt64-g.From)/g.Step+1
	}
	return b <= int64(len(g.Thresholds))
}

// has says whether u is one of the thresholds.
func (g *Grid) has(u int64) bool {
	if g.Step > 0 {
		return u >= g.From && (u-g.From)%g.Step == 0
	}
	i := sort.Search(len(g.Thresholds), func(i int) bool { return g.Thresholds[i] >= u })
	return i < len(g.Thresholds) && g.Thresholds[i] == u
}

// amountFloat is |units| as the local scan compares it with a band edge:
// DuckDB's CAST of the DECIMAL to DOUBLE, the integer converted to a
// double and divided by 10^scale.
func amountFloat(u int64, scale int) float64 { return float64(u) / math.Pow10(scale) }

// unitsAtLeast is the smallest |units| whose amount, as the local scan
// compares it (amountFloat), is at or above the edge e: the threshold that
// splits integers exactly as the edge splits the local scan's doubles. It
// is MaxInt64 for an edge beyond every amount.
func unitsAtLeast(e float64, scale int) int64 {
	if !(e > 0) {
		return 0
	}
	r := new(big.Rat).SetFloat64(e)
	r.Mul(r, new(big.Rat).SetInt(pow10(scale)))
	q, m := new(big.Int).DivMod(r.Num(), r.Denom(), new(big.Int))
	if m.Sign() != 0 {
		q.Add(q, big.NewInt(1))
	}
	if !q.IsInt64() {
		return math.MaxInt64
	}
	u := q.Int64()
	// ceil(e * 10^scale) is at or above e once converted; a smaller
	// integer may round up onto e.
	for u > 0 && amountFloat(u-1, scale) >= e {
		u--
	}
	for u < math.MaxInt64 && amountFloat(u, scale) < e {
		u++
	}
	return u
}

// rawMinUnits is the local populations' minimum in units, ceil(min *
// 10^scale), 0 allowed (with both signs and --min 0, zero is tested).
func (s Spec) rawMinUnits() int64 {
	u, err := s.MinUnits()
	if err != nil {
		return 0
	}
	if r, ok := new(big.Rat).SetString(strings.TrimSpace(s.Min)); ok && r.Sign() == 0 {
		return 0
	}
	return u
}

// checkTest validates the options of the test counted.
func (s Spec) checkTest() error {
	switch s.Test {
	case "":
		if s.Limits != nil || s.Width != 0 || s.Layout != nil || s.Grid != nil {
			return fmt.Errorf("--limits, --width, --per-decade, --from and --to count bands: give --test limits or --test ranges")
		}
	case TestLimits:
		if s.Layout != nil {
			return fmt.Errorf("--per-decade, --from and --to lay out range bands: give --test ranges")
		}
		if err := limits.CheckWidth(s.Width); err != nil {
			return err
		}
		for _, t := range s.Limits {
			if err := benford.CheckLimit(t, s.Width); err != nil {
				return fmt.Errorf("--limits: %w", err)
			}
		}
	case TestRanges:
		if s.Limits != nil {
			return fmt.Errorf("--limits: limits are probed with --test limits")
		}
		if len(s.By) > 0 {
			return fmt.Errorf("--by: leadline ranges bands the whole selection; count segments apart with --where")
		}
		if s.Layout == nil {
			return fmt.Errorf("ranges: no layout")
		}
		if err := s.Layout.Check(); err != nil {
			return err
		}
	default:
		return fmt.Errorf("--test %q: give battery, limits or ranges", s.Test)
	}
	return nil
}

// bandDefaults fills the test's defaults (those of leadline limits and
// leadline ranges).
func (s Spec) bandDefaults() Spec {
	s.Test = strings.ToLower(strings.TrimSpace(s.Test))
	if s.Test == "battery" {
		s.Test = ""
	}
	switch s.Test {
	case TestLimits:
		if s.Width == 0 {
			s.Width = limits.DefaultWidth
		}
		if s.Limits != nil {
			s.Limits = ranges.SortedEdges(s.Limits)
		}
	case TestRanges:
		if s.Layout == nil {
			s.Layout = &ranges.Layout{Width: s.Width}
			s.Width = 0
		}
		if s.Layout.Width == 0 && s.Layout.PerDecade == 0 {
			s.Layout.PerDecade = ranges.DefaultPerDecade
		}
	}
	return s
}

// grid works out the thresholds the band query counts between: every band
// edge a local run of the test could use on amounts of this population,
// whatever their range turns out to be (the round limits and the
// logarithmic grid are fixed; only which of them a run uses depends on
// the amounts).
func (s Spec) grid() (*Grid, error) {
	lo := amountFloat(max(s.rawMinUnits(), 1), s.Scale) // the smallest amount tested, but zero
	hi := amountFloat(math.MaxInt64, s.Scale)
	var edges []float64
	switch s.Test {
	case TestLimits:
		ls := s.Limits
		if ls == nil {
			ls = benford.RoundLimits(lo/(1-s.Width), hi/(1+s.Width))
		}
		edges = limits.Edges(ls, s.Width)
	case TestRanges:
		l := *s.Layout
		if l.Width > 0 {
			from, ok1 := exactUnits(l.From, s.Scale)
			step, ok2 := exactUnits(l.Width, s.Scale)
			if !ok1 || !ok2 || step <= 0 {
				return nil, fmt.Errorf("--width %v --from %v: fixed-width bands are counted in whole units; give amounts with at most %d decimals (--scale)", l.Width, l.From, s.Scale)
			}
			return &Grid{From: from, Step: step}, nil
		}
		from, to := l.From, l.To
		if from == 0 {
			from = lo
		}
		if to == 0 {
			to = hi
		}
		if !(to > from) {
			to = from * 10
		}
		bands := benford.LogBands(from, to, l.PerDecade)
		if bands == nil {
			return nil, fmt.Errorf("--per-decade %d from %v to %v: too many bands to count (at most %d); give --from and --to, or fewer bands to a decade", l.PerDecade, from, to, ranges.MaxBands)
		}
		edges = ranges.Edges(bands)
	}
	var t []int64
	for _, e := range edges {
		t = append(t, unitsAtLeast(e, s.Scale))
	}
	sort.Slice(t, func(i, j int) bool { return t[i] < t[j] })
	out := t[:0]
	for i, u := range t {
		if i == 0 || u != out[len(out)-1] {
			out = append(out, u)
		}
	}
	return &Grid{Thresholds: out}, nil
}

// exactUnits is v * 10^scale when that is a whole number (v read as the
// shortest decimal that gives it).
func exactUnits(v float64, scale int) (int64, bool) {
	r, ok := new(big.Rat).SetString(strconv.FormatFloat(v, 'f', -1, 64))
	if !ok {
		return 0, false
	}
	r.Mul(r, new(big.Rat).SetInt(pow10(scale)))
	if !r.IsInt() || !r.Num().IsInt64() {
		return 0, false
	}
	return r.Num().Int64(), true
}

// bandSQL is the bin of a (|units|, a 64-bit integer): the number of
// thresholds at or below it, by integer division on a linear grid, else
// by a balanced tree of comparisons.
func (g *Grid) bandSQL(d *dialect, a string) string {
	if g.Step > 0 {
		return d.int64(fmt.Sprintf("CASE WHEN %[1]s < %[2]d THEN 0 ELSE %[3]s + 1 END", a, g.From, d.div("("+a+" - "+strconv.FormatInt(g.From, 10)+")", strconv.FormatInt(g.Step, 10))))
	}
	var tree func(i, j int) string // the count is in i..j
	tree = func(i, j int) string {
		if i == j {
			return d.int64(strconv.Itoa(i))
		}
		mid := (i + j) / 2
		return fmt.Sprintf("CASE WHEN %s < %d THEN %s ELSE %s END", a, g.Thresholds[mid], tree(i, mid), tree(mid+1, j))
	}
	return tree(0, len(g.Thresholds))
}

// testedSQL is true for the rows the local population tests: the sign
// kept and |units| at or above the minimum (u and a as in the query).
func (s Spec) testedSQL(u, a string) string {
	m := s.rawMinUnits()
	switch s.Signs {
	case "positive":
		return fmt.Sprintf("%s > 0 AND %s >= %d", u, a, m)
	case "negative":
		return fmt.Sprintf("%s < 0 AND %s >= %d", u, a, m)
	}
	return fmt.Sprintf("%s >= %d", a, m)
}

// bandQuery is the band-counting query of a limits or ranges spec.
func bandQuery(s Spec) (string, error) {
	d := dialects[s.Engine]
	g, err := s.grid()
	if err != nil {
		return "", err
	}
	s.Grid = g
	f := s.frame(d)
	q := queries.Render("countsql_"+s.Engine+"_bands", map[string]string{
		"by_names": f.names, "by_select": f.sel, "table": f.table, "filter": f.filter,
		"units": d.units(d.quote(s.Amount), s.Scale), "tested": s.testedSQL("u", "a"), "band": g.bandSQL(d, "a"),
		"other_sign": map[string]string{"positive": "u < 0", "negative": "u > 0", "both": "1 = 0"}[s.Signs],
	})
	return withSpec(s, q)
}
