package pack

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/tabular"
)

type namedFile struct {
	id           int64
	source, path string
}

// inputCurrencies adds the table of each input's totals per currency, with
// each side of a debit/credit extract, when a file names a currency or is
// a debit/credit extract.
func (r *runner) inputCurrencies(files []namedFile, byFile map[int64][]load.CurrencyTotal) {
	if !load.ShowCurrencies(byFile) {
		return
	}
	t := &tabular.Table{Columns: []string{"source", "file", "currency", "rows", "sum_positive", "sum_negative", "net",
		"debit_rows", "sum_debit", "credit_rows", "sum_credit", "both_sides_rows", "ties"}}
	for _, f := range files {
		for _, c := range byFile[f.id] {
			row := []any{f.source, f.path, c.Currency, c.Rows, dec(c.Positive), dec(c.Negative), dec(c.Net), nil, nil, nil, nil, nil, nil}
			if c.DebitRows != nil {
				row[7], row[8], row[9], row[10], row[11], row[12] = *c.DebitRows, dec(*c.Debit), *c.CreditRows, dec(*c.Credit), *c.BothSides, c.Ties != nil && *c.Ties
			}
			t.Add(row...)
		}
	}
	r.add(output.FromTabular(t, "input_currencies", "Input files: control totals per currency (never summed across currencies); debit/credit sides, rows with both sides, and whether debits - credits = net", "completeness",
		map[string]output.Kind{"currency": output.Text, "rows": output.Count, "sum_positive": output.Money, "sum_negative": output.Money, "net": output.Money,
			"debit_rows": output.Count, "sum_debit": output.Money, "credit_rows": output.Count, "sum_credit": output.Money, "both_sides_rows": output.Count, "ties": output.Bool}))
}

// ledgerCurrencies puts the ledger's totals per currency in the summary
// when it holds more than one, in place of sums across currencies.
func (r *runner) ledgerCurrencies(ctx context.Context, c *output.Completeness) error {
	curs, err := load.Currencies(ctx, r.ws)
	if err != nil {
		return err
	}
	if len(curs) < 2 {
		return nil
	}
	c.SumPositive, c.SumNegative, c.Net = "", "", ""
	for _, cur := range curs {
		c.Currencies = append(c.Currencies, output.CurrencyTotal{Currency: cur.Currency, Rows: cur.Rows, SumPositive: cur.Positive, SumNegative: cur.Negative, Net: cur.Net})
	}
	return nil
}

// entityTable is the entity totals, per currency when the ledger names any.
func entityTable(ents []load.EntityTotal) *tabular.Table {
	withCur := false
	for _, e := range ents {
		if e.Currency != "" {
			withCur = true
		}
	}
	if !withCur {
		t := &tabular.Table{Columns: []string{"entity", "rows", "sum_positive", "sum_negative", "net"}}
		for _, e := range ents {
			t.Add(e.Entity, e.Rows, dec(e.Positive), dec(e.Negative), dec(e.Net))
		}
		return t
	}
	t := &tabular.Table{Columns: []string{"entity", "currency", "rows", "sum_positive", "sum_negative", "net"}}
	for _, e := range ents {
		t.Add(e.Entity, e.Currency, e.Rows, dec(e.Positive), dec(e.Negative), dec(e.Net))
	}
	return t
}

// currencyFinding adds to the completeness finding the net per currency
// when there are several, and what the debit/credit extracts showed.
func currencyFinding(c *output.Completeness, byFile map[int64][]load.CurrencyTotal) string {
	var parts []string
	if len(c.Currencies) > 1 {
		var nets []string
		for _, cur := range c.Currencies {
			nets = append(nets, fmt.Sprintf("%s net %s in %d rows", load.CurrencyLabel(cur.Currency), cur.Net, cur.Rows))
		}
		parts = append(parts, fmt.Sprintf("amounts in %d currencies, totals per currency (never summed): %s", len(c.Currencies), strings.Join(nets, "; ")))
	}
	var both int64
	dc, ties := false, true
	for _, cs := range byFile {
		for _, t := range cs {
			if t.DebitRows == nil {
				continue
			}
			dc = true
			both += *t.BothSides
			if t.Ties == nil || !*t.Ties {
				ties = false
			}
		}
	}
	if dc {
		s := "debit/credit extracts: debits - credits = net loaded in every file and currency"
		if !ties {
			s = "WARNING: in a debit/credit extract debits - credits differ from the net loaded, see the input_currencies table"
		}
		if both > 0 {
			s += fmt.Sprintf("; %d rows carry both a debit and a credit (netted; listed in the workspace's both_sides table)", both)
		}
		parts = append(parts, s)
	}
	if len(parts) == 0 {
		return ""
	}
	return "; " + strings.Join(parts, "; ")
}
