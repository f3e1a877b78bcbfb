package report

import (
	"context"
	"fmt"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
)

// currencyRows adds the files' stored totals per currency to the
// completeness section, when they say more than the files' own totals,
// and marks the files whose rows are in several currencies: their sums
// across currencies are not shown.
func currencyRows(ctx context.Context, ws *workspace.Workspace, c *Completeness) error {
	byFile, err := load.FileTotals(ctx, ws.Conn)
	if err != nil {
		return err
	}
	if !load.ShowCurrencies(byFile) {
		return nil
	}
	for i := range c.Files {
		f := &c.Files[i]
		cs := byFile[f.FileID]
		if len(cs) > 1 {
			f.PerCurrency = true
		}
		for _, t := range cs {
			c.Currencies = append(c.Currencies, CurrencyRow{File: f.Name, Currency: t.Currency, Rows: t.Rows, Positive: t.Positive, Negative: t.Negative, Net: t.Net,
				DebitRows: t.DebitRows, Debit: t.Debit, CreditRows: t.CreditRows, Credit: t.Credit, BothSides: t.BothSides, Ties: t.Ties,
				base: fmt.Sprintf("file_totals/%d/%s", f.FileID, escapePointer(t.Currency))})
		}
	}
	return nil
}

// derefAny is the value a pointer of a CurrencyRow holds (zero for nil).
func derefAny(p any) any {
	switch v := p.(type) {
	case *int64:
		if v != nil {
			return *v
		}
		return int64(0)
	case *string:
		if v != nil {
			return *v
		}
		return ""
	case *bool:
		return v != nil && *v
	}
	return p
}

// currencyRowFromTable reads one row of a pack run's input_currencies
// table.
func currencyRowFromTable(get func(string) *node, cell func(string) string) CurrencyRow {
	r := CurrencyRow{File: get("file").str, Currency: get("currency").str, Rows: nodeInt(get("rows")),
		Positive: nodeText(get("sum_positive")), Negative: nodeText(get("sum_negative")), Net: nodeText(get("net")), src: cell}
	if d := get("debit_rows"); d != nil && d.kind == 'n' {
		dn, cn, both := nodeInt(d), nodeInt(get("credit_rows")), nodeInt(get("both_sides_rows"))
		debit, credit := nodeText(get("sum_debit")), nodeText(get("sum_credit"))
		ties := get("ties").kind == 'b' && get("ties").b
		r.DebitRows, r.Debit, r.CreditRows, r.Credit, r.BothSides, r.Ties = &dn, &debit, &cn, &credit, &both, &ties
	}
	return r
}
