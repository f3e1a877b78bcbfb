package main

import (
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/tabular"
)

// printFileCurrencies writes each file's totals per currency when a file
// of the load names a currency or is a debit/credit extract: one line per
// file and currency, never a sum across currencies, with each side of a
// debit/credit extract and whether debits - credits = net.
func printFileCurrencies(w io.Writer, rep *load.Report) error {
	show, dc := false, false
	for _, f := range rep.Files {
		for _, c := range f.Currencies {
			if c.Currency != "" {
				show = true
			}
			if c.DebitRows != nil {
				show, dc = true, true
			}
		}
	}
	if !show {
		return nil
	}
	cols := []string{"file", "currency", "rows", "sum_positive", "sum_negative", "net"}
	if dc {
		cols = append(cols, "debit_rows", "sum_debit", "credit_rows", "sum_credit", "both_sides", "debit-credit=net")
	}
	t := &tabular.Table{Columns: cols}
	for _, f := range rep.Files {
		for _, c := range f.Currencies {
			row := []any{f.Name, load.CurrencyLabel(c.Currency), c.Rows, c.Positive, c.Negative, c.Net}
			if dc {
				if c.DebitRows != nil {
					ties := "no"
					if c.Ties != nil && *c.Ties {
						ties = "ties"
					}
					row = append(row, *c.DebitRows, *c.Debit, *c.CreditRows, *c.Credit, *c.BothSides, ties)
				} else {
					row = append(row, "", "", "", "", "", "")
				}
			}
			t.Add(row...)
		}
	}
	fmt.Fprintln(w, "\nControl totals per file and currency (never summed across currencies):")
	return t.WriteText(w, 0)
}

// printBothSides names the rows of a debit/credit extract with both sides
// filled: how many, the first lines, and the command that lists them all.
func printBothSides(w io.Writer, f load.FileReport) {
	b := f.BothSides
	if b == nil || b.Rows == 0 {
		return
	}
	lines := make([]string, len(b.FirstLines))
	for i, l := range b.FirstLines {
		lines[i] = fmt.Sprint(l)
	}
	more := ""
	if b.Rows > int64(len(b.FirstLines)) {
		more = fmt.Sprintf(" (first %d of %d)", len(b.FirstLines), b.Rows)
	}
	fmt.Fprintf(w, "  both sides filled: %d rows, lines %s%s; all of them: %s\n", b.Rows, strings.Join(lines, ", "), more, b.Drill)
}

func entitiesHaveCurrency(ents []load.EntityTotal) bool {
	for _, e := range ents {
		if e.Currency != "" {
			return true
		}
	}
	return false
}
