package xlsxin

import (
	"archive/zip"
	"bytes"
	"encoding/csv"
	"math"
	"math/big"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// TestNumberShownDigits: stored texts as a spreadsheet writes them (up to
// 17 significant digits) come out as the 15 digits it shows. Expectations
// are written out by hand from the decimal digits.
func TestNumberShownDigits(t *testing.T) {
	cases := map[string]string{
		"0.1":                    "0.1",
		"0.30000000000000004":    "0.3",     // 0.1+0.2 as a double
		"1234.5600000000001":     "1234.56", // binary noise in the 17th digit
		"-1234.5649999999999":    "-1234.565",
		"1E-7":                   "0.0000001",
		"1.0000000000000001E-7":  "0.0000001",
		"4.9999999999999996E-2":  "0.05",
		"123456789012345":        "123456789012345", // 15 digits: kept
		"1234567890123.45":       "1234567890123.45",
		"99999999999999.995":     "100000000000000", // carries into a 16th place
		"1.2345678901234567E+20": "123456789012346000000",
		"0":                      "0",
		"-0":                     "0",
		"45000":                  "45000",
		"2.5E3":                  "2500",
		"-7.0000000000000007E-2": "-0.07",
	}
	for in, want := range cases {
		got, ok := Number(in)
		if !ok || got != want {
			t.Errorf("Number(%q) = %q, %v; want %q", in, got, ok, want)
		}
	}
	for _, bad := range []string{"", "abc", "1.2.3", "1e", "--1", "1e99999", "0x10"} {
		if got, ok := Number(bad); ok {
			t.Errorf("Number(%q) = %q, want not a number", bad, got)
		}
	}
}

// TestNumberAgainstExactBinary holds the conversion against math/big's
// exact expansion of the double each stored text stands for, rounded to
// 15 significant digits. A shortest text ending in 5 at the 16th digit
// is a tie only in its text: 3.410783258583515 stands for the double
// 3.41078325858351499..., which shows as 3.41078325858351.
func TestNumberAgainstExactBinary(t *testing.T) {
	if got, _ := Number("3.410783258583515"); got != "3.41078325858351" {
		t.Errorf("Number(3.410783258583515) = %s, want 3.41078325858351", got)
	}
	r := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 20000; i++ {
		f := (r.Float64() - 0.5) * math.Pow(10, float64(r.IntN(24)-8))
		stored := strconv.FormatFloat(f, 'g', -1, 64) // shortest round-trip text, as a spreadsheet writes it
		got, ok := Number(stored)
		if !ok {
			t.Fatalf("Number(%q) failed", stored)
		}
		want, _ := new(big.Rat).SetString(new(big.Float).SetFloat64(f).Text('g', 15))
		have, ok := new(big.Rat).SetString(got)
		if !ok || have.Cmp(want) != 0 {
			t.Fatalf("Number(%q) = %s, want the value of %s", stored, got, new(big.Float).SetFloat64(f).Text('g', 15))
		}
		if strings.ContainsAny(got, "eE") {
			t.Fatalf("Number(%q) = %s holds an exponent", stored, got)
		}
	}
}

// TestSerialDates: the 1900 system with its 29 February 1900 (serial 60)
// and the 1904 system. Anchors from memory of the spreadsheet's own date
// tables: 1 is 1900-01-01, 59 is 1900-02-28, 61 is 1900-03-01, 25569 is
// 1970-01-01 (the Unix epoch), 36526 is 2000-01-01; the 1904 system counts
// 1,462 days fewer (0 is 1904-01-01).
func TestSerialDates(t *testing.T) {
	cases := []struct {
		stored string
		d1904  bool
		kind   dateKind
		want   string
	}{
		{"1", false, dateOnly, "1900-01-01"},
		{"59", false, dateOnly, "1900-02-28"},
		{"60", false, dateOnly, "1900-02-29"},
		{"61", false, dateOnly, "1900-03-01"},
		{"25569", false, dateOnly, "1970-01-01"},
		{"36526", false, dateOnly, "2000-01-01"},
		{"36526.5", false, dateOnly, "2000-01-01 12:00:00"},
		{"36526.999999999", false, dateOnly, "2000-01-02"}, // rounds to the next second: midnight
		{"0.75", false, timeOnly, "18:00:00"},
		{"0", true, dateOnly, "1904-01-01"},
		{"24107", true, dateOnly, "1970-01-01"},
		{"35064", true, dateOnly, "2000-01-01"},
		{"-1", false, dateOnly, "-1"},
	}
	for _, c := range cases {
		got, ok := Serial(c.stored, c.d1904, c.kind)
		if !ok || got != c.want {
			t.Errorf("Serial(%s, 1904=%v) = %q, want %q", c.stored, c.d1904, got, c.want)
		}
	}
}

// TestFormatKinds: which number formats are dates.
func TestFormatKinds(t *testing.T) {
	codes := map[string]dateKind{
		"dd/mm/yyyy":              dateOnly,
		"yyyy-mm-dd hh:mm":        dateOnly,
		"[$-407]d. mmmm yyyy":     dateOnly,
		"h:mm:ss":                 timeOnly,
		"[h]:mm":                  timeOnly,
		"mm:ss":                   timeOnly,
		"#,##0.00 [$€-407]":       plainNumber,
		`#,##0.00" days"`:         plainNumber,
		"0.00%":                   plainNumber,
		"#,##0.00;[Red]-#,##0.00": plainNumber,
		"General":                 plainNumber,
	}
	for code, want := range codes {
		if got := kindOfCode(code); got != want {
			t.Errorf("kindOfCode(%q) = %d, want %d", code, got, want)
		}
	}
	for id, want := range map[int]dateKind{14: dateOnly, 22: dateOnly, 4: plainNumber, 7: plainNumber, 20: timeOnly, 45: timeOnly} {
		if got := kindOfBuiltin(id); got != want {
			t.Errorf("kindOfBuiltin(%d) = %d, want %d", id, got, want)
		}
	}
}

// rawBook writes a workbook by hand, part by part, so that a cell's stored
// text is exactly what the test says.
func rawBook(t *testing.T, dir string, sheets map[string]string, order []string, date1904 bool, styles string) string {
	t.Helper()
	p := filepath.Join(dir, "raw.xlsx")
	var buf bytes.Buffer
	z := zip.NewWriter(&buf)
	put := func(name, body string) {
		w, err := z.Create(name)
		if err != nil {
			t.Fatal(err)
		}
		w.Write([]byte(body))
	}
	put("_rels/.rels", `<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>`)
	pr := ""
	if date1904 {
		pr = `<workbookPr date1904="1"/>`
	}
	var sh, rels strings.Builder
	for i, n := range order {
		id := strconv.Itoa(i + 1)
		sh.WriteString(`<sheet name="` + n + `" sheetId="` + id + `" r:id="rId` + id + `"/>`)
		rels.WriteString(`<Relationship Id="rId` + id + `" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet` + id + `.xml"/>`)
		put("xl/worksheets/sheet"+id+".xml", `<?xml version="1.0"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>`+sheets[n]+`</sheetData></worksheet>`)
	}
	rels.WriteString(`<Relationship Id="rIdS" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/>`)
	put("xl/workbook.xml", `<?xml version="1.0"?><workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">`+pr+`<sheets>`+sh.String()+`</sheets></workbook>`)
	put("xl/_rels/workbook.xml.rels", `<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">`+rels.String()+`</Relationships>`)
	if styles == "" {
		styles = `<cellXfs count="2"><xf numFmtId="0"/><xf numFmtId="14"/></cellXfs>`
	}
	put("xl/styles.xml", `<?xml version="1.0"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">`+styles+`</styleSheet>`)
	z.Close()
	if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func convert(t *testing.T, p string, o Options) (*Table, [][]string) {
	t.Helper()
	var out bytes.Buffer
	tab, err := Convert(p, o, &out)
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&out).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return tab, recs
}

// TestRawCells: stored texts, types, formulas and dates of a hand-written
// sheet, and the CSV records they give.
func TestRawCells(t *testing.T) {
	sheet := `<row r="1"><c r="A1" t="inlineStr"><is><t>Report</t></is></c></row>` +
		`<row r="3"><c r="A3" t="inlineStr"><is><t>posted</t></is></c><c r="B3" t="inlineStr"><is><t>amount</t></is></c><c r="C3" t="inlineStr"><is><t>descr</t></is></c></row>` +
		`<row r="4"><c r="A4" s="1"><v>45000</v></c><c r="B4"><v>1234.5600000000001</v></c><c r="C4" t="inlineStr"><is><t>0.10</t></is></c></row>` +
		`<row r="5"><c r="A5" s="1"><v>61</v></c><c r="B5"><v>1E-7</v></c><c r="C5" t="str"><f>UPPER("a")</f><v>A</v></c></row>` +
		`<row r="6"></row>` +
		`<row r="7"><c r="A7" s="1"><v>60</v></c><c r="B7"><f>B4*2</f></c><c r="C7" t="b"><v>1</v></c></row>` +
		`<row r="8"><c r="A8" s="1"><v>59</v></c><c r="B8"><f>B4+1</f><v>1235.5600000000001</v></c><c r="C8" t="e"><v>#DIV/0!</v></c></row>` +
		`<row r="10"><c r="A10" s="1"><v>45001</v></c><c r="B10"><v>1.234</v></c></row>` +
		`<row r="11"><c r="A11"><v></v></c></row>`
	p := rawBook(t, t.TempDir(), map[string]string{"S": sheet}, []string{"S"}, false, "")
	tab, recs := convert(t, p, Options{})
	if tab.HeaderRow != 3 || len(tab.Skipped) != 1 || !strings.Contains(tab.Skipped[0], "row 1") {
		t.Fatalf("header %d, skipped %v", tab.HeaderRow, tab.Skipped)
	}
	want := [][]string{
		{LineColumn, "posted", "amount", "descr"},
		{"4", "2023-03-15", "1234.56", "0.10"}, // a text cell that looks like a number stays text
		{"5", "1900-03-01", "0.0000001", "A"},
		{"6", "", "", ""},
		{"7", "1900-02-29", "", "TRUE"},
		{"8", "1900-02-28", "1235.56", "#DIV/0!"},
		{"9", "", "", ""},
		{"10", "2023-03-16", "1.2340", ""}, // a fourth decimal: never a thousands separator
	}
	if len(recs) != len(want) {
		t.Fatalf("got %d records %q, want %d", len(recs), recs, len(want))
	}
	for i := range want {
		if strings.Join(recs[i], "|") != strings.Join(want[i], "|") {
			t.Errorf("record %d: got %q, want %q", i, recs[i], want[i])
		}
	}
	if tab.FormulaCells != 3 || tab.Rows != 7 || tab.EmptyRows != 2 {
		t.Errorf("formulas %d, rows %d, empty %d; want 3, 7, 2", tab.FormulaCells, tab.Rows, tab.EmptyRows)
	}
	byLine := map[int64]RowReject{}
	for _, r := range tab.Rejects {
		byLine[r.Line] = r
	}
	if r := byLine[7]; r.Raw != "=B4*2" || !strings.Contains(r.Reason, "no cached value") || r.Column != "amount" {
		t.Errorf("row 7: %+v", r)
	}
	for _, l := range []int64{6, 9} {
		if !strings.Contains(byLine[l].Reason, "empty row") {
			t.Errorf("row %d: %+v", l, byLine[l])
		}
	}
	if len(tab.Rejects) != 3 {
		t.Errorf("%d rejects, want 3: %+v", len(tab.Rejects), tab.Rejects)
	}
	// The decimal comma: number cells are written with it.
	_, recs = convert(t, p, Options{DecimalComma: true})
	if recs[1][2] != "1234,56" || recs[7][2] != "1,2340" {
		t.Errorf("decimal comma: %q %q", recs[1], recs[7])
	}
}

// Test1904: a workbook in the 1904 date system.
func Test1904(t *testing.T) {
	sheet := `<row r="1"><c r="A1" t="inlineStr"><is><t>posted</t></is></c><c r="B1" t="inlineStr"><is><t>amount</t></is></c></row>` +
		`<row r="2"><c r="A2" s="1"><v>0</v></c><c r="B2"><v>1</v></c></row>` +
		`<row r="3"><c r="A3" s="1"><v>43538</v></c><c r="B3"><v>2</v></c></row>`
	p := rawBook(t, t.TempDir(), map[string]string{"S": sheet}, []string{"S"}, true, "")
	tab, recs := convert(t, p, Options{})
	// 43538 + 1462 = 45000, 2023-03-15 in the 1900 system (TestRawCells).
	if !tab.Date1904 || recs[1][1] != "1904-01-01" || recs[2][1] != "2023-03-15" {
		t.Errorf("1904: %v %q", tab.Date1904, recs)
	}
}

// TestSheetChoice: by name, by position, the first holding a table.
func TestSheetChoice(t *testing.T) {
	f := excelize.NewFile()
	f.SetSheetName("Sheet1", "Cover")
	f.SetCellValue("Cover", "A1", "Prepared by the client") // a value, but no table
	f.NewSheet("Journal")
	f.NewSheet("Other")
	for _, r := range [][]any{{"account", "amount"}, {"4000", 10.5}, {"4010", 2}} {
		n, _ := f.GetRows("Journal")
		f.SetSheetRow("Journal", "A"+strconv.Itoa(len(n)+1), &r)
	}
	for _, r := range [][]any{{"account", "amount"}, {"5000", 7}} {
		n, _ := f.GetRows("Other")
		f.SetSheetRow("Other", "A"+strconv.Itoa(len(n)+1), &r)
	}
	p := filepath.Join(t.TempDir(), "book.xlsx")
	if err := f.SaveAs(p); err != nil {
		t.Fatal(err)
	}
	for sel, want := range map[string]string{"": "Journal", "Other": "Other", "other": "Other", "3": "Other", "2": "Journal"} {
		tab, recs := convert(t, p, Options{Sheet: sel})
		if tab.Sheet != want {
			t.Errorf("--sheet %q read %q, want %q", sel, tab.Sheet, want)
		}
		if want == "Other" && (len(recs) != 2 || recs[1][2] != "7") {
			t.Errorf("--sheet %q: %q", sel, recs)
		}
	}
	for _, sel := range []string{"4", "0", "Nope"} {
		if _, err := Convert(p, Options{Sheet: sel}, &bytes.Buffer{}); err == nil || !strings.Contains(err.Error(), `"Journal"`) {
			t.Errorf("--sheet %q: %v, want an error listing the sheets", sel, err)
		}
	}
	if _, err := Convert(p, Options{Sheet: "Cover"}, &bytes.Buffer{}); err == nil || !strings.Contains(err.Error(), "no header") {
		t.Errorf("empty sheet: %v", err)
	}
}

// TestBlankAndMergedHeader: a blank header cell and merged header cells
// are named in warnings, and their columns kept.
func TestBlankAndMergedHeader(t *testing.T) {
	f := excelize.NewFile()
	rows := [][]any{{"account", "amount", nil, "descr\nof line", "Group", nil}, {"4000", 1, "x", "a", "g1", "h1"}, {"4010", 2, "y", "b", "g2", "h2"}}
	for i, r := range rows {
		f.SetSheetRow("Sheet1", "A"+strconv.Itoa(i+1), &r)
	}
	f.MergeCell("Sheet1", "E1", "F1")
	p := filepath.Join(t.TempDir(), "blank.xlsx")
	if err := f.SaveAs(p); err != nil {
		t.Fatal(err)
	}
	tab, recs := convert(t, p, Options{})
	if strings.Join(recs[0], ",") != LineColumn+",account,amount,column_C,descr of line,Group,column_F" || recs[1][3] != "x" || recs[2][6] != "h2" {
		t.Fatalf("records %q", recs)
	}
	all := strings.Join(tab.Warnings, "\n")
	for _, want := range []string{"column C has no header", "column F has no header", "merged cells E1:F1"} {
		if !strings.Contains(all, want) {
			t.Errorf("warnings lack %q:\n%s", want, all)
		}
	}
}

// TestNotAWorkbook: a text file and an old binary workbook under .xlsx.
func TestNotAWorkbook(t *testing.T) {
	dir := t.TempDir()
	txt := filepath.Join(dir, "text.xlsx")
	os.WriteFile(txt, []byte("account,amount\n4000,1\n"), 0o644)
	if _, err := Convert(txt, Options{}, nil); err == nil || !strings.Contains(err.Error(), "not an Excel workbook") || !strings.Contains(err.Error(), "text.xlsx") {
		t.Errorf("text: %v", err)
	}
	ole := filepath.Join(dir, "old.xlsx")
	os.WriteFile(ole, append([]byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}, make([]byte, 512)...), 0o644)
	if _, err := Convert(ole, Options{}, nil); err == nil || !strings.Contains(err.Error(), ".xls") {
		t.Errorf("ole: %v", err)
	}
	zipOnly := filepath.Join(dir, "zip.xlsx")
	var buf bytes.Buffer
	z := zip.NewWriter(&buf)
	w, _ := z.Create("hello.txt")
	w.Write([]byte("hi"))
	z.Close()
	os.WriteFile(zipOnly, buf.Bytes(), 0o644)
	if _, err := Convert(zipOnly, Options{}, nil); err == nil || !strings.Contains(err.Error(), "workbook") {
		t.Errorf("zip without a workbook: %v", err)
	}
}

