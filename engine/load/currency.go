package load

import (
	"context"
	"database/sql"
	"fmt"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// exactHint are hints that name a column only when they are its whole
// name: contained in a longer name they mean something else (curr in
// currentperiod, valuta in valutadatum, the value date).
var exactHint = map[string]bool{"curr": true, "valuta": true, "devise": true}

// checkCurrencyMarkers decides where a file's currency comes from when it
// has no currency column: when every amount text names its currency (EUR
// 12.00, 12.00 USD, € 12,00), each row's marker; when none does, nowhere
// (the rows carry no currency). A file in which some amounts carry a
// marker and others none is refused: the unmarked amounts could be in any
// of the currencies, and a control total over them would add one currency
// to another.
func checkCurrencyMarkers(ctx context.Context, ws *workspace.Workspace, src *Source) error {
	if _, ok := src.mapping.Columns["currency"]; ok {
		return nil
	}
	texts := amountTexts(src)
	if texts == "" {
		return nil
	}
	var marked, unmarked, mpos, upos int64
	var mtext, utext, codes string
	q := queries.Render("load_currency_markers", map[string]string{"texts": texts})
	if err := ws.Conn.QueryRowContext(ctx, q).Scan(&marked, &mpos, &mtext, &unmarked, &upos, &utext, &codes); err != nil {
		return fmt.Errorf("%s: reading the amounts' currency markers: %s", src.Path, oneLine(err))
	}
	switch {
	case marked == 0:
		return nil
	case unmarked == 0:
		src.mapping.CurrencyFromMarkers = true
		return nil
	}
	amountCol := src.mapping.Columns["amount"]
	if src.mapping.Debit != "" {
		amountCol = src.mapping.Debit + " / " + src.mapping.Credit
	}
	return fmt.Errorf("%s: %d amounts of column %s name a currency (%s; first at line %d: %q) and %d name none (first at line %d: %q), and the file has no currency column, so the currency of the unmarked amounts is unknown and no control total could keep currencies apart; give the currency column with --map currency=COLUMN if the file has one, or split the file so that each part's amounts all carry a marker or all carry none; nothing was loaded",
		src.Path, marked, amountCol, codes, lineOf(ctx, ws, src, mpos), mtext, unmarked, lineOf(ctx, ws, src, upos), utext)
}

// currencyFromMarkers is the select-list entry that fills the ledger's
// currency from each row's amount marker, for a file whose amounts all
// carry one (see checkCurrencyMarkers); "" otherwise. It reads the
// grammar's parts the load computes anyway (ll_parts for an amount column,
// ll_parts_d and ll_parts_c for debit and credit): a text with a marker
// never takes the fast path, so its parts are always there.
func currencyFromMarkers(src *Source, storedOf map[string]storage) string {
	m := src.mapping
	if !m.CurrencyFromMarkers {
		return ""
	}
	of := func(col, parts string) string {
		if col == "" || isNumeric(storedOf[col].typ) {
			return ""
		}
		return "nullif(ll_amount_currency(" + parts + "), '')"
	}
	var exprs []string
	if m.Debit != "" {
		for _, e := range []string{of(m.Debit, "ll_parts_d"), of(m.Credit, "ll_parts_c")} {
			if e != "" {
				exprs = append(exprs, e)
			}
		}
	} else if e := of(m.Columns["amount"], "ll_parts"); e != "" {
		exprs = append(exprs, e)
	}
	switch len(exprs) {
	case 0:
		return ""
	case 1:
		return exprs[0] + " AS currency"
	}
	return "coalesce(" + exprs[0] + ", " + exprs[1] + ") AS currency"
}

// CurrencyColumn is the SQL for the ledger's currency: the column, or a
// NULL text for a workspace made before it (opened without a load since).
func CurrencyColumn(ctx context.Context, conn interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
}) (string, error) {
	rows, err := conn.QueryContext(ctx, queries.Get("ledger_columns"))
	if err != nil {
		return "", err
	}
	defer rows.Close()
	for rows.Next() {
		var n, t string
		if err := rows.Scan(&n, &t); err != nil {
			return "", err
		}
		if n == "currency" {
			return "currency", nil
		}
	}
	return "CAST(NULL AS VARCHAR)", rows.Err()
}

// CurrencyRows is one currency of the ledger ("" for rows that name
// none), its rows and control totals.
type CurrencyRows struct {
	Currency string `json:"currency"`
	Rows     int64  `json:"rows"`
	Positive string `json:"sum_positive"`
	Negative string `json:"sum_negative"`
	Net      string `json:"net"`
}

// Currencies lists the ledger's currencies with their rows and totals.
func Currencies(ctx context.Context, ws *workspace.Workspace) ([]CurrencyRows, error) {
	col, err := CurrencyColumn(ctx, ws.Conn)
	if err != nil {
		return nil, err
	}
	rows, err := ws.Conn.QueryContext(ctx, queries.Render("ledger_currencies", map[string]string{"currency": col}))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []CurrencyRows
	for rows.Next() {
		var c CurrencyRows
		if err := rows.Scan(&c.Currency, &c.Rows, &c.Positive, &c.Negative, &c.Net); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// CurrencyLabel names a currency in tables: "(none)" for rows without one.
func CurrencyLabel(c string) string {
	if c == "" {
		return "(none)"
	}
	return c
}

// CurrencyParser reads the currency marker of single amount texts with the
// load's own SQL, for the tests and the fuzzer that hold it against
// engine/amount.Currency.
type CurrencyParser struct{ stmt *sql.Stmt }

// NewCurrencyParser prepares the marker expression on ws.
func NewCurrencyParser(ctx context.Context, ws *workspace.Workspace) (*CurrencyParser, error) {
	st, err := ws.Conn.PrepareContext(ctx, "SELECT ll_amount_currency(ll_amount_parts(CAST(? AS VARCHAR)))")
	if err != nil {
		return nil, err
	}
	return &CurrencyParser{stmt: st}, nil
}

// Currency returns the code s names ("" for none), and false when s is
// no amount at all.
func (p *CurrencyParser) Currency(ctx context.Context, s string) (string, bool, error) {
	var c sql.NullString
	if err := p.stmt.QueryRowContext(ctx, s).Scan(&c); err != nil {
		return "", false, err
	}
	return c.String, c.Valid, nil
}

// Close releases the prepared statement.
func (p *CurrencyParser) Close() error { return p.stmt.Close() }
