package report

import (
	"fmt"
	"html"
	"html/template"
	"math"
	"regexp"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/numfmt"
)

// Number formats of the report. Each is a name the templates pass to
// numHTML; the text shown always carries enough digits that a reader (and
// the tests) can tell it from its neighbours.
//
//	int     whole number with thousands separators: 1,234,567
//	pct:N   a proportion as a percentage with N decimals: 4.52%
//	pct:~   a proportion as a percentage, as few decimals as needed: 0.5%
//	f:N     N decimals: 0.00123 (expected counts, amounts in text)
//	sf      a statistic: four significant figures, plain or exponent
//	        (numfmt.Stat, as the terminal writes it): 12.35, 3.142e-05
//	p       a p-value: four significant figures (numfmt.P); a p-value
//	        that underflowed to 0 as "< 1e-300", as the terminal and the
//	        workbook write it
//	money   an amount with thousands separators and at least two decimals
//	        (an exact decimal string keeps every decimal it has)
//	id      an identifier (run, file, row, line): digits only, no separators
//	text    any string, unchanged
func formatValue(v any, kind string) string {
	switch x := v.(type) {
	case string:
		if kind == "money" {
			return typoMinus(numfmt.Money(x))
		}
		return x
	case int:
		return formatValue(int64(x), kind)
	case int64:
		if kind == "id" {
			return strconv.FormatInt(x, 10)
		}
		if kind == "money" {
			return typoMinus(numfmt.Group(strconv.FormatInt(x, 10) + ".00"))
		}
		if kind == "int" || kind == "" {
			return typoMinus(numfmt.Group(strconv.FormatInt(x, 10)))
		}
		return formatFloat(float64(x), kind)
	case float64:
		return formatFloat(x, kind)
	case nil:
		return ""
	}
	return fmt.Sprint(v)
}

func formatFloat(x float64, kind string) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "n/a"
	}
	name, arg, _ := strings.Cut(kind, ":")
	dec, _ := strconv.Atoi(arg)
	var s string
	switch name {
	case "id":
		s = strconv.FormatFloat(x, 'f', -1, 64)
	case "money":
		s = numfmt.MoneyFloat(x)
	case "int":
		s = numfmt.Group(strconv.FormatFloat(math.Round(x), 'f', 0, 64))
	case "pct":
		if arg == "~" { // as few decimals as the value needs, up to four
			s = numfmt.Group(trimZeros(strconv.FormatFloat(x*100, 'f', 4, 64))) + "%"
			break
		}
		s = numfmt.Group(strconv.FormatFloat(x*100, 'f', dec, 64)) + "%"
	case "f":
		s = numfmt.Group(strconv.FormatFloat(x, 'f', dec, 64))
	case "p":
		s = numfmt.P(x)
	default: // sf
		s = numfmt.Stat(x)
	}
	return typoMinus(s)
}

// PUnderflow is how a p-value that underflowed to 0 is written.
const PUnderflow = numfmt.PUnderflow

var plainDecimal = regexp.MustCompile(`^-?[0-9]+(\.[0-9]*)?$`)

// dateText writes a timestamp as the JSON documents store it
// ("2025-01-02T00:00:00Z") as a date, or a date and time when it has one
// ("2025-01-02 13:04:05 UTC"); other text is returned unchanged.
func dateText(s string) string {
	if len(s) < 20 || s[4] != '-' || s[10] != 'T' {
		return s
	}
	t, err := time.Parse(time.RFC3339Nano, s)
	if err != nil {
		return s
	}
	t = t.UTC()
	if t.Hour() == 0 && t.Minute() == 0 && t.Second() == 0 && t.Nanosecond() == 0 {
		return t.Format("2006-01-02")
	}
	return t.Format("2006-01-02 15:04:05") + " UTC"
}

// typoMinus writes a leading minus sign as the typographic minus (U+2212).
func typoMinus(s string) string {
	if strings.HasPrefix(s, "-") {
		return "−" + s[1:]
	}
	return s
}

// rawValue is the exact stored form written into data-value.
func rawValue(v any) string {
	switch x := v.(type) {
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case int64:
		return strconv.FormatInt(x, 10)
	case int:
		return strconv.Itoa(x)
	case string:
		return x
	}
	return fmt.Sprint(v)
}

// numHTML marks up one number of the report: field is its readable name,
// src where it comes from (see the package doc), kind its format.
func numHTML(field, src string, v any, kind string) template.HTML {
	cls := "num"
	if f, ok := v.(float64); ok && f < 0 || strings.HasPrefix(rawValue(v), "-") {
		cls += " neg"
	}
	return template.HTML(fmt.Sprintf(`<span class="%s" data-field="%s" data-src="%s" data-value="%s">%s</span>`,
		cls, html.EscapeString(field), html.EscapeString(src), html.EscapeString(rawValue(v)), html.EscapeString(formatValue(v, kind))))
}

// escapePointer escapes one JSON-pointer reference token (RFC 6901).
func escapePointer(tok string) string {
	return strings.ReplaceAll(strings.ReplaceAll(tok, "~", "~0"), "/", "~1")
}
