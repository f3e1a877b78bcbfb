package pack

import (
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/output"
)

// tableNames reports two parts of the pack that would write the same
// result table (tables/NAME.csv): names are lower-cased and every run of
// characters other than letters, digits and _ becomes _, so "a-b" and
// "a_b", or the segmentation "entity+user_id" and a column
// "entity_user_id", meet. A run would find this only when writing, after
// every step had run.
func (c *checker) tableNames(pl *Plan) {
	type origin struct{ key, what string }
	seen := map[string]origin{}
	claim := func(table, key, what string) {
		table = output.SafeName(table)
		if prev, ok := seen[table]; ok {
			if strings.EqualFold(prev.what, what) {
				return // the same name given twice: reported where it is read
			}
			c.errf(key, "%s writes the result table %s, as %s (%s) does: give one of them another name", what, table, prev.what, displayKey(prev.key))
			return
		}
		seen[table] = origin{key, what}
	}
	if pl.Battery != nil && c.p.Battery != nil {
		for i, seg := range c.p.Battery.Segments {
			var cols []string
			for _, part := range strings.Split(seg, "+") {
				if p := strings.TrimSpace(part); p != "" {
					cols = append(cols, p)
				}
			}
			if len(cols) == 0 {
				continue
			}
			claim("segments_"+strings.Join(cols, "_"), fmt.Sprintf("battery.segments[%d]", i), fmt.Sprintf("segmentation %q", seg))
		}
	}
	for i, e := range c.p.Extracts {
		key := fmt.Sprintf("extract[%d]", i)
		claim("extract_"+e.Name, key+".name", fmt.Sprintf("extract %q", e.Name))
		if e.GroupBy != "" {
			claim("extract_"+e.Name+"_by_"+e.GroupBy, key+".group_by", fmt.Sprintf("extract %q grouped by %s", e.Name, e.GroupBy))
		}
	}
	for i, ch := range c.p.Checks {
		claim("check_"+ch.Name, fmt.Sprintf("check[%d].name", i), fmt.Sprintf("check %q", ch.Name))
	}
}
