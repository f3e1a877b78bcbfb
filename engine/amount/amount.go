// Package amount states leadline's amount grammar in plain Go. The loader
// parses amounts in SQL inside DuckDB (queries/amount.sql) for speed; this
// package is the independent reference that the tests and the fuzzer hold
// the SQL against, and that Go code can use on single values.
//
// Grammar, after runs of spaces between two digits become a thousands mark
// and all other white space (Unicode White_Space) is dropped:
//
//	[ "(" ] [sign] [currency] [sign] number [exponent] [currency] ["-"] ["CR"|"DR"] [ ")" ]
//
// with at most one sign marker in all, at most one currency marker (three
// capital letters or one of $ € £ ¥ ₹), parentheses only in pairs, and a
// number whose thousands marks are in the right places: groups of three
// (1,234,567), the Indian grouping (12,34,567), or apostrophes (1'234'567),
// the first group not starting with 0; with a decimal comma, dots or
// apostrophes group and a comma marks the decimals. CR means a credit
// (negative), DR a debit. An exponent (1.5E+03) is applied exactly.
//
// It owns the reference grammar of amounts in Go: which text is an amount
// and its exact value.
package amount

import (
	"math/big"
	"strings"
	"unicode"
)

// Reasons a text is not an amount. They match the SQL macro's reasons.
const (
	Blank        = "blank amount"
	NotANumber   = "not a number"
	TwoSigns     = "more than one sign marker"
	Parentheses  = "unbalanced parentheses"
	TwoCurrency  = "two currency markers"
	BadGrouping  = "misplaced thousands separator or decimal point (is it a decimal comma?)"
	BadGroupingC = "digit grouping does not fit a decimal comma"
	OutOfRange   = "out of range"
)

var symbols = "$€£¥₹"

// Parse reads s and returns its exact value rounded half away from zero to
// scale decimal places, or the reason it is not an amount. maxDigits bounds
// the total digits of the result (18 or 38), as DECIMAL(maxDigits, scale).
func Parse(s string, decimalComma bool, scale, maxDigits int) (*big.Rat, string) {
	if strings.TrimSpace(s) == "" {
		return nil, Blank
	}
	t := normalizeSpace(s)
	p, ok := split(t)
	if !ok {
		return nil, NotANumber
	}
	signs := 0
	for _, x := range []string{p.s1, p.s2, p.s3, p.lp, p.cd} {
		if x != "" {
			signs++
		}
	}
	if signs > 1 {
		return nil, TwoSigns
	}
	if (p.lp == "") != (p.rp == "") {
		return nil, Parentheses
	}
	if p.c1 != "" && p.c2 != "" {
		return nil, TwoCurrency
	}
	digits, ok := ungroup(p.num, decimalComma)
	if !ok {
		if decimalComma {
			return nil, BadGroupingC
		}
		return nil, BadGrouping
	}
	v, ok := new(big.Rat).SetString(digits)
	if !ok {
		return nil, NotANumber
	}
	if p.ex != "" && v.Sign() != 0 {
		// The exact value, found without raising 10 to an exponent of any
		// size: beyond 10^40 nothing fits a DECIMAL(38); below 10^-40
		// everything rounds to zero at the six places allowed at most.
		e, ok := new(big.Int).SetString(strings.TrimPrefix(p.ex[1:], "+"), 10)
		if !ok {
			return nil, NotANumber
		}
		bound := big.NewInt(int64(len(digits)) + 40)
		switch {
		case e.Cmp(bound) > 0:
			return nil, OutOfRange
		case e.Cmp(new(big.Int).Neg(bound)) < 0:
			v.SetInt64(0)
		default:
			pow := new(big.Int).Exp(big.NewInt(10), new(big.Int).Abs(e), nil)
			if e.Sign() < 0 {
				v.Quo(v, new(big.Rat).SetInt(pow))
			} else {
				v.Mul(v, new(big.Rat).SetInt(pow))
			}
		}
	}
	if p.s1 == "-" || p.s2 == "-" || p.s3 == "-" || p.lp != "" || strings.EqualFold(p.cd, "CR") {
		v.Neg(v)
	}
	r := Round(v, scale)
	limit := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(maxDigits-scale)), nil)
	if new(big.Int).Abs(intPart(r)).Cmp(limit) >= 0 {
		return nil, OutOfRange
	}
	return r, ""
}

