package countsql

import (
	"fmt"
	"strings"

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
	d := dialects[s.Engine]
	if d == nil {
		return "", fmt.Errorf("engine %q: not one of %s", s.Engine, strings.Join(Engines, ", "))
	}
	if !(from < to) {
		return "", fmt.Errorf("band [%v, %v): give from < to", from, to)
	}
	lo, hi := unitsAtLeast(from, s.Scale), unitsAtLeast(to, s.Scale)
	a := "abs(ll_units)"
	where := []string{"(" + s.testedSQL("ll_units", a) + ")", fmt.Sprintf("%s >= %d", a, lo), fmt.Sprintf("%s < %d", a, hi)}
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
