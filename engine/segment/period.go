package segment

import (
	"fmt"
	"strings"
)

// period is a segment of the posted date: its name and a format turning a
// date (or timestamp) x into its label. The calendar's own quarters:
// January to March is Q1.
type period struct{ name, format string }

var periods = []period{
	{"year", "strftime(%[1]s, '%%Y')"},
	{"quarter", "strftime(%[1]s, '%%Y') || '-Q' || CAST(quarter(%[1]s) AS VARCHAR)"},
	{"month", "strftime(%[1]s, '%%Y-%%m')"},
}

func datePart(name string) (period, bool) {
	for _, p := range periods {
		if strings.EqualFold(p.name, name) {
			return p, true
		}
	}
	return period{}, false
}

// PeriodOfPosted returns SQL for the label of a period of the posted date
// (year 2025, quarter 2025-Q1, month 2025-01) when name is one, for the
// drill-down's --segment and --group; ok is false for any other name.
func PeriodOfPosted(name string) (sql, label string, ok bool) {
	p, ok := datePart(name)
	if !ok {
		return "", "", false
	}
	return fmt.Sprintf(p.format, "posted"), p.name, true
}
