package load

import (
	"context"
	"math/big"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// xlsxLedger writes a workbook with excelize: a title row, a blank row,
// the header at row 3, then the rows given (row 4 on), in sheet "Journal"
// behind an empty first sheet and before a second table sheet "Other".
func xlsxLedger(t *testing.T, dir string, rows [][]any) string {
	t.Helper()
	f := excelize.NewFile()
	f.SetSheetName("Sheet1", "Notes")
	f.NewSheet("Journal")
	f.NewSheet("Other")
	sw, err := f.NewStreamWriter("Journal")
	if err != nil {
		t.Fatal(err)
	}
	sw.SetRow("A1", []any{"Journal export, FY2025"})
	sw.SetRow("A3", []any{"posted", "account", "amount", "descr"})
	for i, r := range rows {
		if r == nil {
			continue // an empty row inside the table
		}
		if err := sw.SetRow("A"+strconv.Itoa(4+i), r); err != nil {
			t.Fatal(err)
		}
	}
	if err := sw.Flush(); err != nil {
		t.Fatal(err)
	}
	other := [][]any{{"account", "amount"}, {"9000", 5.25}, {"9001", -1.25}}
	for i, r := range other {
		f.SetSheetRow("Other", "A"+strconv.Itoa(i+1), &r)
	}
	p := filepath.Join(dir, "ledger.xlsx")
	if err := f.SaveAs(p); err != nil {
		t.Fatal(err)
	}
	return p
}

// TestXLSXLoadExact: numbers as the sheet shows them, date serials as
// dates, formulas as their cached values, rejects at their sheet rows, and
// rows read = loaded + rejected. The expected net is the sum, in math/big,
// of the amounts as the test means them (the decimal texts below), not of
// the doubles excelize stores.
func TestXLSXLoadExact(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	date := func(serial int) excelize.Cell { return excelize.Cell{Value: serial} }
	// The amounts as meant, and the values written for them.
	meant := []string{"0.1", "0.000001", "1234.56", "123456789.012345", "-2500.75", "1999.99", "1234.5", "0.3", "2469.12"}
	rows := [][]any{
		{date(45000), "4000", 0.1, "a"},
		{date(45001), "4000", 1e-6, "b"},
		{date(45002), "4000", 1234.5600000000001, "binary noise"},
		{date(45003), "4000", 123456789.012345, "15 digits"},
		{date(45004), "4000", -2500.75, "negative"},
		{date(45005), "4000", 1999.99, "currency format"},
		nil, // row 10: empty
		{date(45006), "4000", "1,234.50", "text amount"},
		{date(45007), "4000", 0.1 + 0.2, "0.1+0.2"},
		{date(45008), "4000", excelize.Cell{Formula: "C6*2", Value: 2469.12}, "formula"},
		{date(45009), "4000", excelize.Cell{Formula: "C6*3"}, "formula without value"}, // row 14
		{date(45010), "4000", "n/a", "bad amount"},                                     // row 15
		{"not a date", "4000", 1, "bad date"},                                          // row 16
	}
	p := xlsxLedgerStyled(t, dir, rows)
	ws := openWS(t, ":memory:")
	rep, err := Load(ctx, ws, []string{p}, Options{Scale: 6, MaxRejects: "100%"})
	if err != nil {
		t.Fatal(err)
	}
	fr := rep.Files[0]
	if fr.Format != "xlsx" || fr.Sheet == nil || fr.Sheet.Sheet != "Journal" || fr.Sheet.HeaderRow != 3 || fr.Sheet.FormulaCells != 2 || fr.Sheet.EmptyRows != 1 {
		t.Fatalf("report %+v sheet %+v", fr, fr.Sheet)
	}
	if fr.RowsRead != 13 || fr.RowsLoaded != 9 || fr.RowsRejected != 4 || fr.RowsRead != fr.RowsLoaded+fr.RowsRejected {
		t.Errorf("read %d loaded %d rejected %d; want 13 = 9 + 4", fr.RowsRead, fr.RowsLoaded, fr.RowsRejected)
	}
	want := new(big.Rat)
	for _, m := range meant {
		v, _ := new(big.Rat).SetString(m)
		want.Add(want, v)
	}
	got, ok := new(big.Rat).SetString(fr.Net)
	if !ok || got.Cmp(want) != 0 {
		t.Errorf("net %s, want %s", fr.Net, want.FloatString(6))
	}
	// Each reject at its sheet row.
	rows2, err := ws.Conn.QueryContext(ctx, "SELECT line, reason FROM rejects ORDER BY line")
	if err != nil {
		t.Fatal(err)
	}
	defer rows2.Close()
	wantRej := map[int64]string{10: "empty row", 14: "no cached value", 15: "not a number", 16: "invalid date"}
	seen := 0
	for rows2.Next() {
		var line int64
		var reason string
		rows2.Scan(&line, &reason)
		if w, ok := wantRej[line]; !ok || !strings.Contains(strings.ToLower(reason), w) {
			t.Errorf("reject at line %d: %s", line, reason)
		}
		seen++
	}
	if seen != 4 {
		t.Errorf("%d rejects, want 4", seen)
	}
	// Dates and lines of loaded rows; the amounts' text as the sheet shows it.
	var posted string
	var line int64
	if err := ws.Conn.QueryRowContext(ctx, "SELECT line, CAST(posted AS VARCHAR) FROM ledger WHERE descr = 'binary noise'").Scan(&line, &posted); err != nil {
		t.Fatal(err)
	}
	if line != 6 || posted != "2023-03-17" {
		t.Errorf("binary noise row: line %d posted %s; want 6, 2023-03-17 (serial 45002)", line, posted)
	}
	var sheet string
	if err := ws.Conn.QueryRowContext(ctx, "SELECT json_extract_string(dialect, '$.sheet') FROM files").Scan(&sheet); err != nil || sheet != "Journal" {
		t.Errorf("files.dialect sheet %q, %v", sheet, err)
	}
	if len(fr.Warnings) == 0 || !strings.Contains(strings.Join(fr.Warnings, "\n"), "skipped as titles") {
		t.Errorf("warnings %q", fr.Warnings)
	}
}

// xlsxLedgerStyled is xlsxLedger with the posted column in a date format
// and the currency row in a currency format.
func xlsxLedgerStyled(t *testing.T, dir string, rows [][]any) string {
	t.Helper()
	f := excelize.NewFile()
	f.SetSheetName("Sheet1", "Notes")
	f.NewSheet("Journal")
	f.NewSheet("Other")
	ds, err := f.NewStyle(&excelize.Style{NumFmt: 14})
	if err != nil {
		t.Fatal(err)
	}
	euro := `#,##0.00 [$€-407]`
	cs, err := f.NewStyle(&excelize.Style{CustomNumFmt: &euro})
	if err != nil {
		t.Fatal(err)
	}
	sw, err := f.NewStreamWriter("Journal")
	if err != nil {
		t.Fatal(err)
	}
	sw.SetRow("A1", []any{"Journal export, FY2025"})
	sw.SetRow("A3", []any{"posted", "account", "amount", "descr"})
	for i, r := range rows {
		if r == nil {
			continue
		}
		r = append([]any(nil), r...)
		if c, ok := r[0].(excelize.Cell); ok {
			c.StyleID = ds
			r[0] = c
		}
		if r[3] == "currency format" {
			r[2] = excelize.Cell{StyleID: cs, Value: r[2]}
		}
		if err := sw.SetRow("A"+strconv.Itoa(4+i), r); err != nil {
			t.Fatal(err)
		}
	}
	if err := sw.Flush(); err != nil {
		t.Fatal(err)
	}
	other := [][]any{{"account", "amount"}, {"9000", 5.25}, {"9001", -1.25}}
	for i, r := range other {
		f.SetSheetRow("Other", "A"+strconv.Itoa(i+1), &r)
	}
	p := filepath.Join(dir, "ledger.xlsx")
	if err := f.SaveAs(p); err != nil {
		t.Fatal(err)
	}
	return p
}

// TestXLSXSecondSheet: the second table sheet chosen by name and by
// position loads its own rows; the workspace records the workbook's SHA.
func TestXLSXSecondSheet(t *testing.T) {
	ctx := context.Background()
	p := xlsxLedger(t, t.TempDir(), [][]any{{"2025-01-02", "4000", 1, "x"}})
	for _, sel := range []string{"Other", "3"} {
		ws := openWS(t, ":memory:")
		rep, err := Load(ctx, ws, []string{p}, Options{Sheet: sel})
		if err != nil {
			t.Fatal(err)
		}
		fr := rep.Files[0]
		if fr.Sheet.Sheet != "Other" || fr.RowsLoaded != 2 || fr.Net != "4.00" {
			t.Errorf("--sheet %s: sheet %q, loaded %d, net %s; want Other, 2, 4.00", sel, fr.Sheet.Sheet, fr.RowsLoaded, fr.Net)
		}
		size, sum, _ := Hash(p)
		if fr.SHA256 != sum || fr.SizeBytes != size {
			t.Errorf("recorded %s %d, the workbook is %s %d", fr.SHA256, fr.SizeBytes, sum, size)
		}
	}
	ws := openWS(t, ":memory:")
	if _, err := Load(ctx, ws, []string{p}, Options{Sheet: "Missing"}); err == nil || !strings.Contains(err.Error(), `"Journal"`) {
		t.Errorf("missing sheet: %v", err)
	}
}

// TestXLSXRefusals: an .xls, a text file named .xlsx.
func TestXLSXRefusals(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	cases := map[string]struct{ body, want string }{
		"old.xls":      {"\xD0\xCF\x11\xE0\xA1\xB1\x1A\xE1", "old binary excel workbook (.xls)"},
		"renamed.xlsx": {"account,amount\n4000,1\n", "not an excel workbook"},
		"ole.xlsx":     {"\xD0\xCF\x11\xE0\xA1\xB1\x1A\xE1", "(.xls)"},
	}
	for name, c := range cases {
		p := writeFile(t, dir, name, c.body)
		ws := openWS(t, ":memory:")
		_, err := Load(ctx, ws, []string{p}, Options{})
		if err == nil || !strings.Contains(err.Error(), name) || !strings.Contains(strings.ToLower(err.Error()), c.want) {
			t.Errorf("%s: %v; want it to name the file and say %q", name, err, c.want)
		}
		if _, err := Inspect(ctx, ws, p, Options{}, 5); err == nil {
			t.Errorf("%s: inspect took it", name)
		}
	}
}

// TestXLSXInspect: inspect lists the sheets, names the one read and its
// header row, and prints a load command naming the sheet.
func TestXLSXInspect(t *testing.T) {
	ctx := context.Background()
	p := xlsxLedger(t, t.TempDir(), [][]any{{"2025-01-02", "4000", 1, "x"}, {"2025-01-03", "4000", 2.5, "y"}})
	ws := openWS(t, ":memory:")
	in, err := Inspect(ctx, ws, p, Options{}, 5)
	if err != nil {
		t.Fatal(err)
	}
	if in.Format != "xlsx" || in.Sheet == nil || in.Sheet.Sheet != "Journal" || in.Sheet.HeaderRow != 3 || len(in.Sheet.Sheets) != 3 {
		t.Fatalf("inspection %+v", in.Sheet)
	}
	if !strings.HasSuffix(in.LoadCommand, "--sheet Journal "+shellQuote(p)) || len(in.Sample) != 2 || in.Sample[1][2] != "2.5" {
		t.Errorf("command %q sample %q", in.LoadCommand, in.Sample)
	}
	if in.Sheet.Sheets[1].Rows != 5 {
		t.Errorf("Journal rows %d, want 5", in.Sheet.Sheets[1].Rows)
	}
}

// TestXLSXEmptyRowsAndShare: empty rows inside the table are read and
// rejected but not held against --max-rejects; a real reject is, and the
// refusal counts and names it, not the empty rows.
func TestXLSXEmptyRowsAndShare(t *testing.T) {
	ctx := context.Background()
	var rows [][]any
	for i := 0; i < 60; i++ {
		if i%20 == 5 {
			rows = append(rows, nil) // empty rows at sheet rows 9, 29, 49
			continue
		}
		rows = append(rows, []any{"2025-01-02", "4000", float64(i) + 0.5, "x"})
	}
	p := xlsxLedger(t, t.TempDir(), rows)
	ws := openWS(t, ":memory:")
	rep, err := Load(ctx, ws, []string{p}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	fr := rep.Files[0]
	if fr.RowsRead != 60 || fr.RowsLoaded != 57 || fr.RowsRejected != 3 || fr.Sheet.EmptyRows != 3 {
		t.Errorf("read %d loaded %d rejected %d empty %d; want 60, 57, 3, 3", fr.RowsRead, fr.RowsLoaded, fr.RowsRejected, fr.Sheet.EmptyRows)
	}
	if fr.RejectReasons[0].FirstLine == nil || *fr.RejectReasons[0].FirstLine != 9 {
		t.Errorf("reasons %+v", fr.RejectReasons)
	}
	rows[10] = []any{"2025-01-02", "4000", "n/a", "x"}
	p = xlsxLedger(t, t.TempDir(), rows)
	_, err = Load(ctx, openWS(t, ":memory:"), []string{p}, Options{})
	if err == nil || !strings.Contains(err.Error(), "1 of 60 rows (1.7%)") || !strings.Contains(err.Error(), "not a number, first at line 14") {
		t.Errorf("one bad amount in 57: %v", err)
	}
}
