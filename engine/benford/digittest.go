package benford

import (
	"fmt"
	"strconv"
	"strings"
)

// Test names one test of the digit battery. Its string value is the stable
// machine-readable name used in JSON, CSV and packs.
type Test string

// The digit tests. Bins are inclusive ranges of the digit value tested.
const (
	FirstDigit  Test = "first"        // first-digit test, bins 1..9
	SecondDigit Test = "second"       // second-digit test, bins 0..9
	FirstTwo    Test = "first_two"    // first-two digits test, bins 10..99
	FirstThree  Test = "first_three"  // first-three digits test, bins 100..999
	LastTwo     Test = "last_two"     // last-two digits test, bins 0..99, uniform 0.01
	Summation   Test = "summation"    // summation test, bins 10..99, 1/90 of the total absolute amount each
	SecondOrder Test = "second_order" // second-order test: first-two digits of the differences between sorted amounts, bins 10..99
)

var allTests = []Test{FirstDigit, SecondDigit, FirstTwo, FirstThree, LastTwo, Summation, SecondOrder}

// AllTests returns the digit tests in their canonical order.
func AllTests() []Test {
	return append([]Test(nil), allTests...)
}

// Bins returns the inclusive range of bins of the test. It returns (0, -1)
// for an unknown test, so that hi-lo+1 == 0.
func (t Test) Bins() (lo, hi int) {
	switch t {
	case FirstDigit:
		return 1, 9
	case SecondDigit:
		return 0, 9
	case FirstTwo, Summation, SecondOrder:
		return 10, 99
	case FirstThree:
		return 100, 999
	case LastTwo:
		return 0, 99
	}
	return 0, -1
}

// K returns the number of bins of the test (0 for an unknown test).
func (t Test) K() int {
	lo, hi := t.Bins()
	return hi - lo + 1
}

// Valid reports whether t is one of the tests of AllTests.
func (t Test) Valid() bool {
	return t.K() > 0
}

// Name returns the trade's name of the test, for headings
// ("first-digit test", "summation test", ...).
func (t Test) Name() string {
	switch t {
	case FirstDigit:
		return "first-digit test"
	case SecondDigit:
		return "second-digit test"
	case FirstTwo:
		return "first-two digits test"
	case FirstThree:
		return "first-three digits test"
	case LastTwo:
		return "last-two digits test"
	case Summation:
		return "summation test"
	case SecondOrder:
		return "second-order test"
	}
	return string(t)
}

// Label returns the label of a bin: the digits as written, with the leading
// zero kept for the last-two digits test ("05").
func (t Test) Label(bin int) string {
	if t == LastTwo {
		return fmt.Sprintf("%02d", bin)
	}
	return strconv.Itoa(bin)
}

// aliases maps normalised spellings to tests. See ParseTest.
var aliases = map[string]Test{
	"first": FirstDigit, "first_digit": FirstDigit, "f1": FirstDigit, "d1": FirstDigit,
	"second": SecondDigit, "second_digit": SecondDigit, "d2": SecondDigit,
	"first_two": FirstTwo, "first_two_digits": FirstTwo, "f2": FirstTwo,
	"first_three": FirstThree, "first_three_digits": FirstThree, "f3": FirstThree,
	"last_two": LastTwo, "last_two_digits": LastTwo, "l2": LastTwo,
	"summation": Summation, "sum": Summation,
	"second_order": SecondOrder, "second_order_test": SecondOrder, "so": SecondOrder,
}

// ParseTest parses a test name. It accepts, case-insensitively and with '-',
// '_' and spaces interchangeable:
//
//	first, first_digit, f1, d1           -> FirstDigit
//	second, second_digit, d2             -> SecondDigit
//	first_two, first_two_digits, f2      -> FirstTwo
//	first_three, first_three_digits, f3  -> FirstThree
//	last_two, last_two_digits, l2        -> LastTwo
//	summation, sum                       -> Summation
//	second_order, second_order_test, so  -> SecondOrder
//
// so "First-Two", "first two" and "f2" all name FirstTwo.
func ParseTest(s string) (Test, error) {
	key := strings.ToLower(strings.TrimSpace(s))
	key = strings.NewReplacer("-", "_", " ", "_").Replace(key)
	if t, ok := aliases[key]; ok {
		return t, nil
	}
	names := make([]string, len(allTests))
	for i, t := range allTests {
		names[i] = string(t)
	}
	return "", fmt.Errorf("benford: unknown test %q: use one of %s (or an alias such as f1, f2, f3, d2, l2, sum, so)",
		s, strings.Join(names, ", "))
}
