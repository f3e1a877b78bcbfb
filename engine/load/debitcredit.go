package load

import (
	"context"
	"database/sql"
	"fmt"
	"math/big"

	"github.com/leadline/leadline/queries"
)

// CurrencyTotal is one file's control totals in one currency ("" when the
// file names none). For a debit/credit extract it also holds each side on
// its own: the rows whose debit (credit) is neither blank nor zero and their
// total, the rows with both sides, and whether debits - credits = net.
type CurrencyTotal struct {
	Currency   string  `json:"currency"`
	Rows       int64   `json:"rows"`
	Positive   string  `json:"sum_positive"`
	Negative   string  `json:"sum_negative"`
	Net        string  `json:"net"`
	DebitRows  *int64  `json:"debit_rows,omitempty"`
	Debit      *string `json:"sum_debit,omitempty"`
	CreditRows *int64  `json:"credit_rows,omitempty"`
	Credit     *string `json:"sum_credit,omitempty"`
	BothSides  *int64  `json:"both_sides_rows,omitempty"`
	Ties       *bool   `json:"ties,omitempty"` // sum_debit - sum_credit = net
}

// BothSides are the loaded rows of a debit/credit extract whose debit and
// credit are both filled: their amount is debit - credit, as for every
// row, but a row that carries both sides is unusual enough to be looked at.
type BothSides struct {
	Rows       int64   `json:"rows"`
	FirstLines []int64 `json:"first_lines"` // at most BothSidesShown
	Drill      string  `json:"drill"`       // the command that lists them all
}

// BothSidesShown is how many lines of rows with both sides the load's
// report names; all of them are in the workspace's both_sides table.
const BothSidesShown = 20

