package population

import (
	"context"
	"fmt"
	"math/big"
	"strings"

	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Population is a Spec checked against a workspace: the filter checked by
// sqlguard, the ledger's amount type and the minimum in exact units of
// that type, with the SQL that selects its rows.
type Population struct {
	Spec       Spec       // as given, defaults filled in
	AmountType AmountType // of the ledger's amount column
	Filter     string     // the checked filter, ready to follow WHERE; TRUE without one
	MinUnits   *big.Int   // ceil(Min * 10^Scale): the smallest |amount| kept, in units
	min        *big.Rat
}

// Prepare checks s (defaults filled in) against the workspace: the signs,
// the minimum (plain decimal, 0 or more, within the amount type) and the
// filter. A problem with one of them is a *FieldError.
func Prepare(ctx context.Context, ws *workspace.Workspace, s Spec) (*Population, error) {
	s = s.WithDefaults()
	if err := CheckSigns(s.Signs); err != nil {
		return nil, err
	}
	m, err := ParseMin(s.Min)
	if err != nil {
		return nil, err
	}
	at, err := LedgerAmountType(ctx, ws)
	if err != nil {
		return nil, err
	}
	u, err := MinUnits(s.Min, at)
	if err != nil {
		return nil, err
	}
	filter, err := sqlguard.Filter(ctx, ws.Conn, s.Where)
	if err != nil {
		return nil, &FieldError{Field: FieldWhere, Value: s.Where, Err: err}
	}
	return &Population{Spec: s, AmountType: at, Filter: filter, MinUnits: u, min: m}, nil
}

// MinUnits reads a minimum (ParseMin) and returns it in units of the
// amount type, rounded up: ceil(min * 10^Scale). A minimum above the
// largest amount the type holds is refused.
func MinUnits(min string, at AmountType) (*big.Int, error) {
	m, err := ParseMin(min)
	if err != nil {
		return nil, err
	}
	u := at.CeilUnits(m)
	if u.Cmp(at.MaxUnits()) > 0 {
		return nil, &FieldError{Field: FieldMin, Value: min, Reason: "above the largest amount a " + at.SQL() + " can hold"}
	}
	return u, nil
}

// MinAmount is the minimum as a float (for band edges, which are floats).
func (p *Population) MinAmount() float64 {
	f, _ := p.min.Float64()
	return f
}

// Sign returns the SQL that is true when x (an amount or its units) has a
// sign kept: x > 0, x < 0, or TRUE for both signs.
func (p *Population) Sign(x string) string {
	switch p.Spec.Signs {
	case Positive:
		return x + " > 0"
	case Negative:
		return x + " < 0"
	}
	return "TRUE"
}

// SignOrZero returns the SQL that is true when x has a sign kept or is
// zero, and is not NULL: x >= 0, x <= 0, or x IS NOT NULL for both signs.
func (p *Population) SignOrZero(x string) string {
	switch p.Spec.Signs {
	case Positive:
		return x + " >= 0"
	case Negative:
		return x + " <= 0"
	}
	return x + " IS NOT NULL"
}

// Abs returns the SQL of |x| for the rows of a sign kept: x itself for
// positive amounts (so that DuckDB compares the column directly), -x for
// negative ones, abs(x) for both.
func (p *Population) Abs(x string) string { return AbsSQL(p.Spec.Signs, x) }

// AbsSQL is Abs for a signs value that has been checked.
func AbsSQL(signs, x string) string {
	switch signs {
	case Positive:
		return x
	case Negative:
		return "(-" + x + ")"
	}
	return "abs(" + x + ")"
}

// Tested is the predicate over the ledger's amount column of the rows
// kept by the signs and the minimum (the filter apart), the minimum bound
// as a value of the amount type. With both signs and a minimum of 0 it
// keeps every amount, zero too (but no NULL, which a committed ledger
// never holds).
func (p *Population) Tested() Predicate {
	var ps []Predicate
	if s := p.Sign("amount"); s != "TRUE" {
		ps = append(ps, Predicate{SQL: s})
	}
	if p.MinUnits.Sign() > 0 {
		ps = append(ps, Predicate{SQL: p.Abs("amount") + " >= CAST(? AS " + p.AmountType.SQL() + ")", Args: []any{p.AmountType.Text(p.MinUnits)}})
	}
	if len(ps) == 0 {
		ps = append(ps, Predicate{SQL: "amount IS NOT NULL"})
	}
	return And(ps...)
}

// Where is the predicate of the whole population: the filter, the signs
// and the minimum.
func (p *Population) Where() Predicate {
	var ps []Predicate
	if strings.TrimSpace(p.Spec.Where) != "" {
		ps = append(ps, Predicate{SQL: p.Filter})
	}
	return And(append(ps, p.Tested())...)
}

// Rows counts the ledger's rows and those the filter keeps (from the
// ledger's metadata when there is no filter).
func (p *Population) Rows(ctx context.Context, ws *workspace.Workspace) (total, kept int64, err error) {
	if err := ws.Conn.QueryRowContext(ctx, queries.Get("population_rows")).Scan(&total); err != nil {
		return 0, 0, fmt.Errorf("counting the ledger's rows: %w", err)
	}
	if p.Filter == "TRUE" {
		return total, total, nil
	}
	if err := ws.Conn.QueryRowContext(ctx, queries.Render("population_kept_rows", map[string]string{"filter": p.Filter})).Scan(&kept); err != nil {
		return 0, 0, fmt.Errorf("counting the rows the filter keeps: %s", firstLine(err.Error()))
	}
	return total, kept, nil
}

// Left counts the rows of the ledger a population leaves out, by reason,
// so that N is always explained: rows = tested + Total(). A row is counted
// under the first reason that applies, in the order of the fields.
type Left struct {
	Filtered  int64 `json:"filtered"`   // left out by the filter
	Zero      int64 `json:"zero"`       // amount zero: no significant digits
	OtherSign int64 `json:"other_sign"` // of the sign not tested
	BelowMin  int64 `json:"below_min"`  // |amount| below the minimum
	NoAmount  int64 `json:"no_amount"`  // NULL amount (a committed ledger has none)
}

// Total is the number of rows left out.
func (l Left) Total() int64 { return l.Filtered + l.Zero + l.OtherSign + l.BelowMin + l.NoAmount }

// Add adds the counts of o.
func (l *Left) Add(o Left) {
	l.Filtered += o.Filtered
	l.Zero += o.Zero
	l.OtherSign += o.OtherSign
	l.BelowMin += o.BelowMin
	l.NoAmount += o.NoAmount
}

// LeftOut counts, in one scan, the rows the population tests and those it
// leaves out, by reason.
func (p *Population) LeftOut(ctx context.Context, ws *workspace.Workspace) (tested int64, left Left, err error) {
	t := p.Tested()
	q := queries.Render("population_left_out", map[string]string{"filter": p.Filter, "tested": t.SQL, "sign_ok": p.Sign("amount")})
	rows, err := ws.Conn.QueryContext(ctx, q, t.Args...)
	if err != nil {
		return 0, left, fmt.Errorf("counting the rows left out: %s", firstLine(err.Error()))
	}
	defer rows.Close()
	for rows.Next() {
		var reason string
		var n int64
		if err := rows.Scan(&reason, &n); err != nil {
			return 0, left, err
		}
		switch reason {
		case "tested":
			tested = n
		case "filtered":
			left.Filtered = n
		case "no_amount":
			left.NoAmount = n
		case "zero":
			left.Zero = n
		case "other_sign":
			left.OtherSign = n
		case "below_min":
			left.BelowMin = n
		default:
			return 0, left, fmt.Errorf("counting the rows left out: unknown reason %q: an internal error, please report it", reason)
		}
	}
	return tested, left, rows.Err()
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}
