package drill

import (
	"context"
	"fmt"
	"math/big"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/workspace"
)

// Default population, the same as the digit battery's: positive amounts of
// at least 10.00 (amounts below 10 have too few significant digits for the
// first-two digits test).
const (
	DefaultSigns = "positive"
	DefaultMin   = "10"
)

// Base is the population a test or a drill works on, as in the scan: a
// filter predicate over the ledger's columns, the signs kept, and the
// smallest absolute amount kept.
type Base struct {
	Where string `json:"where,omitempty"` // SQL predicate, checked by sqlguard
	Signs string `json:"signs"`           // positive (amount > 0), negative (amount < 0) or both (any amount)
	Min   string `json:"min"`             // keep |amount| >= Min; "0" keeps every amount
}

// WithDefaults fills empty fields with the defaults.
func (b Base) WithDefaults() Base {
	if b.Signs == "" {
		b.Signs = DefaultSigns
	}
	if b.Min == "" {
		b.Min = DefaultMin
	}
	return b
}

// Predicate is an SQL boolean expression with its bound values in order.
type Predicate struct {
	SQL  string
	Args []any
}

// And joins predicates; an empty list gives TRUE.
func And(ps ...Predicate) Predicate {
	var parts []string
	var args []any
	for _, p := range ps {
		if strings.TrimSpace(p.SQL) == "" {
			continue
		}
		parts = append(parts, "("+p.SQL+")")
		args = append(args, p.Args...)
	}
	if len(parts) == 0 {
		return Predicate{SQL: "TRUE"}
	}
	return Predicate{SQL: strings.Join(parts, "\n  AND "), Args: args}
}

// AbsExpr returns the SQL expression of |amount| under the signs kept:
// amount itself for positive amounts (so that DuckDB compares the column
// directly), -amount for negative ones, abs(amount) for both.
func AbsExpr(signs string) string {
	switch signs {
	case "positive":
		return "amount"
	case "negative":
		return "(-amount)"
	}
	return "abs(amount)"
}

// CheckSigns validates a --signs value.
func CheckSigns(s string) error {
	switch s {
	case "positive", "negative", "both":
		return nil
	}
	return fmt.Errorf("--signs %q: give positive, negative or both", s)
}

// Predicate builds the base predicate: the filter, the signs and the
// minimum, with the minimum bound as a value.
func (b Base) Predicate(ctx context.Context, ws *workspace.Workspace, at AmountType) (Predicate, error) {
	b = b.WithDefaults()
	if err := CheckSigns(b.Signs); err != nil {
		return Predicate{}, err
	}
	var ps []Predicate
	if strings.TrimSpace(b.Where) != "" {
		f, err := sqlguard.Filter(ctx, ws.Conn, b.Where)
		if err != nil {
			return Predicate{}, err
		}
		ps = append(ps, Predicate{SQL: f})
	}
	switch b.Signs {
	case "positive":
		ps = append(ps, Predicate{SQL: "amount > 0"})
	case "negative":
		ps = append(ps, Predicate{SQL: "amount < 0"})
	}
	m, err := parseDecimal(b.Min)
	if err != nil {
		return Predicate{}, fmt.Errorf("--min: %w", err)
	}
	if m.Sign() < 0 {
		return Predicate{}, fmt.Errorf("--min %s: the minimum is on absolute amounts; give 0 or more (choose the sign with --signs)", b.Min)
	}
	if m.Sign() > 0 {
		u := at.ceilUnits(m)
		if u.Cmp(at.maxUnits()) > 0 {
			return Predicate{}, fmt.Errorf("--min %s is above the largest amount a %s can hold", b.Min, at.SQL())
		}
		ps = append(ps, Predicate{SQL: AbsExpr(b.Signs) + " >= CAST(? AS " + at.SQL() + ")", Args: []any{at.Text(u)}})
	}
	return And(ps...), nil
}