func intPart(r *big.Rat) *big.Int { return new(big.Int).Quo(r.Num(), r.Denom()) }

// Round rounds v half away from zero to scale decimal places.
func Round(v *big.Rat, scale int) *big.Rat {
	pow := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(scale)), nil)
	x := new(big.Rat).Mul(v, new(big.Rat).SetInt(pow))
	num := new(big.Int).Abs(x.Num())
	q, m := new(big.Int).QuoRem(num, x.Denom(), new(big.Int))
	if new(big.Int).Mul(m, big.NewInt(2)).Cmp(x.Denom()) >= 0 {
		q.Add(q, big.NewInt(1))
	}
	if x.Sign() < 0 {
		q.Neg(q)
	}
	return new(big.Rat).SetFrac(q, pow)
}

// Format writes r with exactly scale decimal places.
func Format(r *big.Rat, scale int) string { return r.FloatString(scale) }

// isSpace is Unicode White_Space (unicode.IsSpace): tab, line breaks,
// the space, no-break spaces, the typographic spaces U+2000 to U+200A, the
// ideographic space; the SQL macros list the same characters.
func isSpace(r rune) bool { return unicode.IsSpace(r) }

func isDigit(r rune) bool { return r >= '0' && r <= '9' }

// normalizeSpace turns a run of spaces between two digits into an
// apostrophe (a thousands mark) and drops all other white space.
func normalizeSpace(s string) string {
	rs := []rune(s)
	var b strings.Builder
	for i := 0; i < len(rs); i++ {
		if !isSpace(rs[i]) {
			b.WriteRune(rs[i])
			continue
		}
		j := i
		for j < len(rs) && isSpace(rs[j]) {
			j++
		}
		if i > 0 && j < len(rs) && isDigit(rs[i-1]) && isDigit(rs[j]) && isHorizontal(rs[i:j]) {
			b.WriteRune('\'')
		}
		i = j - 1
	}
	return b.String()
}

// isHorizontal: the SQL pattern joins digits across spaces, tabs and the
// no-break spaces only, not across line breaks.
func isHorizontal(rs []rune) bool {
	for _, r := range rs {
		if !(r == ' ' || r == '\t' || r == '\u00A0' || r == '\u202F' || r == '\u2007' || r == '\u2009') {
			return false
		}
	}
	return true
}

type parts struct{ lp, s1, c1, s2, num, ex, c2, s3, cd, rp string }

func currencyAt(rs []rune, i int) int {
	if i < len(rs) && strings.ContainsRune(symbols, rs[i]) {
		return 1
	}
	if i+3 <= len(rs) && isUpper(rs[i]) && isUpper(rs[i+1]) && isUpper(rs[i+2]) {
		return 3
	}
	return 0
}

func isUpper(r rune) bool { return r >= 'A' && r <= 'Z' }

// split matches the grammar left to right. Every element but the number is
// optional; where an element could be taken or left (a three-letter code
// after the number that could also be "CR"+more), the choice that lets the
// whole text match is made, as a regular expression would.
func split(t string) (parts, bool) {
	rs := []rune(t)
	var p parts
	i := 0
	if i < len(rs) && rs[i] == '(' {
		p.lp = "("
		i++
	}
	if i < len(rs) && (rs[i] == '+' || rs[i] == '-') {
		p.s1 = string(rs[i])
		i++
	}
	if n := currencyAt(rs, i); n > 0 {
		p.c1 = string(rs[i : i+n])
		i += n
	}
	if i < len(rs) && (rs[i] == '+' || rs[i] == '-') {
		p.s2 = string(rs[i])
		i++
	}
	// number: a digit then digits . , ' ; or a lone mark followed by digits
	start := i
	switch {
	case i < len(rs) && isDigit(rs[i]):
		i++
		for i < len(rs) && (isDigit(rs[i]) || rs[i] == '.' || rs[i] == ',' || rs[i] == '\'') {
			i++
		}
	case i+1 < len(rs) && (rs[i] == '.' || rs[i] == ',') && isDigit(rs[i+1]):
		i++
		for i < len(rs) && isDigit(rs[i]) {
			i++
		}
	default:
		return p, false
	}
	p.num = string(rs[start:i])
	// exponent
	if i < len(rs) && (rs[i] == 'e' || rs[i] == 'E') {
		j := i + 1
		if j < len(rs) && (rs[j] == '+' || rs[j] == '-') {
			j++
		}
		k := j
		for k < len(rs) && isDigit(rs[k]) {
			k++
		}
		if k > j {
			p.ex = string(rs[i:k])
			i = k
		}
	}
	rest := rs[i:]
	// the tail: [currency] ["-"] [CR|DR] [")"], matched exactly
	return p, tail(rest, &p)
}

