package journal

import (
	"fmt"
	"regexp"
	"strconv"
	"strings"
	"time"
)

// Period is the span the extract declares it covers, both days included.
type Period struct {
	From time.Time `json:"from"`
	To   time.Time `json:"to"`
}

// String writes the period as FROM..TO (ISO dates), the form ParsePeriod
// reads first.
func (p Period) String() string {
	return p.From.Format("2006-01-02") + ".." + p.To.Format("2006-01-02")
}

// MarshalText writes String.
func (p Period) MarshalText() ([]byte, error) { return []byte(p.String()), nil }

var (
	isoRange   = regexp.MustCompile(`^(\d{4}-\d{2}-\d{2})\s*(?:\.\.|to)\s*(\d{4}-\d{2}-\d{2})$`)
	yearOnly   = regexp.MustCompile(`^(\d{4})$`)
	wordsRange = regexp.MustCompile(`(?i)^(\d{1,2})\s+([a-z]+)(?:\s+(\d{4}))?\s+(?:to|-|–|until)\s+(\d{1,2})\s+([a-z]+)\s+(\d{4})$`)
)

// ParsePeriod reads a period: 2025-01-01..2025-12-31 (or "to" between the
// dates), a calendar year (2025), or days written out in English ("1
// January to 31 December 2025", "1 July 2024 to 30 June 2025"). Anything
// else is an error that shows the forms understood.
func ParsePeriod(s string) (Period, error) {
	t := strings.TrimSpace(s)
	bad := func(why string) (Period, error) {
		return Period{}, fmt.Errorf("period %q: %s; write it as 2025-01-01..2025-12-31, a calendar year such as 2025, or \"1 January to 31 December 2025\"", s, why)
	}
	if m := isoRange.FindStringSubmatch(t); m != nil {
		from, err1 := time.Parse("2006-01-02", m[1])
		to, err2 := time.Parse("2006-01-02", m[2])
		if err1 != nil || err2 != nil {
			return bad("not a valid date")
		}
		return check(Period{from, to}, bad)
	}
	if m := yearOnly.FindStringSubmatch(t); m != nil {
		y, _ := strconv.Atoi(m[1])
		return Period{time.Date(y, 1, 1, 0, 0, 0, 0, time.UTC), time.Date(y, 12, 31, 0, 0, 0, 0, time.UTC)}, nil
	}
	if m := wordsRange.FindStringSubmatch(t); m != nil {
		year1 := m[3]
		if year1 == "" {
			year1 = m[6]
		}
		from, ok1 := day(m[1], m[2], year1)
		to, ok2 := day(m[4], m[5], m[6])
		if !ok1 || !ok2 {
			return bad("not a valid date")
		}
		if m[3] == "" && from.After(to) {
			// "1 July to 30 June 2025" spans the turn of the year.
			from = from.AddDate(-1, 0, 0)
		}
		return check(Period{from, to}, bad)
	}
	if t == "" {
		return bad("empty")
	}
	return bad("not a period leadline can read")
}

func check(p Period, bad func(string) (Period, error)) (Period, error) {
	if p.To.Before(p.From) {
		return bad("it ends before it starts")
	}
	return p, nil
}

var months = map[string]time.Month{
	"january": 1, "february": 2, "march": 3, "april": 4, "may": 5, "june": 6, "july": 7,
	"august": 8, "september": 9, "october": 10, "november": 11, "december": 12,
	"jan": 1, "feb": 2, "mar": 3, "apr": 4, "jun": 6, "jul": 7, "aug": 8, "sep": 9, "sept": 9, "oct": 10, "nov": 11, "dec": 12,
}

func day(d, month, year string) (time.Time, bool) {
	m, ok := months[strings.ToLower(month)]
	if !ok {
		return time.Time{}, false
	}
	dd, _ := strconv.Atoi(d)
	y, _ := strconv.Atoi(year)
	t := time.Date(y, m, dd, 0, 0, 0, 0, time.UTC)
	if t.Day() != dd || t.Month() != m {
		return time.Time{}, false // 31 June
	}
	return t, true
}
