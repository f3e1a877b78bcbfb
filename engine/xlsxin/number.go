package xlsxin

import (
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"
	"time"
)

// dateKind is what a cell format makes of a number.
type dateKind uint8

const (
	plainNumber dateKind = iota
	dateOnly             // the format shows a day, month or year
	timeOnly             // the format shows hours, minutes or seconds only
)

// kindOfBuiltin classifies the built-in number formats: 14-22 and 45-47
// are the dates and times of ECMA-376 Part 1, 18.8.30; 27-36 and 50-58 are
// the East Asian date formats, 71-81 the Thai ones (from memory of the
// same table's locale notes).
func kindOfBuiltin(id int) dateKind {
	switch {
	case id >= 14 && id <= 17, id == 22, id >= 27 && id <= 31, id >= 34 && id <= 36, id >= 50 && id <= 58, id >= 71 && id <= 76, id >= 78 && id <= 81:
		return dateOnly
	case id >= 18 && id <= 21, id >= 32 && id <= 33, id >= 45 && id <= 47, id == 77:
		return timeOnly
	}
	return plainNumber
}

// kindOfCode classifies a custom format code by its date and time letters
// outside quoted text, escapes and [bracketed] parts (colours, locales,
// conditions; an elapsed-time [h] counts as time). Only the first section
// (positive numbers) counts.
func kindOfCode(code string) dateKind {
	date, tm := false, false
	for i := 0; i < len(code); i++ {
		c := code[i]
		switch c {
		case ';':
			i = len(code)
			continue
		case '"':
			for i++; i < len(code) && code[i] != '"'; i++ {
			}
			continue
		case '\\', '_', '*':
			i++
			continue
		case '[':
			j := strings.IndexByte(code[i:], ']')
			if j < 0 {
				i = len(code)
				continue
			}
			inner := strings.ToLower(code[i+1 : i+j])
			if inner != "" && strings.Trim(inner, "hms") == "" {
				tm = true
			}
			i += j
			continue
		}
		switch c | 0x20 {
		case 'y', 'd':
			date = true
		case 'h', 's':
			tm = true
		case 'm':
			// m is a month beside days and years, a minute beside hours
			// and seconds; either way the format shows a date or time.
			date = true
		}
	}
	// "m" alone beside h or s is minutes: a time format.
	if tm && date && !strings.ContainsAny(strings.ToLower(stripQuoted(code)), "yd") {
		return timeOnly
	}
	switch {
	case date:
		return dateOnly
	case tm:
		return timeOnly
	}
	return plainNumber
}

func stripQuoted(code string) string {
	var b strings.Builder
	in := false
	for i := 0; i < len(code); i++ {
		switch {
		case code[i] == ';' && !in:
			return b.String()
		case code[i] == '"':
			in = !in
		case code[i] == '[' && !in:
			if j := strings.IndexByte(code[i:], ']'); j >= 0 {
				i += j
			}
		case !in:
			b.WriteByte(code[i])
		}
	}
	return b.String()
}

// shownDigits is how many significant digits a spreadsheet shows of a
// number: Excel stores a cell as an IEEE double and writes it to the file
// with up to 17 significant digits (enough to give back the same double),
// but computes, shows and exports no more than 15, the digits a double
// always holds exactly (DBL_DIG). 0.1+0.2 is stored as
// 0.30000000000000004 and shown as 0.3; the 16th and 17th digits are the
// binary representation's noise, not the client's amount.
const shownDigits = 15

// Number turns a number cell's text as stored (such as 1234.5600000000001,
// 1E-7, -0.1) into the decimal text the spreadsheet shows: the double the
// text stands for, rounded to 15 significant digits (strconv rounds the
// double's exact binary value correctly), trailing zeros dropped, never an
// exponent. One cell's value is converted; nothing is summed in floating
// point. ok is false for text that is not a number.
func Number(stored string) (string, bool) {
	if _, _, _, ok := parseDecimal(stored); !ok {
		return "", false
	}
	f, err := strconv.ParseFloat(strings.TrimSpace(stored), 64)
	if err != nil || math.IsInf(f, 0) {
		return "", false
	}
	neg, digits, exp, _ := parseDecimal(strconv.FormatFloat(f, 'e', shownDigits-1, 64))
	if digits == "" {
		return "0", true
	}
	var b strings.Builder
	if neg {
		b.WriteByte('-')
	}
	switch {
	case exp <= 0:
		b.WriteString("0.")
		b.WriteString(strings.Repeat("0", -exp))
		b.WriteString(digits)
	case exp >= len(digits):
		b.WriteString(digits)
		b.WriteString(strings.Repeat("0", exp-len(digits)))
	default:
		b.WriteString(digits[:exp])
		b.WriteByte('.')
		b.WriteString(digits[exp:])
	}
	return b.String(), true
}

