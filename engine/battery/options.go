package battery

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/field"
	"github.com/leadline/leadline/engine/population"
)

// Defaults.
const (
	// DefaultMinSegmentRows is the fewest tested amounts a segment needs to
	// be ranked. The first-two digits test spreads N over 90 bins whose
	// expected shares run from 4.1% down to 0.44%: with 1,000 amounts the
	// smallest bins expect about four amounts, below which the Z-statistics
	// and the chi-square approximation stop meaning much, and the rule of
	// thumb of the trade asks for about 5,000 (common practice, no source).
	// Excess MAD corrects the MAD for N, so segments from 1,000 amounts up
	// compare fairly; smaller ones are listed as too small to judge.
	DefaultMinSegmentRows = 1000
	// DefaultTop is the number of exact amounts the number duplication test
	// lists.
	DefaultTop = 20
)

// Options say what the battery tests and on which amounts.
//
// The population (population.Spec) is the one every test and the
// drill-down use: a filter over the ledger's columns, the
// signs tested (positive by default: debits and credits, or invoices and
// credit notes, are different populations, and Nigrini analyses them
// apart), and a minimum absolute amount (10 by default: amounts below 10
// carry too few significant digits of their own for the first-two digits
// test, common practice).
type Options struct {
	population.Spec
	// Tests to run. With Tests empty and Duplication false, every test of
	// benford.AllTests runs, and number duplication too.
	Tests []benford.Test `json:"tests"`
	// Duplication runs the number duplication test.
	Duplication bool `json:"duplication"`
	// Top is the number of exact amounts listed by number duplication.
	Top int `json:"top"`
	// By lists segment columns; a segment is a combination of their values.
	By []string `json:"by,omitempty"`
	// MinSegmentRows is the fewest tested amounts a segment needs to be
	// ranked.
	MinSegmentRows int64 `json:"min_segment_rows"`
	// LastTwo is LastTwoScale (default) or LastTwoUnits.
	LastTwo string `json:"last_two"`
	// MinExcess is the materiality margin of the bin flag
	// (benford.Flagging; nil: benford.DefaultMinExcess, 0: none).
	MinExcess *float64 `json:"min_excess"`
	// LastTwoAll tests the last two digits of every amount, not only of
	// those where they are the fourth significant digit or later.
	LastTwoAll bool `json:"last_two_all,omitempty"`
}

// WithDefaults fills empty fields with the defaults.
func (o Options) WithDefaults() Options {
	o.Spec = o.Spec.WithDefaults()
	if len(o.Tests) == 0 && !o.Duplication {
		o.Tests = benford.AllTests()
		o.Duplication = true
	}
	if o.Tests == nil {
		o.Tests = []benford.Test{}
	}
	if o.Top == 0 {
		o.Top = DefaultTop
	}
	if o.MinSegmentRows == 0 {
		o.MinSegmentRows = DefaultMinSegmentRows
	}
	if o.LastTwo == "" {
		o.LastTwo = LastTwoScale
	}
	if o.MinExcess == nil {
		m := benford.DefaultMinExcess
		o.MinExcess = &m
	}
	return o
}

// Check validates the options (after WithDefaults). A refusal of its
// own settings is a *field.Error (top, min_segment, last_two); of the
// population a *population.FieldError.
func (o Options) Check() error {
	if err := o.Spec.Check(); err != nil {
		return err
	}
	for _, t := range o.Tests {
		if !t.Valid() {
			return fmt.Errorf("unknown test %q", t)
		}
	}
	if o.Top < 1 {
		return &field.Error{Field: "top", Value: strconv.Itoa(o.Top), Reason: "give 1 or more"}
	}
	if o.MinSegmentRows < 1 {
		return &field.Error{Field: "min_segment", Value: strconv.FormatInt(o.MinSegmentRows, 10), Reason: "give 1 or more"}
	}
	if err := o.Flagging().Check(); err != nil {
		return err
	}
	switch o.LastTwo {
	case LastTwoScale, LastTwoUnits:
	default:
		return &field.Error{Field: "last_two", Value: strconv.Quote(o.LastTwo), Reason: "give scale (the two rightmost digits as the ledger writes the amount, 1234.56 -> 56) or units (of the whole-currency part, 1234.56 -> 34)"}
	}
	return nil
}

// Flagging returns the bin flag's settings.
func (o Options) Flagging() benford.Flagging {
	f := benford.DefaultFlagging
	if o.MinExcess != nil {
		f.MinExcess = *o.MinExcess
	}
	return f
}

// Has reports whether test t is selected.
func (o Options) Has(t benford.Test) bool {
	for _, x := range o.Tests {
		if x == t {
			return true
		}
	}
	return false
}

// ParseTests reads test names as --tests gives them: the names and aliases
// of benford.ParseTest, plus "duplication" (number duplication; also
// "number_duplication", "dup", "dups"), and "all". Duplicates are dropped;
// the order is the canonical one.
func ParseTests(names []string) (tests []benford.Test, duplication bool, err error) {
	seen := map[benford.Test]bool{}
	for _, raw := range names {
		for _, n := range strings.Split(raw, ",") {
			key := strings.NewReplacer("-", "_", " ", "_").Replace(strings.ToLower(strings.TrimSpace(n)))
			switch key {
			case "":
				continue
			case "all":
				for _, t := range benford.AllTests() {
					seen[t] = true
				}
				duplication = true
				continue
			case "duplication", "number_duplication", "dup", "dups", "duplicates":
				duplication = true
				continue
			}
			t, err := benford.ParseTest(n)
			if err != nil {
				return nil, false, fmt.Errorf("--tests: %s, or duplication", strings.TrimPrefix(err.Error(), "benford: "))
			}
			seen[t] = true
		}
	}
	for _, t := range benford.AllTests() {
		if seen[t] {
			tests = append(tests, t)
		}
	}
	if len(tests) == 0 && !duplication {
		return nil, false, fmt.Errorf("--tests: name at least one test (first, second, first_two, first_three, last_two, summation, second_order, duplication)")
	}
	return tests, duplication, nil
}
