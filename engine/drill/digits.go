package drill

import (
	"fmt"
	"math/big"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
)

// Digit definitions, shared with the digit battery: digits are taken from the
// exact decimal, never from a binary float.
//
//   - The significant digits of an amount x != 0 are the digits of |x|
//     without the decimal point and the leading zeros, padded on the right
//     with zeros to three digits: 1234.56 -> 123..., 0.29 -> 290, 0.5 -> 500,
//     5.00 -> 500.
//   - first: the first significant digit (1..9); second: the second (0..9);
//     first_two: the first two as a number (10..99); first_three: the first
//     three (100..999).
//   - last_two: the two rightmost digits of |x| written at the ledger's
//     scale, as a number (0..99): 1234.56 -> 56, 10.00 -> 0, 0.29 -> 29; at
//     scale 0, 1234 -> 34.
//     With the "units" reading (the battery's --last-two units), the two
//     rightmost digits of the whole-currency part instead: 1234.56 -> 34,
//     0.50 -> 0.
//   - Zero has no significant digits and belongs to no bin of any test.
//
// The predicates below are ranges and remainders over the exact DECIMAL
// column, so DuckDB compares integers and can use the column directly:
// first_two bin 47 <=> |x| in [47*10^k, 48*10^k) for some integer k.

// Readings of the last-two digits test and its minimum (the digit
// battery's rule; a drill into a last-two bin selects the same amounts
// unless LastTwoAll is set): see engine/population.
const (
	LastTwoScale     = population.LastTwoScale
	LastTwoUnits     = population.LastTwoUnits
	LastTwoMinDigits = population.LastTwoMinDigits
)

// LastTwoMinUnits is population.LastTwoMinUnits.
func LastTwoMinUnits(reading string, at population.AmountType) *big.Int {
	return population.LastTwoMinUnits(reading, at)
}

// DrillTests are the tests whose bins hold records and can be drilled.
var DrillTests = []benford.Test{benford.FirstDigit, benford.SecondDigit, benford.FirstTwo, benford.FirstThree, benford.LastTwo}

// CheckBin checks that bin exists for test and returns the test to use
// (the summation test's bins are first-two bins).
func CheckBin(test string, bin int) (benford.Test, error) {
	t := benford.Test(strings.ToLower(strings.TrimSpace(test)))
	switch t {
	case benford.Summation:
		t = benford.FirstTwo
	case benford.SecondOrder:
		return "", fmt.Errorf("--test second_order: its bins count differences between neighbouring sorted amounts, not records; drill the amounts around a difference with --range")
	}
	if !t.Valid() {
		names := make([]string, len(DrillTests))
		for i, d := range DrillTests {
			names[i] = string(d)
		}
		return "", fmt.Errorf("--test %q: give one of %s", test, strings.Join(names, ", "))
	}
	lo, hi := t.Bins()
	if bin < lo || bin > hi {
		return "", fmt.Errorf("--bin %d does not exist for the %s: its bins are %d to %d", bin, t.Name(), lo, hi)
	}
	return t, nil
}

// BinPredicate returns an SQL predicate that is true exactly when the
// amount expression x (a non-negative exact decimal of type at, e.g.
// "amount" for positive amounts or "abs(amount)") is non-zero and falls in
// the bin of the test. The bin must have been checked with CheckBin.
func BinPredicate(test benford.Test, bin int, x string, at population.AmountType) (string, error) {
	return BinPredicateReading(test, bin, x, at, LastTwoScale)
}

// BinPredicateReading is BinPredicate with a reading of the last-two
// digits test: LastTwoScale or LastTwoUnits.
func BinPredicateReading(test benford.Test, bin int, x string, at population.AmountType, lastTwo string) (string, error) {
	if _, err := CheckBin(string(test), bin); err != nil {
		return "", err
	}
	switch test {
	case benford.FirstDigit:
		return prefixRanges(bin, 1, x, at), nil
	case benford.FirstTwo, benford.Summation:
		return prefixRanges(bin, 2, x, at), nil
	case benford.FirstThree:
		return prefixRanges(bin, 3, x, at), nil
	case benford.SecondDigit:
		return secondDigit(bin, x, at), nil
	case benford.LastTwo:
		if lastTwo == LastTwoUnits {
			// The rightmost two digits of the whole part: x mod 100 in
			// [bin, bin + 1) currency units.
			one := pow10(at.Scale)
			return fmt.Sprintf("(%s <> 0 AND %s %% %s >= %s AND %s %% %s < %s)", x,
				x, at.Literal(new(big.Int).Mul(big.NewInt(100), one)), at.Literal(new(big.Int).Mul(big.NewInt(int64(bin)), one)),
				x, at.Literal(new(big.Int).Mul(big.NewInt(100), one)), at.Literal(new(big.Int).Mul(big.NewInt(int64(bin+1)), one))), nil
		}
		// The rightmost two digits of units(x): x mod 100 units.
		return fmt.Sprintf("(%s <> 0 AND %s %% %s = %s)", x, x, at.Literal(big.NewInt(100)), at.Literal(big.NewInt(int64(bin)))), nil
	}
	return "", fmt.Errorf("the %s cannot be drilled", test.Name())
}