// Selection says which records to drill into. Every part given narrows the
// selection (they are joined with AND).
type Selection struct {
	Base
	Test    string `json:"test,omitempty"` // digit test: first, second, first_two, first_three, last_two
	Bin     *int   `json:"bin,omitempty"`
	LastTwo string `json:"last_two,omitempty"` // reading of the last_two test: scale (default) or units
	// LastTwoAll drills a last-two bin over every amount, as the battery's
	// --last-two-all; by default only amounts of at least LastTwoMinUnits.
	LastTwoAll bool     `json:"last_two_all,omitempty"`
	Amount     string   `json:"amount,omitempty"`   // exact amount; compared with |amount| under Signs (a leading minus selects negative amounts)
	Range      string   `json:"range,omitempty"`    // FROM:TO, |amount| in [FROM, TO)
	Segments   []string `json:"segments,omitempty"` // COLUMN=VALUE, exact text match; COLUMN= matches blanks; month=YYYY-MM uses posted
	// Extra predicates built by leadline itself, e.g. a duplicate group's key.
	Extra []Predicate `json:"-"`
	// Described says in words what Extra selects, for headings and JSON.
	Described []string `json:"described,omitempty"`
}

// Built is a selection ready to run.
type Built struct {
	Where       Predicate
	AmountType  AmountType
	Description []string // one phrase per part, for headings and JSON
}

// Build checks the selection against the workspace and returns its
// predicate. Errors say which flag was wrong and what to give instead.
func Build(ctx context.Context, ws *workspace.Workspace, s Selection) (*Built, error) {
	at, err := LedgerAmountType(ctx, ws)
	if err != nil {
		return nil, err
	}
	// A negative exact amount selects negative amounts.
	if a := strings.TrimSpace(s.Amount); strings.HasPrefix(a, "-") {
		if s.Signs == "positive" {
			return nil, fmt.Errorf("--amount %s is negative but --signs positive was given; give --amount %s --signs negative", a, a[1:])
		}
		if s.Signs == "" {
			s.Signs = "negative"
		}
		s.Amount = a[1:]
	}
	s.Base = s.Base.WithDefaults()
	base, err := s.Base.Predicate(ctx, ws, at)
	if err != nil {
		return nil, err
	}
	b := &Built{AmountType: at}
	desc := []string{"signs " + s.Signs, "|amount| >= " + s.Min}
	if strings.TrimSpace(s.Where) != "" {
		desc = append(desc, "where "+strings.TrimSpace(s.Where))
	}
	ps := []Predicate{base}
	x := AbsExpr(s.Signs)

	if s.Test != "" || s.Bin != nil {
		if s.Test == "" || s.Bin == nil {
			return nil, fmt.Errorf("give --test and --bin together, e.g. --test first_two --bin 47")
		}
		t, err := CheckBin(s.Test, *s.Bin)
		if err != nil {
			return nil, err
		}
		reading := s.LastTwo
		switch reading {
		case "":
			reading = LastTwoScale
		case LastTwoScale, LastTwoUnits:
		default:
			return nil, fmt.Errorf("--last-two %q: give scale (1234.56 -> 56) or units (of the whole-currency part, 1234.56 -> 34)", s.LastTwo)
		}
		p, err := BinPredicateReading(t, *s.Bin, x, at, reading)
		if err != nil {
			return nil, err
		}
		ps = append(ps, Predicate{SQL: p})
		if t == benford.LastTwo && !s.LastTwoAll {
			ps = append(ps, Predicate{SQL: fmt.Sprintf("%s >= %s", x, at.Literal(LastTwoMinUnits(reading, at)))})
		}
		d := fmt.Sprintf("%s bin %d", t.Name(), *s.Bin)
		if t == benford.LastTwo && reading == LastTwoUnits {
			d += " (whole-currency units)"
		}
		if t == benford.LastTwo && !s.LastTwoAll {
			d += " (amounts of at least " + at.Text(LastTwoMinUnits(reading, at)) + ")"
		}
		desc = append(desc, d)
	}
	if s.Amount != "" {
		r, err := parseDecimal(s.Amount)
		if err != nil {
			return nil, fmt.Errorf("--amount: %w", err)
		}
		u, ok := at.exactUnits(r)
		if !ok {
			return nil, fmt.Errorf("--amount %s has more decimal places than the ledger's amounts (%s)", s.Amount, at.SQL())
		}
		if u.Cmp(at.maxUnits()) > 0 {
			return nil, fmt.Errorf("--amount %s is above the largest amount a %s can hold", s.Amount, at.SQL())
		}
		ps = append(ps, Predicate{SQL: x + " = CAST(? AS " + at.SQL() + ")", Args: []any{at.Text(u)}})
		desc = append(desc, "|amount| = "+at.Text(u))
	}
	if s.Range != "" {
		p, d, err := rangePredicate(s.Range, x, at)
		if err != nil {
			return nil, err
		}
		ps = append(ps, p)
		desc = append(desc, d)
	}
	for _, seg := range s.Segments {
		p, d, err := segmentPredicate(ctx, ws, seg)
		if err != nil {
			return nil, err
		}
		ps = append(ps, p)
		desc = append(desc, d)
	}
	ps = append(ps, s.Extra...)
	desc = append(desc, s.Described...)
	b.Where = And(ps...)
	b.Description = desc
	return b, nil
}

