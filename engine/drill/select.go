package drill

import (
	"context"
	"fmt"
	"math/big"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/workspace"
)

// Selection says which records to drill into. Every part given narrows the
// selection (they are joined with AND).
type Selection struct {
	population.Spec
	Test    string `json:"test,omitempty"` // digit test: first, second, first_two, first_three, last_two
	Bin     *int   `json:"bin,omitempty"`
	LastTwo string `json:"last_two,omitempty"` // reading of the last_two test: scale (default) or units
	// LastTwoAll drills a last-two bin over every amount, as the battery's
	// --last-two-all; by default only amounts of at least LastTwoMinUnits.
	LastTwoAll bool     `json:"last_two_all,omitempty"`
	Amount     string   `json:"amount,omitempty"`   // exact amount; compared with |amount| under Signs (a leading minus selects negative amounts)
	Range      string   `json:"range,omitempty"`    // FROM:TO, |amount| in [FROM, TO)
	Segments   []string `json:"segments,omitempty"` // COLUMN=VALUE, exact text match; COLUMN= matches blanks; year=YYYY, quarter=YYYY-Qn, month=YYYY-MM use posted
	// Extra predicates built by leadline itself, e.g. a duplicate group's key.
	Extra []population.Predicate `json:"-"`
	// Described says in words what Extra selects, for headings and JSON.
	Described []string `json:"described,omitempty"`
}

// Built is a selection ready to run.
type Built struct {
	Where       population.Predicate
	AmountType  population.AmountType
	Description []string // one phrase per part, for headings and JSON
}