func TestLetter(t *testing.T) {
	for col, want := range map[int]string{0: "A", 25: "Z", 26: "AA", 27: "AB", 701: "ZZ", 702: "AAA", 16383: "XFD"} {
		if got := Letter(col); got != want {
			t.Errorf("Letter(%d) = %s, want %s", col, got, want)
		}
		if c, _, err := splitRef(want + "1"); err != nil || c != col {
			t.Errorf("splitRef(%s1) = %d, %v", want, c, err)
		}
	}
}

// TestTableWidth: the rows read with the header widen the table (a header
// cell left blank at the end); a value further right in a later row is a
// reject naming the column, never dropped.
func TestTableWidth(t *testing.T) {
	var b strings.Builder
	b.WriteString(`<row r="1"><c r="A1" t="inlineStr"><is><t>account</t></is></c><c r="B1" t="inlineStr"><is><t>amount</t></is></c></row>`)
	b.WriteString(`<row r="2"><c r="A2"><v>1</v></c><c r="B2"><v>2</v></c><c r="C2"><v>3</v></c></row>`)
	for r := 3; r <= 80; r++ {
		n := strconv.Itoa(r)
		b.WriteString(`<row r="` + n + `"><c r="A` + n + `"><v>` + n + `</v></c><c r="B` + n + `"><v>1</v></c>`)
		if r == 70 {
			b.WriteString(`<c r="D70"><v>9</v></c>`)
		}
		b.WriteString(`</row>`)
	}
	p := rawBook(t, t.TempDir(), map[string]string{"S": b.String()}, []string{"S"}, false, "")
	tab, recs := convert(t, p, Options{})
	if strings.Join(recs[0], ",") != LineColumn+",account,amount,column_C" || len(recs) != 80 {
		t.Fatalf("header %q, %d records", recs[0], len(recs))
	}
	if len(tab.Rejects) != 1 || tab.Rejects[0].Line != 70 || tab.Rejects[0].Column != "D" || !strings.Contains(tab.Rejects[0].Reason, "column D") {
		t.Errorf("rejects %+v", tab.Rejects)
	}
	if !strings.Contains(strings.Join(tab.Warnings, "\n"), "column C has no header") {
		t.Errorf("warnings %q", tab.Warnings)
	}
}

