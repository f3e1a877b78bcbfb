package pack

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/output"
	"github.com/xuri/excelize/v2"
)

// The workbook read back with excelize: the summary sheet first, then one
// sheet per table in order, each with a frozen header row of headings in
// words (the CSV keeps the JSON names), an autofilter over the whole
// table, the CSV's values (numbers as numbers, equal to 15 significant
// digits, which is what a spreadsheet keeps; flags as words), and number
// formats by column (percent for proportions, the p-value format for
// p-values). The summary's references to sheets are links to them.
func TestWorkbookMatchesCSV(t *testing.T) {
	_, out, res := exampleRun(t)
	f, err := excelize.OpenFile(filepath.Join(out, output.WorkbookFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sheets := f.GetSheetList()
	sheetOf := output.SheetNames(res.Run.Tables)
	want := []string{output.SummarySheet}
	for _, tb := range res.Run.Tables {
		want = append(want, sheetOf[tb.Name])
	}
	if strings.Join(sheets, ",") != strings.Join(want, ",") {
		t.Fatalf("sheets %v, want %v", sheets, want)
	}
	if f.GetActiveSheetIndex() != 0 {
		t.Errorf("the workbook opens on sheet %d, not the summary", f.GetActiveSheetIndex())
	}
	// The summary names the pack and carries the caution.
	summary, _ := f.GetRows(output.SummarySheet)
	var text strings.Builder
	for _, r := range summary {
		text.WriteString(strings.Join(r, " | ") + "\n")
	}
	for _, s := range []string{"skerrimoor-fy2025", "Skerrimoor Kelp Group", "1 January to 31 December 2025", "not proof", "Key findings", "Rows read", "Limit clustering"} {
		if !strings.Contains(text.String(), s) {
			t.Errorf("summary sheet lacks %q:\n%s", s, text.String())
		}
	}
	cells := 0
	for _, tb := range res.Run.Tables {
		sheet := sheetOf[tb.Name]
		fh, err := os.Open(filepath.Join(out, "tables", tb.Name+".csv"))
		if err != nil {
			t.Fatal(err)
		}
		recs, err := csv.NewReader(fh).ReadAll()
		fh.Close()
		if err != nil {
			t.Fatal(err)
		}
		rows, err := f.GetRows(sheet, excelize.Options{RawCellValue: true})
		if err != nil {
			t.Fatal(err)
		}
		if len(rows) != len(recs) {
			t.Errorf("%s: %d sheet rows, %d CSV rows", sheet, len(rows), len(recs))
			continue
		}
		for c, col := range tb.Columns {
			if recs[0][c] != col.Name || c >= len(rows[0]) || rows[0][c] != output.Heading(col.Name) {
				t.Errorf("%s: column %s: CSV header %q, sheet heading %q", sheet, col.Name, recs[0][c], rows[0])
			}
		}
		tables, err := f.GetTables(sheet)
		last, _ := excelize.CoordinatesToCellName(len(tb.Columns), max(len(recs), 2))
		if err != nil || len(tables) != 1 || tables[0].Range != "A1:"+last {
			t.Errorf("%s: autofilter table %+v (%v), want A1:%s", sheet, tables, err, last)
		}
		panes, err := f.GetPanes(sheet)
		if err != nil || !panes.Freeze || panes.YSplit != 1 {
			t.Errorf("%s: header not frozen: %+v %v", sheet, panes, err)
		}
		for r := 1; r < len(recs); r++ {
			for c, want := range recs[r] {
				got := ""
				if c < len(rows[r]) {
					got = rows[r][c]
				}
				if !sameCell(tb.Columns[c], got, want) {
					t.Errorf("%s row %d column %s: sheet %q, CSV %q", sheet, r, tb.Columns[c].Name, got, want)
				}
				cells++
			}
		}
		// Number formats by kind, read from the first data row's styles.
		if len(recs) > 1 {
			for c, col := range tb.Columns {
				cell, _ := excelize.CoordinatesToCellName(c+1, 2)
				if recs[1][c] == "" {
					continue
				}
				style, _ := f.GetCellStyle(sheet, cell)
				st, _ := f.GetStyle(style)
				code := ""
				if st != nil && st.CustomNumFmt != nil {
					code = *st.CustomNumFmt
				}
				wantCode := map[output.Kind]string{output.Count: "#,##0", output.Money: "#,##0.00", output.Proportion: "0.00%", output.Number: "0.0000", output.Percent: "0.00%", output.Date: "yyyy-mm-dd"}[col.Kind]
				if (col.Kind == output.Number || col.Kind == output.Proportion) && output.IsPValue(col.Name) {
					wantCode = output.PValueFormat
				}
				if col.Kind == output.Count && output.IsIdentifier(col.Name) {
					wantCode = "0" // a line or id, shown as the source numbers it
				}
				if code != wantCode {
					t.Errorf("%s column %s (%s): format %q, want %q", sheet, col.Name, col.Kind, code, wantCode)
				}
			}
		}
	}
	if cells < 5_000 {
		t.Errorf("only %d cells compared", cells)
	}
	// "see sheet X" and the sheet list link to the sheets.
	links, list := 0, false
	for r, row := range summary {
		list = list || len(row) > 0 && row[0] == "Sheet"
		for c, v := range row {
			name, ok := strings.CutPrefix(v, "see sheet ")
			if !ok && !(list && c == 0 && contains(want[1:], v)) {
				continue
			}
			if !ok {
				name = v
			}
			cell, _ := excelize.CoordinatesToCellName(c+1, r+1)
			isLink, target, _ := f.GetCellHyperLink(output.SummarySheet, cell)
			if !isLink || target != "'"+name+"'!A1" || !contains(sheets, name) {
				t.Errorf("summary %s %q: link %v to %q", cell, v, isLink, target)
			}
			links++
		}
	}
	if links < len(res.Run.Tables)+len(res.Run.Summary.Findings) {
		t.Errorf("only %d links on the summary sheet", links)
	}
}

// sameCell compares a raw spreadsheet value with the CSV text: flags are
// words in the sheet, and text that the CSV neutralised with a leading '
// is the text itself in the sheet.
func sameCell(col output.Column, got, want string) bool {
	if got == want {
		return true
	}
	switch col.Kind {
	case output.Count, output.Money, output.Number, output.Proportion, output.Percent:
		g, err1 := strconv.ParseFloat(got, 64)
		w, err2 := strconv.ParseFloat(want, 64)
		if err1 != nil || err2 != nil {
			return false
		}
		// A spreadsheet keeps 15 significant digits; the CSV keeps the
		// shortest text that reads back to the same float.
		return g == w || math.Abs(g-w) <= 1e-14*math.Abs(w)
	case output.Date:
		g, err1 := strconv.ParseFloat(got, 64)
		w, err2 := time.Parse("2006-01-02", want)
		if err1 != nil || err2 != nil {
			return false
		}
		d, err := excelize.ExcelDateToTime(g, false)
		return err == nil && d.Equal(w)
	case output.Bool:
		return (want == "true" || want == "false") && got == output.FlagWord(col.Name, want == "true")
	case output.Text:
		return output.NeutralizeText(got) == want
	}
	return false
}
