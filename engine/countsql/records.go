package countsql

import (
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/queries"
)

// RecordsQuery is the drill-down on counts made elsewhere: the engine's
// query, on one line, that lists the records of the band [from, to)
// within the spec's population, narrowed to the segment named by names
// (segment names of the query) and key (their values; blank is NULL).
// The band's ends are the thresholds in units the counts were cut at
// (unitsAtLeast), so that it lists exactly the records counted in the band,
// even for amounts of more than 15 significant digits, whose doubles the
// local edges compare.
func RecordsQuery(s Spec, from, to float64, names []string, key segment.Key) (string, error) {
	if !(from < to) {
		return "", fmt.Errorf("band [%v, %v): give from < to", from, to)
	}
	lo, hi := unitsAtLeast(from, s.Scale), unitsAtLeast(to, s.Scale)
	a := "abs(ll_units)"
	return s.records(names, key, fmt.Sprintf("%s >= %d", a, lo), fmt.Sprintf("%s < %d", a, hi))
}

// BinRecordsQuery is the drill-down of a digit bin (or a stretch of
// adjacent bins, from..to) of the battery on counts made elsewhere: the
// engine's query, on one line, that lists the records the counts put in
// the bins of test t, within the spec's population and the segment named
// by names and key. It reads the digits with the counting query's own
// rule (the first three significant digits of |units| by comparisons with
// powers of ten; the last two digits of the units, or of the whole
// currency units, from the last-two minimum on), so it lists exactly the
// records counted there.
func BinRecordsQuery(s Spec, t benford.Test, from, to int, names []string, key segment.Key) (string, error) {
	d := dialects[s.Engine]
	if d == nil {
		return "", fmt.Errorf("engine %q: not one of %s", s.Engine, strings.Join(Engines, ", "))
	}
	lo, hi := t.Bins()
	if from < lo || to > hi || from > to {
		return "", fmt.Errorf("%s bins %d to %d: the test's bins run from %d to %d", t.Name(), from, to, lo, hi)
	}
	a := "abs(ll_units)"
	code := d.first3(a)
	// Zero has no digits: the counts put it apart (code -1), whatever
	// the minimum.
	cond := []string{"ll_units <> 0"}
	switch t {
	case benford.FirstDigit:
		cond = append(cond, fmt.Sprintf("%s BETWEEN %d AND %d", code, 100*from, 100*to+99))
	case benford.SecondDigit:
		cond = append(cond, fmt.Sprintf("(%s) %% 10 BETWEEN %d AND %d", d.div(code, "10"), from, to))
	case benford.FirstTwo, benford.Summation:
		cond = append(cond, fmt.Sprintf("%s BETWEEN %d AND %d", code, 10*from, 10*to+9))
	case benford.FirstThree:
		cond = append(cond, fmt.Sprintf("%s BETWEEN %d AND %d", code, from, to))
	case benford.LastTwo:
		cond = append(cond, fmt.Sprintf("%s BETWEEN %d AND %d", s.lastTwoSQL(d, a), from, to), fmt.Sprintf("%s >= %s", a, s.lastTwoMinUnits().String()))
	default:
		return "", fmt.Errorf("%s: needs the records, not counts", t.Name())
	}
	return s.records(names, key, cond...)
}

// records renders the engine's records query: the spec's tested rule, the
// conditions cond on ll_units (the amount in units) and the segment named
// by names and key (their values; blank is NULL).
func (s Spec) records(names []string, key segment.Key, cond ...string) (string, error) {
	d := dialects[s.Engine]
	if d == nil {
		return "", fmt.Errorf("engine %q: not one of %s", s.Engine, strings.Join(Engines, ", "))
	}
	a := "abs(ll_units)"
	where := append([]string{"(" + s.testedSQL("ll_units", a) + ")"}, cond...)
	if len(key) == 0 {
		names = nil // the whole selection
	}
	for i, n := range names {
		var seg *Segment
		for j := range s.By {
			if strings.EqualFold(s.By[j].Name, n) {
				seg = &s.By[j]
			}
		}
		if seg == nil || i >= len(key) {
			return "", fmt.Errorf("segment %s: not a segment of the query", n)
		}
		v := d.segment(*seg)
		if key[i].Valid {
			where = append(where, v+" = "+d.lit(key[i].String))
		} else {
			where = append(where, v+" IS NULL")
		}
	}
	f := s.frame(d)
	return queries.Render("countsql_"+s.Engine+"_records", map[string]string{
		"units": d.units(d.quote(s.Amount), s.Scale), "table": f.table, "filter": f.filter,
		"where": strings.Join(where, " AND "),
	}), nil
}