// Build checks the selection against the workspace and returns its
// predicate. Errors say which flag was wrong and what to give instead.
func Build(ctx context.Context, ws *workspace.Workspace, s Selection) (*Built, error) {
	// A negative exact amount selects negative amounts.
	if a := strings.TrimSpace(s.Amount); strings.HasPrefix(a, "-") {
		if s.Signs == population.Positive {
			return nil, fmt.Errorf("--amount %s is negative but --signs positive was given; give --amount %s --signs negative", a, a[1:])
		}
		if s.Signs == "" {
			s.Signs = population.Negative
		}
		s.Amount = a[1:]
	}
	s.Spec = s.Spec.WithDefaults()
	pop, err := population.Prepare(ctx, ws, s.Spec)
	if err != nil {
		return nil, err
	}
	at := pop.AmountType
	b := &Built{AmountType: at}
	desc := []string{"signs " + s.Signs, "|amount| >= " + s.Min}
	if strings.TrimSpace(s.Where) != "" {
		desc = append(desc, "where "+strings.TrimSpace(s.Where))
	}
	ps := []population.Predicate{pop.Where()}
	x := pop.Abs("amount")

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
		ps = append(ps, population.Predicate{SQL: p})
		if t == benford.LastTwo && !s.LastTwoAll {
			ps = append(ps, population.Predicate{SQL: fmt.Sprintf("%s >= %s", x, at.Literal(LastTwoMinUnits(reading, at)))})
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
		u, ok := at.ExactUnits(r)
		if !ok {
			return nil, fmt.Errorf("--amount %s has more decimal places than the ledger's amounts (%s)", s.Amount, at.SQL())
		}
		if u.Cmp(at.MaxUnits()) > 0 {
			return nil, fmt.Errorf("--amount %s is above the largest amount a %s can hold", s.Amount, at.SQL())
		}
		ps = append(ps, population.Predicate{SQL: x + " = CAST(? AS " + at.SQL() + ")", Args: []any{at.Text(u)}})
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
	b.Where = population.And(ps...)
	b.Description = desc
	return b, nil
}

// rangePredicate reads FROM:TO, a half-open range [FROM, TO) of absolute
// amounts. Either end may be left out: 4500: or :5000.
func rangePredicate(spec, x string, at population.AmountType) (population.Predicate, string, error) {
	from, to, ok := strings.Cut(spec, ":")
	if !ok {
		return population.Predicate{}, "", fmt.Errorf("--range %q: write FROM:TO, e.g. --range 4500:5000 for 4,500.00 <= |amount| < 5,000.00", spec)
	}
	from, to = strings.TrimSpace(from), strings.TrimSpace(to)
	if from == "" && to == "" {
		return population.Predicate{}, "", fmt.Errorf("--range %q: give at least one end", spec)
	}
	var ps []population.Predicate
	var lo, hi *big.Rat
	var desc []string
	if from != "" {
		r, err := parseDecimal(from)
		if err != nil {
			return population.Predicate{}, "", fmt.Errorf("--range: %w", err)
		}
		lo = r
	}
	if to != "" {
		r, err := parseDecimal(to)
		if err != nil {
			return population.Predicate{}, "", fmt.Errorf("--range: %w", err)
		}
		hi = r
	}
	for _, r := range []*big.Rat{lo, hi} {
		if r != nil && r.Sign() < 0 {
			return population.Predicate{}, "", fmt.Errorf("--range %q: ranges are on absolute amounts; give non-negative ends and choose the sign with --signs negative", spec)
		}
	}
	if lo != nil && hi != nil && lo.Cmp(hi) >= 0 {
		return population.Predicate{}, "", fmt.Errorf("--range %q: FROM must be below TO (the range is FROM <= |amount| < TO)", spec)
	}
	if lo != nil {
		u := at.CeilUnits(lo)
		if u.Cmp(at.MaxUnits()) > 0 {
			return population.Predicate{SQL: "FALSE"}, "", nil
		}
		ps = append(ps, population.Predicate{SQL: x + " >= CAST(? AS " + at.SQL() + ")", Args: []any{at.Text(u)}})
		desc = append(desc, from+" <= |amount|")
	}
	if hi != nil {
		u := at.CeilUnits(hi)
		if u.Cmp(at.MaxUnits()) <= 0 {
			ps = append(ps, population.Predicate{SQL: x + " < CAST(? AS " + at.SQL() + ")", Args: []any{at.Text(u)}})
		}
		if len(desc) > 0 {
			desc[0] += " < " + to
		} else {
			desc = append(desc, "|amount| < "+to)
		}
	}
	return population.And(ps...), desc[0], nil
}

// segmentPredicate reads COLUMN=VALUE. The value matches the column's text
// exactly; an empty value matches blanks (NULL or ”). year=YYYY,
// quarter=YYYY-Qn and month=YYYY-MM select a period of the posted date
// (an empty value: the records without one) unless the ledger has a
// column of that name.
func segmentPredicate(ctx context.Context, ws *workspace.Workspace, spec string) (population.Predicate, string, error) {
	col, val, ok := strings.Cut(spec, "=")
	col = strings.TrimSpace(col)
	if !ok || col == "" {
		return population.Predicate{}, "", fmt.Errorf("--segment %q: write COLUMN=VALUE, e.g. --segment counterparty=V00123", spec)
	}
	name, typ, err := ledgerColumn(ctx, ws, col)
	if err != nil {
		if expr, label, ok := segment.PeriodOfPosted(col); ok {
			if val == "" {
				return population.Predicate{SQL: "posted IS NULL"}, label + " blank", nil
			}
			if err := segment.CheckPeriod(col, val); err != nil {
				return population.Predicate{}, "", fmt.Errorf("--segment %q: %w (the %s of the posted date)", spec, err, label)
			}
			return population.Predicate{SQL: expr + " = ?", Args: []any{val}}, label + " " + val, nil
		}
		return population.Predicate{}, "", fmt.Errorf("--segment %q: %w", spec, err)
	}
	q := quoteIdent(name)
	text := q
	if !strings.EqualFold(typ, "VARCHAR") {
		text = "CAST(" + q + " AS VARCHAR)"
	}
	if val == "" {
		return population.Predicate{SQL: "nullif(trim(" + text + "), '') IS NULL"}, name + " blank", nil
	}
	return population.Predicate{SQL: text + " = ?", Args: []any{val}}, name + " = " + val, nil
}
