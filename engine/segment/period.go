package segment

import (
	"fmt"
	"regexp"
	"strings"
)

// period is a segment of the posted date: its name, a format turning a
// date (or timestamp) x into its label, and the labels' shape. The
// calendar's own quarters: January to March is Q1.
type period struct {
	name, format string
	label        *regexp.Regexp
	example      string
}

var periods = []period{
	{"year", "strftime(%[1]s, '%%Y')", regexp.MustCompile(`^[0-9]{4}$`), "YYYY, e.g. 2025"},
	{"quarter", "strftime(%[1]s, '%%Y') || '-Q' || CAST(quarter(%[1]s) AS VARCHAR)", regexp.MustCompile(`^[0-9]{4}-Q[1-4]$`), "YYYY-Qn with n from 1 to 4, e.g. 2025-Q1"},
	{"month", "strftime(%[1]s, '%%Y-%%m')", regexp.MustCompile(`^[0-9]{4}-(0[1-9]|1[0-2])$`), "YYYY-MM, e.g. 2025-01"},
}

func datePart(name string) (period, bool) {
	for _, p := range periods {
		if strings.EqualFold(p.name, name) {
			return p, true
		}
	}
	return period{}, false
}

// CheckPeriod checks a label of a period of the posted date (quarter
// 2025-Q1), so that a mistyped one is named instead of matching nothing.
func CheckPeriod(name, value string) error {
	p, ok := datePart(name)
	if !ok || p.label.MatchString(value) {
		return nil
	}
	return fmt.Errorf("%s %q: write %s", p.name, value, p.example)
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
