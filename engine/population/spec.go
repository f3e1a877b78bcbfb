package population

import (
	"errors"
	"fmt"
	"math/big"
	"regexp"
	"strings"
)

// Default population, the same for every test: positive amounts of at
// least 10.00 (amounts below 10 have too few significant digits for the
// first-two digits test, common practice, no source).
const (
	DefaultSigns = "positive"
	DefaultMin   = "10"
)

// Signs kept.
const (
	Positive = "positive" // amount > 0
	Negative = "negative" // amount < 0, tested as |amount|
	Both     = "both"     // any amount, tested as |amount|
)

// Fields of a population, as FieldError names them.
const (
	FieldWhere = "where"
	FieldSigns = "signs"
	FieldMin   = "min"
)

// Spec says which rows are tested: a filter predicate over the ledger's
// columns, the signs kept and the smallest absolute amount kept. Its JSON
// is the "population" of stored runs (docs/json.md).
type Spec struct {
	Where string `json:"where,omitempty"` // SQL predicate, checked by sqlguard
	Signs string `json:"signs"`           // positive (amount > 0), negative (amount < 0) or both (any amount)
	Min   string `json:"min"`             // keep |amount| >= Min; "0" keeps every amount
}

// WithDefaults fills empty fields with the defaults.
func (s Spec) WithDefaults() Spec {
	if s.Signs == "" {
		s.Signs = DefaultSigns
	}
	if s.Min == "" {
		s.Min = DefaultMin
	}
	return s
}

// Check checks the signs and the minimum (after WithDefaults) without a
// workspace; Prepare checks the filter and the minimum against the
// ledger's amount type too.
func (s Spec) Check() error {
	if err := CheckSigns(s.Signs); err != nil {
		return err
	}
	_, err := ParseMin(s.Min)
	return err
}

// FieldError is a field of the population that cannot be used: which
// field, the value given, and what is wrong with it in words that name no
// flag or key. Render names the field (and the one a fix points to) in the
// caller's terms.
type FieldError struct {
	Field  string // FieldWhere, FieldSigns or FieldMin
	Value  string // as given
	Reason string // what is wrong and what to give instead; empty when Err says it all
	// See names another field that fixes the problem, with the words
	// before it, e.g. {"choose the sign with", FieldSigns}; empty if none.
	See [2]string
	// Err is the underlying error, if any (e.g. sqlguard's for a filter).
	Err error
}

// Error renders the error with the fields' own names.
func (e *FieldError) Error() string { return e.Render(nil) }

// Unwrap returns the underlying error.
func (e *FieldError) Unwrap() error { return e.Err }

// Render writes the error naming fields by name(field): the command line
// gives its flags (--min), a pack its keys (min_amount). A nil name keeps
// the field names.
func (e *FieldError) Render(name func(field string) string) string {
	if e.Reason == "" && e.Err != nil {
		return e.Err.Error() // the filter checker's own words ("filter ...: ...")
	}
	if name == nil {
		name = func(f string) string { return f }
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%s %q: ", name(e.Field), e.Value)
	b.WriteString(e.Reason)
	if e.See[1] != "" {
		fmt.Fprintf(&b, " (%s %s)", e.See[0], name(e.See[1]))
	}
	return b.String()
}

// AsFieldError reports whether err is or wraps a *FieldError.
func AsFieldError(err error) (*FieldError, bool) {
	var fe *FieldError
	if errors.As(err, &fe) {
		return fe, true
	}
	return nil, false
}

// CheckSigns checks a signs value: positive, negative or both.
func CheckSigns(s string) error {
	switch s {
	case Positive, Negative, Both:
		return nil
	}
	return &FieldError{Field: FieldSigns, Value: s, Reason: "give positive, negative or both"}
}

// The one grammar of amounts given by the user (the minimum here; the
// drill-down's --amount and --range too): plain decimal text, an optional
// sign, digits with at most one decimal point ("10", "10.5", "0.01", ".5",
// "+10"), digits optionally grouped by single underscores ("1_000").
// Nothing else: no hexadecimal or other bases (0x10), no exponent (1e3),
// no fractions (1/2), no thousands separators, no inf or nan. Surrounding
// spaces are ignored.
var decimalRE = regexp.MustCompile(`^[+-]?(?:[0-9]+(?:_[0-9]+)*(?:\.(?:[0-9]+(?:_[0-9]+)*)?)?|\.[0-9]+(?:_[0-9]+)*)$`)

// DecimalHint is what to give instead of text that is not plain decimal.
const DecimalHint = "write it like 10 or 10.5 (no exponent, other base or thousands separators)"

// ParseDecimal reads plain decimal text (the grammar above) into an exact
// rational; ok is false for anything else.
func ParseDecimal(s string) (r *big.Rat, ok bool) {
	t := strings.TrimSpace(s)
	if !decimalRE.MatchString(t) {
		return nil, false
	}
	r, ok = new(big.Rat).SetString(strings.ReplaceAll(strings.TrimPrefix(t, "+"), "_", ""))
	return r, ok
}

// ParseMin reads a minimum: plain decimal text, 0 or more.
func ParseMin(s string) (*big.Rat, error) {
	r, ok := ParseDecimal(s)
	if !ok {
		return nil, &FieldError{Field: FieldMin, Value: s, Reason: "not a plain decimal number; " + DecimalHint}
	}
	if r.Sign() < 0 {
		return nil, &FieldError{Field: FieldMin, Value: s, Reason: "the minimum is on absolute amounts; give 0 or more", See: [2]string{"choose the sign with", FieldSigns}}
	}
	return r, nil
}

// Worded is an error that names fields of the population: Render words it
// with the caller's names for them (FieldError and EmptyError).
type Worded interface {
	error
	Render(name func(field string) string) string
}

// EmptyError says that a population holds no amount to test, and why.
type EmptyError struct {
	Kept int64  // rows the filter keeps
	Left Left   // why each of them was left out
	Min  string // the minimum, as given
}

// NoAmounts returns the error of a population with nothing to test.
func NoAmounts(kept int64, left Left, min string) error {
	return &EmptyError{Kept: kept, Left: left, Min: min}
}

// Error renders the error with the fields' own names.
func (e *EmptyError) Error() string { return e.Render(nil) }

// Render writes the error naming the fields that widen the population by
// name(field).
func (e *EmptyError) Render(name func(field string) string) string {
	if name == nil {
		name = func(f string) string { return f }
	}
	return fmt.Sprintf("no amounts to test: %d rows match the filter, %d are zero, %d of the other sign, %d below the minimum %s (try %s both or a lower %s)",
		e.Kept, e.Left.Zero, e.Left.OtherSign, e.Left.BelowMin, e.Min, name(FieldSigns), name(FieldMin))
}
