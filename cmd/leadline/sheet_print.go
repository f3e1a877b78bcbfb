package main

import (
	"fmt"
	"io"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/xlsxin"
)

// printSheet says which sheet of a workbook a load read (nothing for CSV
// and Parquet).
func printSheet(w io.Writer, s *load.SheetReport) {
	if s == nil {
		return
	}
	fmt.Fprintf(w, "  sheet %q (%d, %s), header at row %d; lines are sheet row numbers", s.Sheet, s.SheetIndex, s.Chosen, s.HeaderRow)
	if s.Date1904 {
		fmt.Fprint(w, "; 1904 date system")
	}
	fmt.Fprintf(w, "\n  formula cells: %d (read as their cached values)", s.FormulaCells)
	if s.EmptyRows > 0 {
		fmt.Fprintf(w, "; empty rows inside the table: %d (read and rejected, not held against --max-rejects)", s.EmptyRows)
	}
	fmt.Fprintln(w)
}

// printInspectSheets lists a workbook's sheets and the one inspected.
func printInspectSheets(w io.Writer, t *xlsxin.Table) {
	if t == nil {
		return
	}
	tab := &tabular.Table{Columns: []string{"sheet", "name", "kind", "rows", "read"}}
	for _, s := range t.Sheets {
		mark := ""
		if s.Index == t.SheetIndex {
			mark = "<- " + t.ChosenHow
		}
		tab.Add(s.Index, s.Name, s.Kind, s.Rows, mark)
	}
	tab.WriteText(w, 0)
	fmt.Fprintf(w, "\nSheet %q: header at row %d (rows above it: %d skipped as titles)", t.Sheet, t.HeaderRow, len(t.Skipped))
	if t.Date1904 {
		fmt.Fprint(w, "; 1904 date system")
	}
	fmt.Fprint(w, "\n\n")
}
