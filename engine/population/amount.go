package population

import (
	"context"
	"fmt"
	"math/big"
	"regexp"
	"strconv"
	"strings"

	"github.com/duckdb/duckdb-go/v2"
	"github.com/leadline/leadline/engine/workspace"
)

// AmountType is the exact decimal type of the ledger's amount column:
// DECIMAL(Precision, Scale). Every amount is a whole number of units of
// 10^-Scale; the largest is 10^Precision - 1 units.
type AmountType struct {
	Precision int
	Scale     int
}

// SQL returns the type as DuckDB writes it, e.g. DECIMAL(18,2).
func (t AmountType) SQL() string { return fmt.Sprintf("DECIMAL(%d,%d)", t.Precision, t.Scale) }

var decimalTypeRE = regexp.MustCompile(`^DECIMAL\((\d+),\s*(\d+)\)$`)

// ParseAmountType reads a DuckDB type name such as "DECIMAL(18,2)".
func ParseAmountType(s string) (AmountType, error) {
	m := decimalTypeRE.FindStringSubmatch(strings.ToUpper(strings.TrimSpace(s)))
	if m == nil {
		return AmountType{}, fmt.Errorf("the ledger's amount column is %s, not an exact DECIMAL; reload the workspace", s)
	}
	p, _ := strconv.Atoi(m[1])
	sc, _ := strconv.Atoi(m[2])
	if p < 1 || p > 38 || sc < 0 || sc > p {
		return AmountType{}, fmt.Errorf("amount type %s is out of range", s)
	}
	return AmountType{Precision: p, Scale: sc}, nil
}

// LedgerAmountType reads the amount type of the workspace's ledger.
func LedgerAmountType(ctx context.Context, ws *workspace.Workspace) (AmountType, error) {
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return AmountType{}, err
	}
	for _, c := range cols {
		if strings.EqualFold(c.Name, "amount") {
			return ParseAmountType(c.Type)
		}
	}
	return AmountType{}, fmt.Errorf("the workspace holds no ledger yet: load some files first with `leadline load`")
}

// MaxUnits is the largest amount the type holds, in units: 10^p - 1.
func (t AmountType) MaxUnits() *big.Int {
	m := Pow10(t.Precision)
	return m.Sub(m, big.NewInt(1))
}

// Literal writes a non-negative number of units as a typed SQL literal,
// e.g. 470000 units at scale 2 -> 4700.00::DECIMAL(18,2). It is only used
// for numbers leadline computes itself (bin bounds); user values are bound.
func (t AmountType) Literal(units *big.Int) string {
	return t.Text(units) + "::" + t.SQL()
}

// Text writes units as decimal text with Scale places: 5 units at scale 2
// -> "0.05"; -123456 -> "-1234.56".
func (t AmountType) Text(units *big.Int) string {
	neg := units.Sign() < 0
	s := new(big.Int).Abs(units).String()
	if t.Scale > 0 {
		if len(s) <= t.Scale {
			s = strings.Repeat("0", t.Scale-len(s)+1) + s
		}
		s = s[:len(s)-t.Scale] + "." + s[len(s)-t.Scale:]
	}
	if neg {
		s = "-" + s
	}
	return s
}

// DecimalText renders a DECIMAL scanned from DuckDB with all its decimal
// places ("5.00", not "5"), so that amounts print as the ledger holds them.
func DecimalText(d duckdb.Decimal) string {
	if d.Value == nil {
		return ""
	}
	return AmountType{Precision: int(d.Width), Scale: int(d.Scale)}.Text(d.Value)
}

// CeilUnits returns ceil(r * 10^Scale): the smallest whole number of units
// at or above r. For amounts x held at this scale, x >= r <=> units(x) >=
// CeilUnits(r), and x < r <=> units(x) < CeilUnits(r).
func (t AmountType) CeilUnits(r *big.Rat) *big.Int {
	v := new(big.Rat).Mul(r, new(big.Rat).SetInt(Pow10(t.Scale)))
	q, m := new(big.Int).DivMod(v.Num(), v.Denom(), new(big.Int))
	// DivMod is Euclidean: q = floor for a positive denominator.
	if m.Sign() != 0 {
		q.Add(q, big.NewInt(1))
	}
	return q
}

// ExactUnits returns r in units when r has at most Scale decimal places.
func (t AmountType) ExactUnits(r *big.Rat) (*big.Int, bool) {
	v := new(big.Rat).Mul(r, new(big.Rat).SetInt(Pow10(t.Scale)))
	if !v.IsInt() {
		return nil, false
	}
	return new(big.Int).Set(v.Num()), true
}

// Pow10 returns 10^n.
func Pow10(n int) *big.Int {
	return new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(n)), nil)
}