// prefixRanges: x has the m-digit significant prefix b <=> for some integer
// e, b*10^e <= units(x) < (b+1)*10^e. Over whole units that is
// ceil(b*10^e) <= units < ceil((b+1)*10^e); e runs over every power that
// gives a non-empty range within the type.
func prefixRanges(b, m int, x string, at population.AmountType) string {
	maxU := at.MaxUnits()
	var terms []string
	for e := -m; e <= at.Precision; e++ {
		lo := scaledCeil(int64(b), e)
		hi := scaledCeil(int64(b+1), e)
		if lo.Cmp(hi) >= 0 || lo.Sign() == 0 || lo.Cmp(maxU) > 0 {
			continue
		}
		if hi.Cmp(maxU) > 0 {
			terms = append(terms, fmt.Sprintf("%s >= %s", x, at.Literal(lo)))
		} else {
			terms = append(terms, fmt.Sprintf("(%s >= %s AND %s < %s)", x, at.Literal(lo), x, at.Literal(hi)))
		}
	}
	if len(terms) == 0 {
		return "FALSE"
	}
	return "(" + strings.Join(terms, " OR ") + ")"
}

// secondDigit: for units(x) in [10^j, 10^(j+1)) the second significant
// digit is d <=> units(x) mod 10^j in [d*10^(j-1), (d+1)*10^(j-1)), over
// whole units [ceil(d*10^(j-1)), ceil((d+1)*10^(j-1))). For j = 0 (a
// single-digit number of units) the remainder is 0 and only d = 0 matches:
// 0.05 has significant digits 500.
func secondDigit(d int, x string, at population.AmountType) string {
	var b strings.Builder
	b.WriteString("(CASE")
	for j := at.Precision - 1; j >= 0; j-- {
		p := pow10(j)
		lo := scaledCeil(int64(d), j-1)
		hi := scaledCeil(int64(d+1), j-1)
		cond := "FALSE"
		if lo.Cmp(hi) < 0 {
			mod := x + " % " + at.Literal(p)
			cond = fmt.Sprintf("%s >= %s AND %s < %s", mod, at.Literal(lo), mod, at.Literal(hi))
		}
		fmt.Fprintf(&b, " WHEN %s >= %s THEN %s", x, at.Literal(p), cond)
	}
	b.WriteString(" ELSE FALSE END)")
	return b.String()
}

// scaledCeil returns ceil(v * 10^e) for v >= 0.
func scaledCeil(v int64, e int) *big.Int {
	if e >= 0 {
		return new(big.Int).Mul(big.NewInt(v), pow10(e))
	}
	d := pow10(-e)
	q, m := new(big.Int).DivMod(big.NewInt(v), d, new(big.Int))
	if m.Sign() != 0 {
		q.Add(q, big.NewInt(1))
	}
	return q
}

// DigitsOf returns the bin of each drillable test for an amount given in
// units at the given scale, computed from the decimal text (a reference
// for tests and for checking counts; the engine uses BinPredicate). ok is
// false for zero.
func DigitsOf(units *big.Int) (bins map[benford.Test]int, ok bool) {
	if units.Sign() == 0 {
		return nil, false
	}
	s := new(big.Int).Abs(units).String()
	sig := strings.TrimLeft(s, "0") + "00"
	last := new(big.Int).Mod(new(big.Int).Abs(units), big.NewInt(100)).Int64()
	n := func(t string) int {
		v := 0
		for _, c := range t {
			v = v*10 + int(c-'0')
		}
		return v
	}
	return map[benford.Test]int{
		benford.FirstDigit:  n(sig[:1]),
		benford.SecondDigit: n(sig[1:2]),
		benford.FirstTwo:    n(sig[:2]),
		benford.FirstThree:  n(sig[:3]),
		benford.LastTwo:     int(last),
	}, true
}