// rangePredicate reads FROM:TO, a half-open range [FROM, TO) of absolute
// amounts. Either end may be left out: 4500: or :5000.
func rangePredicate(spec, x string, at AmountType) (Predicate, string, error) {
	from, to, ok := strings.Cut(spec, ":")
	if !ok {
		return Predicate{}, "", fmt.Errorf("--range %q: write FROM:TO, e.g. --range 4500:5000 for 4,500.00 <= |amount| < 5,000.00", spec)
	}
	from, to = strings.TrimSpace(from), strings.TrimSpace(to)
	if from == "" && to == "" {
		return Predicate{}, "", fmt.Errorf("--range %q: give at least one end", spec)
	}
	var ps []Predicate
	var lo, hi *big.Rat
	var desc []string
	if from != "" {
		r, err := parseDecimal(from)
		if err != nil {
			return Predicate{}, "", fmt.Errorf("--range: %w", err)
		}
		lo = r
	}
	if to != "" {
		r, err := parseDecimal(to)
		if err != nil {
			return Predicate{}, "", fmt.Errorf("--range: %w", err)
		}
		hi = r
	}
	for _, r := range []*big.Rat{lo, hi} {
		if r != nil && r.Sign() < 0 {
			return Predicate{}, "", fmt.Errorf("--range %q: ranges are on absolute amounts; give non-negative ends and choose the sign with --signs negative", spec)
		}
	}
	if lo != nil && hi != nil && lo.Cmp(hi) >= 0 {
		return Predicate{}, "", fmt.Errorf("--range %q: FROM must be below TO (the range is FROM <= |amount| < TO)", spec)
	}
	if lo != nil {
		u := at.ceilUnits(lo)
		if u.Cmp(at.maxUnits()) > 0 {
			return Predicate{SQL: "FALSE"}, "", nil
		}
		ps = append(ps, Predicate{SQL: x + " >= CAST(? AS " + at.SQL() + ")", Args: []any{at.Text(u)}})
		desc = append(desc, from+" <= |amount|")
	}
	if hi != nil {
		u := at.ceilUnits(hi)
		if u.Cmp(at.maxUnits()) <= 0 {
			ps = append(ps, Predicate{SQL: x + " < CAST(? AS " + at.SQL() + ")", Args: []any{at.Text(u)}})
		}
		if len(desc) > 0 {
			desc[0] += " < " + to
		} else {
			desc = append(desc, "|amount| < "+to)
		}
	}
	return And(ps...), desc[0], nil
}

// segmentPredicate reads COLUMN=VALUE. The value matches the column's text
// exactly; an empty value matches blanks (NULL or ”). month=YYYY-MM selects
// a month of the posted date unless the ledger has a column named month.
func segmentPredicate(ctx context.Context, ws *workspace.Workspace, spec string) (Predicate, string, error) {
	col, val, ok := strings.Cut(spec, "=")
	col = strings.TrimSpace(col)
	if !ok || col == "" {
		return Predicate{}, "", fmt.Errorf("--segment %q: write COLUMN=VALUE, e.g. --segment counterparty=V00123", spec)
	}
	name, typ, err := ledgerColumn(ctx, ws, col)
	if err != nil {
		if strings.EqualFold(col, "month") {
			return Predicate{SQL: "strftime(posted, '%Y-%m') = ?", Args: []any{val}}, "month " + val, nil
		}
		return Predicate{}, "", fmt.Errorf("--segment %q: %w", spec, err)
	}
	q := quoteIdent(name)
	text := q
	if !strings.EqualFold(typ, "VARCHAR") {
		text = "CAST(" + q + " AS VARCHAR)"
	}
	if val == "" {
		return Predicate{SQL: "nullif(trim(" + text + "), '') IS NULL"}, name + " blank", nil
	}
	return Predicate{SQL: text + " = ?", Args: []any{val}}, name + " = " + val, nil
}