// TestDateCellsInTheTextFormat: with the load's --date-format, date cells
// are written in it, so that a column mixing date cells and text dates
// reads alike.
func TestDateCellsInTheTextFormat(t *testing.T) {
	sheet := `<row r="1"><c r="A1" t="inlineStr"><is><t>posted</t></is></c><c r="B1" t="inlineStr"><is><t>amount</t></is></c></row>` +
		`<row r="2"><c r="A2" s="1"><v>45000</v></c><c r="B2"><v>1</v></c></row>` +
		`<row r="3"><c r="A3" t="inlineStr"><is><t>16/03/2023</t></is></c><c r="B3"><v>2</v></c></row>` +
		`<row r="4"><c r="A4" s="1"><v>45000.75</v></c><c r="B4"><v>3</v></c></row>`
	p := rawBook(t, t.TempDir(), map[string]string{"S": sheet}, []string{"S"}, false, "")
	_, recs := convert(t, p, Options{DateFormat: "%d/%m/%Y"})
	if recs[1][1] != "15/03/2023" || recs[2][1] != "16/03/2023" || recs[3][1] != "15/03/2023" {
		t.Errorf("dates %q", recs)
	}
	_, recs = convert(t, p, Options{DateFormat: "%d.%m.%Y %H:%M"})
	if recs[3][1] != "15.03.2023 18:00" {
		t.Errorf("date-time %q", recs[3])
	}
}