func tail(rs []rune, p *parts) bool {
	try := func(withCurrency bool) bool {
		i := 0
		q := *p
		if withCurrency {
			n := currencyAt(rs, 0)
			if n == 0 {
				return false
			}
			q.c2 = string(rs[:n])
			i = n
		}
		if i < len(rs) && rs[i] == '-' {
			q.s3 = "-"
			i++
		}
		if i+2 <= len(rs) {
			switch string(rs[i : i+2]) {
			case "CR", "DR", "Cr", "Dr", "cr", "dr":
				q.cd = string(rs[i : i+2])
				i += 2
			}
		}
		if i < len(rs) && rs[i] == ')' {
			q.rp = ")"
			i++
		}
		if i != len(rs) {
			return false
		}
		*p = q
		return true
	}
	return try(true) || try(false)
}

// ungroup checks the thousands marks and returns the number with a decimal
// point and no marks.
func ungroup(num string, decimalComma bool) (string, bool) {
	if !strings.ContainsAny(num, "0123456789") {
		return "", false
	}
	dec, group := ".", ",'"
	if decimalComma {
		dec, group = ",", ".'"
	}
	intPart, frac := num, ""
	if k := strings.Index(num, dec); k >= 0 {
		intPart, frac = num[:k], num[k+1:]
		if strings.ContainsAny(frac, ".,'") {
			return "", false
		}
	}
	if strings.ContainsAny(intPart, group) {
		if !groupedOK(intPart, decimalComma) {
			return "", false
		}
		intPart = strings.NewReplacer(",", "", ".", "", "'", "").Replace(intPart)
	} else if strings.ContainsAny(intPart, ".,'") {
		return "", false
	}
	if intPart == "" {
		intPart = "0"
	}
	if frac == "" {
		return intPart, true
	}
	return intPart + "." + frac, true
}

func groupedOK(s string, decimalComma bool) bool {
	var marks []rune
	for _, r := range s {
		if !isDigit(r) {
			marks = append(marks, r)
		}
	}
	// one kind of mark throughout, except that a decimal-comma number may
	// mix dots and apostrophes (the SQL pattern allows it).
	groups := strings.FieldsFunc(s, func(r rune) bool { return !isDigit(r) })
	if len(groups) != len(marks)+1 || strings.ContainsAny(s[:1], ".,'") || strings.ContainsAny(s[len(s)-1:], ".,'") {
		return false
	}
	allSame := func(m rune) bool {
		for _, x := range marks {
			if x != m {
				return false
			}
		}
		return true
	}
	threes := func(gs []string) bool {
		for _, g := range gs {
			if len(g) != 3 {
				return false
			}
		}
		return true
	}
	first := groups[0]
	if first[0] == '0' {
		// 0,001 is no thousands-grouped number (a decimal comma read
		// without --decimal-comma, most likely): reject it, never read 1.
		return false
	}
	if decimalComma {
		return len(first) >= 1 && len(first) <= 3 && threes(groups[1:])
	}
	switch {
	case allSame(','):
		if len(first) >= 1 && len(first) <= 3 && threes(groups[1:]) {
			return true
		}
		// Indian grouping: 1-2 digits, then pairs, then a final three.
		if len(groups) < 3 || len(first) < 1 || len(first) > 2 || len(groups[len(groups)-1]) != 3 {
			return false
		}
		for _, g := range groups[1 : len(groups)-1] {
			if len(g) != 2 {
				return false
			}
		}
		return true
	case allSame('\''):
		return len(first) >= 1 && len(first) <= 3 && threes(groups[1:])
	}
	return false
}