// fileTotals computes, stores and reports one file's totals per currency,
// and for a debit/credit extract each side's own totals and the rows with
// both sides filled. It runs inside the load's transaction, after the
// file's rows are final.
func fileTotals(ctx context.Context, tx *sql.Tx, src *Source, fr *FileReport, opts Options, amountType string, storedOf map[string]storage) error {
	rows, err := tx.QueryContext(ctx, queries.Get("load_currency_totals"), fr.FileID)
	if err != nil {
		return fmt.Errorf("%s: totals per currency: %w", src.Path, err)
	}
	fr.Currencies = []CurrencyTotal{}
	for rows.Next() {
		var c CurrencyTotal
		if err := rows.Scan(&c.Currency, &c.Rows, &c.Positive, &c.Negative, &c.Net); err != nil {
			rows.Close()
			return err
		}
		fr.Currencies = append(fr.Currencies, c)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	m := src.mapping
	if m.Debit != "" {
		if err := debitCredit(ctx, tx, src, fr, opts, amountType, storedOf); err != nil {
			return fmt.Errorf("%s: debit and credit totals: %w", src.Path, err)
		}
	}
	for _, c := range fr.Currencies {
		if _, err := tx.ExecContext(ctx, queries.Get("load_insert_file_totals"), fr.FileID, c.Currency, c.Rows, c.Positive, c.Negative, c.Net,
			c.DebitRows, c.Debit, c.CreditRows, c.Credit, c.BothSides); err != nil {
			return err
		}
	}
	if len(fr.Currencies) > 1 {
		// One sum over several currencies means nothing: the file's
		// totals are the per-currency ones.
		fr.Positive, fr.Negative, fr.Net = "", "", ""
	}
	return nil
}

// sideSQL is one side's value on a loaded ledger row, parsed again from
// the text kept as sent (NULL for a blank side).
func sideSQL(col string, opts Options, amountType string, storedOf map[string]storage) string {
	st := storedOf[col]
	dc := opts.DecimalComma && !isNumeric(st.typ)
	return fmt.Sprintf("TRY_CAST(ll_amount_canonical(%s, %t) AS %s)", queries.QuoteIdent(st.stored), dc, amountType)
}

func debitCredit(ctx context.Context, tx *sql.Tx, src *Source, fr *FileReport, opts Options, amountType string, storedOf map[string]storage) error {
	m := src.mapping
	sides := map[string]string{"debit": sideSQL(m.Debit, opts, amountType, storedOf), "credit": sideSQL(m.Credit, opts, amountType, storedOf)}
	rows, err := tx.QueryContext(ctx, queries.Render("load_debit_credit_totals", sides), fr.FileID)
	if err != nil {
		return err
	}
	byCur := map[string]int{}
	for i, c := range fr.Currencies {
		byCur[c.Currency] = i
	}
	for rows.Next() {
		var cur, debit, credit, net string
		var dn, cn, both int64
		if err := rows.Scan(&cur, &dn, &debit, &cn, &credit, &both, &net); err != nil {
			rows.Close()
			return err
		}
		i, ok := byCur[cur]
		if !ok {
			rows.Close()
			return fmt.Errorf("currency %q in the debit/credit totals but not in the file's totals", cur)
		}
		c := &fr.Currencies[i]
		ties := tiesExactly(debit, credit, net) && net == c.Net
		c.DebitRows, c.Debit, c.CreditRows, c.Credit, c.BothSides, c.Ties = &dn, &debit, &cn, &credit, &both, &ties
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	for _, c := range fr.Currencies {
		if c.Ties == nil || !*c.Ties {
			return fmt.Errorf("internal accounting error: in currency %s, debits %v - credits %v do not equal the net loaded %s; nothing was loaded", CurrencyLabel(c.Currency), deref2(c.Debit), deref2(c.Credit), c.Net)
		}
	}
	if _, err := tx.ExecContext(ctx, queries.Render("load_insert_both_sides", sides), fr.FileID); err != nil {
		return err
	}
	bs := &BothSides{FirstLines: []int64{}}
	for _, c := range fr.Currencies {
		bs.Rows += *c.BothSides
	}
	if bs.Rows == 0 {
		return nil
	}
	lr, err := tx.QueryContext(ctx, queries.Get("load_both_sides_first"), fr.FileID, BothSidesShown)
	if err != nil {
		return err
	}
	defer lr.Close()
	for lr.Next() {
		var l int64
		if err := lr.Scan(&l); err != nil {
			return err
		}
		bs.FirstLines = append(bs.FirstLines, l)
	}
	bs.Drill = fmt.Sprintf("leadline drill --signs both --min 0 --where \"row_id IN (SELECT row_id FROM both_sides WHERE file_id = %d)\"", fr.FileID)
	fr.BothSides = bs
	fr.Warnings = append(fr.Warnings, fmt.Sprintf("%d rows have both a debit and a credit (amount = debit - credit, netted); they are listed in the workspace's both_sides table", bs.Rows))
	return lr.Err()
}

// tiesExactly checks debit - credit = net in exact rational arithmetic.
func tiesExactly(debit, credit, net string) bool {
	d, ok1 := new(big.Rat).SetString(debit)
	c, ok2 := new(big.Rat).SetString(credit)
	n, ok3 := new(big.Rat).SetString(net)
	return ok1 && ok2 && ok3 && new(big.Rat).Sub(d, c).Cmp(n) == 0
}

func deref2(p *string) string {
	if p == nil {
		return "?"
	}
	return *p
}

// FileTotals reads every file's stored totals per currency, by file_id
// (none for a workspace made before they were stored).
func FileTotals(ctx context.Context, ws interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
	QueryRowContext(context.Context, string, ...any) *sql.Row
}) (map[int64][]CurrencyTotal, error) {
	out := map[int64][]CurrencyTotal{}
	var exists bool
	if err := ws.QueryRowContext(ctx, queries.Get("workspace_table_exists"), "file_totals").Scan(&exists); err != nil || !exists {
		return out, err
	}
	rows, err := ws.QueryContext(ctx, queries.Get("file_totals_all"))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var id int64
		var c CurrencyTotal
		var dn, cn, both sql.NullInt64
		var d, cr sql.NullString
		if err := rows.Scan(&id, &c.Currency, &c.Rows, &c.Positive, &c.Negative, &c.Net, &dn, &d, &cn, &cr, &both); err != nil {
			return nil, err
		}
		if dn.Valid {
			ties := tiesExactly(d.String, cr.String, c.Net)
			c.DebitRows, c.Debit, c.CreditRows, c.Credit, c.BothSides, c.Ties = &dn.Int64, &d.String, &cn.Int64, &cr.String, &both.Int64, &ties
		}
		out[id] = append(out[id], c)
	}
	return out, rows.Err()
}

// ShowCurrencies says whether totals per currency tell more than the
// file's totals: some currency is named, or a file is a debit/credit
// extract.
func ShowCurrencies(byFile map[int64][]CurrencyTotal) bool {
	for _, cs := range byFile {
		for _, c := range cs {
			if c.Currency != "" || c.DebitRows != nil {
				return true
			}
		}
	}
	return false
}
