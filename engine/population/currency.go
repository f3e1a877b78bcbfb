package population

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// CurrencyCount is one currency of the amounts a population tests ("" for
// rows that name none) and how many they are.
type CurrencyCount struct {
	Currency string
	Rows     int64
}

// Currencies lists the currencies of the amounts p tests.
func Currencies(ctx context.Context, ws *workspace.Workspace, p *Population) ([]CurrencyCount, error) {
	col, err := load.CurrencyColumn(ctx, ws.Conn)
	if err != nil {
		return nil, err
	}
	w := p.Where()
	rows, err := ws.Conn.QueryContext(ctx, queries.Render("population_currencies", map[string]string{"currency": col, "where": w.SQL}), w.Args...)
	if err != nil {
		return nil, fmt.Errorf("reading the currencies of the amounts tested: %w", err)
	}
	defer rows.Close()
	var out []CurrencyCount
	for rows.Next() {
		var c CurrencyCount
		if err := rows.Scan(&c.Currency, &c.Rows); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// OneCurrency returns the one currency of the amounts p tests ("" when
// they name none), or an error when they are in several: a limit or a
// range band is an amount in one currency, and 5,000 in one currency is
// not 5,000 in another. why says it for the test ("a limit is an amount
// in one currency").
func OneCurrency(ctx context.Context, ws *workspace.Workspace, p *Population, why string) (string, error) {
	curs, err := Currencies(ctx, ws, p)
	if err != nil {
		return "", err
	}
	switch len(curs) {
	case 0:
		return "", nil
	case 1:
		return curs[0].Currency, nil
	}
	var listed []string
	for _, c := range curs {
		listed = append(listed, fmt.Sprintf("%s: %d rows", load.CurrencyLabel(c.Currency), c.Rows))
	}
	return "", fmt.Errorf("the amounts tested are in %d currencies (%s), and %s: give --currency %s to test one (run once per currency), or a filter that keeps one currency (--where, or in a pack a [filters] entry such as %s named by the step's filter)",
		len(curs), strings.Join(listed, ", "), why, currencyArg(curs[0].Currency), packFilter(curs[0].Currency))
}

func packFilter(code string) string {
	if code == "" {
		return `no_currency = "currency IS NULL"`
	}
	return strings.ToLower(code) + ` = "currency = ` + queries.QuoteString(code) + `"`
}

func currencyArg(code string) string {
	if code == "" {
		return "none"
	}
	return code
}

// CurrencyWhere adds to a filter the condition that keeps the amounts of
// one currency ("none" for rows without one). The code is quoted as an
// SQL string, and the whole filter is checked by sqlguard as any --where.
func CurrencyWhere(where, currency string) string {
	c := strings.TrimSpace(currency)
	if c == "" {
		return where
	}
	cond := "currency = " + queries.QuoteString(c)
	if strings.EqualFold(c, "none") {
		cond = "currency IS NULL"
	}
	if strings.TrimSpace(where) == "" {
		return cond
	}
	return "(" + strings.TrimSpace(where) + ") AND " + cond
}
