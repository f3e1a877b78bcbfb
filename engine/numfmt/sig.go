package numfmt

import (
	"math"
	"regexp"
	"strconv"
	"strings"
)

// StatDigits is how many significant figures a statistic is shown with
// (chi-square, z, p-values, MAD, KS D, U²): enough to tell a value from its
// neighbours, few enough that no reader takes the last digits for exact.
const StatDigits = 4

// PUnderflow is how a p-value that underflowed to 0 is written: no
// p-value is exactly 0, it is below the smallest the arithmetic holds.
const PUnderflow = "< 1e-300"

// Sig writes x to n significant figures (n below 1 is taken as 1),
// rounded half to even on its exact binary value. From 0.0001 to below
// 10^9 it is a plain decimal with thousands separators, keeping the
// significant trailing zeros (4293.93 -> "4,294", 0.05 -> "0.05000",
// 123456789 -> "123,500,000"); beyond that it takes an exponent
// (2.5e-7 -> "2.500e-07"). 0 is "0"; NaN and infinities are "n/a".
func Sig(x float64, n int) string {
	switch {
	case math.IsNaN(x) || math.IsInf(x, 0):
		return "n/a"
	case x == 0:
		return "0"
	}
	n = max(n, 1)
	e := strconv.FormatFloat(x, 'e', n-1, 64) // "-1.234e+05": rounded once
	mant, expText, _ := strings.Cut(e, "e")
	exp, _ := strconv.Atoi(expText)
	if exp < -4 || exp >= 9 {
		return e
	}
	sign := ""
	if strings.HasPrefix(mant, "-") {
		sign, mant = "-", mant[1:]
	}
	digits := strings.Replace(mant, ".", "", 1)
	var intPart, frac string
	if exp >= 0 {
		if exp+1 >= len(digits) {
			intPart = digits + strings.Repeat("0", exp+1-len(digits))
		} else {
			intPart, frac = digits[:exp+1], digits[exp+1:]
		}
	} else {
		intPart, frac = "0", strings.Repeat("0", -exp-1)+digits
	}
	s := sign + Group(intPart)
	if frac != "" {
		s += "." + frac
	}
	return s
}

// Stat writes a statistic to StatDigits significant figures.
func Stat(x float64) string { return Sig(x, StatDigits) }

// P writes a p-value to StatDigits significant figures, and one that
// underflowed to 0 as PUnderflow.
func P(p float64) string {
	if p == 0 {
		return PUnderflow
	}
	return Sig(p, StatDigits)
}

// Money writes an exact decimal amount ("-1234567.5") with thousands
// separators and at least two decimals ("-1,234,567.50"); more decimals
// are kept as they are, and other text is returned unchanged.
func Money(s string) string {
	if !plainDecimal.MatchString(s) {
		return s
	}
	i := strings.IndexByte(s, '.')
	switch {
	case i < 0:
		s += ".00"
	case i == len(s)-1:
		s += "00"
	case len(s)-i-1 < 2:
		s += "0"
	}
	return Group(s)
}

var plainDecimal = regexp.MustCompile(`^[-+]?[0-9]+(\.[0-9]*)?$`)

// MoneyFloat writes an amount held as a float (a band edge, a limit) with
// thousands separators and two decimals.
func MoneyFloat(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "n/a"
	}
	return Group(strconv.FormatFloat(x, 'f', 2, 64))
}