// parseDecimal reads [sign]digits[.digits][e[sign]digits] into its sign,
// the significant digits (no leading or trailing zeros) and the exponent
// e such that the value is 0.digits × 10^e.
func parseDecimal(s string) (neg bool, digits string, exp int, ok bool) {
	s = strings.TrimSpace(s)
	if s == "" {
		return false, "", 0, false
	}
	if s[0] == '-' || s[0] == '+' {
		neg = s[0] == '-'
		s = s[1:]
	}
	mant, e, hasExp := strings.Cut(strings.ToLower(s), "e")
	intPart, frac, _ := strings.Cut(mant, ".")
	if intPart == "" && frac == "" || !allDigits(intPart) || !allDigits(frac) {
		return false, "", 0, false
	}
	x := 0
	if hasExp {
		v, err := parseExp(e)
		if err != nil {
			return false, "", 0, false
		}
		x = v
	}
	all := intPart + frac
	lead := len(all) - len(strings.TrimLeft(all, "0"))
	all = strings.TrimLeft(all, "0")
	digits = strings.TrimRight(all, "0")
	if digits == "" {
		return false, "", 0, true
	}
	exp = len(intPart) - lead + x
	return neg, digits, exp, true
}

func parseExp(e string) (int, error) {
	sign := 1
	if e != "" && (e[0] == '+' || e[0] == '-') {
		if e[0] == '-' {
			sign = -1
		}
		e = e[1:]
	}
	if e == "" || !allDigits(e) || len(e) > 4 {
		return 0, fmt.Errorf("bad exponent")
	}
	v := 0
	for _, c := range e {
		v = v*10 + int(c-'0')
	}
	return sign * v, nil
}

func allDigits(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return true
}

// Excel's day zero: the 1900 system counts from 1899-12-31 (serial 1 is
// 1900-01-01) and, for compatibility with an older spreadsheet program,
// holds a 29 February 1900 that never was (serial 60), so that from
// serial 61 (1900-03-01) on, the count runs from 1899-12-30. The 1904
// system counts from 1904-01-01 (serial 0).
var (
	epoch1900     = time.Date(1899, 12, 31, 0, 0, 0, 0, time.UTC)
	epoch1900Late = time.Date(1899, 12, 30, 0, 0, 0, 0, time.UTC)
	epoch1904     = time.Date(1904, 1, 1, 0, 0, 0, 0, time.UTC)
)

// Serial turns a date cell's stored number into an ISO date (YYYY-MM-DD),
// with the time of day (YYYY-MM-DD HH:MM:SS) when it has one, or the time
// alone for a time format below one day. The fraction of a day is rounded
// to the second. Serial 60 of the 1900 system is 1900-02-29 (a day the
// date parser rejects, as it should); a serial before the system's first
// day, or past 9999-12-31, is left as its number. ok is false for text
// that is not a number.
func Serial(stored string, date1904 bool, kind dateKind) (string, bool) {
	r, ok := new(big.Rat).SetString(strings.TrimSpace(stored))
	if !ok {
		return "", false
	}
	// whole days and seconds, rounded half up to the second
	secs := new(big.Rat).Mul(r, big.NewRat(86400, 1))
	secs.Add(secs, big.NewRat(1, 2))
	total := new(big.Int).Div(secs.Num(), secs.Denom()) // floor
	if total.Sign() < 0 || !total.IsInt64() {
		n, _ := Number(stored)
		return n, true
	}
	t := total.Int64()
	days, sec := t/86400, t%86400
	clock := fmt.Sprintf("%02d:%02d:%02d", sec/3600, sec%3600/60, sec%60)
	if kind == timeOnly && days == 0 {
		return clock, true
	}
	var d time.Time
	switch {
	case date1904:
		d = epoch1904.AddDate(0, 0, int(min(days, 3e6)))
	case days == 0:
		return withClock("1900-01-00", clock, sec), true
	case days < 60:
		d = epoch1900.AddDate(0, 0, int(days))
	case days == 60:
		return withClock("1900-02-29", clock, sec), true
	default:
		d = epoch1900Late.AddDate(0, 0, int(min(days, 3e6)))
	}
	if d.Year() > 9999 {
		n, _ := Number(stored)
		return n, true
	}
	return withClock(d.Format("2006-01-02"), clock, sec), true
}

func withClock(date, clock string, sec int64) string {
	if sec == 0 {
		return date
	}
	return date + " " + clock
}

// strftime writes an ISO date or date-time (from Serial) in a strptime
// format of the load's --date-format, so that date cells read as the
// sheet's text dates do. Only %Y %y %m %d %H %M %S and %% are written;
// another directive leaves the ISO text as it is (and the date parser
// then says which rows it could not read).
func strftime(iso, format string) string {
	t, err := time.Parse("2006-01-02 15:04:05", iso)
	if err != nil {
		if t, err = time.Parse("2006-01-02", iso); err != nil {
			return iso
		}
	}
	var b strings.Builder
	for i := 0; i < len(format); i++ {
		if format[i] != '%' || i+1 == len(format) {
			b.WriteByte(format[i])
			continue
		}
		i++
		switch format[i] {
		case 'Y':
			fmt.Fprintf(&b, "%04d", t.Year())
		case 'y':
			fmt.Fprintf(&b, "%02d", t.Year()%100)
		case 'm':
			fmt.Fprintf(&b, "%02d", int(t.Month()))
		case 'd':
			fmt.Fprintf(&b, "%02d", t.Day())
		case 'H':
			fmt.Fprintf(&b, "%02d", t.Hour())
		case 'M':
			fmt.Fprintf(&b, "%02d", t.Minute())
		case 'S':
			fmt.Fprintf(&b, "%02d", t.Second())
		case '%':
			b.WriteByte('%')
		default:
			return iso
		}
	}
	return b.String()
}
