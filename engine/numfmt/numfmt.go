// Package numfmt owns how leadline writes the numbers it shows people:
// the terminal, the HTML report and the findings and notes of a pack run
// (the workbook's summary sheet) all write through it. Counts with
// thousands separators (1,234,567), money with separators and two
// decimals (1,234.50), statistics to four significant figures (Stat,
// P: 0.04123, 4,294, 2.500e-07) and underflowed p-values as "< 1e-300".
package numfmt

import (
	"strconv"
	"strings"
)

// Int writes n with thousands separators: 1234567 -> "1,234,567",
// -1234 -> "-1,234".
func Int(n int64) string { return Group(strconv.FormatInt(n, 10)) }

// Group puts commas between groups of three digits of the integer part of
// a plain decimal number ("-1234567.89" -> "-1,234,567.89"); a leading
// sign and the decimals are kept as they are, and any other text (an
// exponent, "n/a", text already grouped) is returned unchanged.
func Group(s string) string {
	start := 0
	if strings.HasPrefix(s, "-") || strings.HasPrefix(s, "+") {
		start = 1
	}
	end := len(s)
	if i := strings.IndexByte(s, '.'); i >= 0 {
		end = i
	}
	intPart := s[start:end]
	if len(intPart) <= 3 {
		return s
	}
	for _, r := range intPart {
		if r < '0' || r > '9' {
			return s
		}
	}
	var b strings.Builder
	b.Grow(len(s) + len(intPart)/3)
	b.WriteString(s[:start])
	for i, r := range intPart {
		if i > 0 && (len(intPart)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(r)
	}
	b.WriteString(s[end:])
	return b.String()
}
