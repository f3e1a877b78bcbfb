package output

import (
	"context"
	"fmt"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"
)

// SummarySheet is the name of the workbook's first sheet.
const SummarySheet = "summary"

// maxSheetRows leaves room for the header within a worksheet's 1,048,576
// rows (a variable only so that a test can lower it).
var maxSheetRows int64 = 1_048_575

// XLSXHook adds to the workbook after the sheets are written, e.g. native
// charts. sheetOf maps each table's name to its sheet's name.
type XLSXHook func(f *excelize.File, run *Run, sheetOf map[string]string) error

// maxSheetName is Excel's limit on a sheet name's length.
const maxSheetName = 31

// SheetNames gives each table a sheet name: its full name when it fits
// Excel's 31 characters, else its name cut with "~N" at the end, N being
// the table's position among the data sheets (the summary's sheet list
// shows the full name beside it). Names are unique, case-insensitively.
func SheetNames(tables []*Table) map[string]string {
	used := map[string]bool{strings.ToLower(SummarySheet): true}
	out := map[string]string{}
	for i, t := range tables {
		name := t.Name
		if utf8.RuneCountInString(name) > maxSheetName || used[strings.ToLower(name)] {
			suf := fmt.Sprintf("~%d", i+1)
			r := []rune(t.Name)
			if len(r)+len(suf) > maxSheetName {
				r = r[:maxSheetName-len(suf)]
			}
			name = string(r) + suf
		}
		used[strings.ToLower(name)] = true
		out[t.Name] = name
	}
	return out
}

// headings are the workbook's column headings for leadline's own column
// names; other names are written with spaces for underscores and a
// capital first letter (see Heading).
var headings = map[string]string{
	"n": "N", "z": "Z", "p": "p", "p_value": "p-value", "p_adjusted": "p (adjusted)", "runs_p": "Runs p-value",
	"chi2": "Chi-square", "df": "Degrees of freedom", "ks_d": "KS D", "ks_critical": "KS critical value",
	"cvm_u2": "Cramér-von Mises U²", "cvm_u2_p": "U² p-value", "cvm_w2": "Cramér-von Mises W²", "cvm_w2_p": "W² p-value",
	"mad": "MAD", "expected_mad": "Expected MAD", "excess_mad": "Excess MAD",
	"goodman_lower": "Goodman lower bound", "goodman_upper": "Goodman upper bound", "outside_goodman": "Outside Goodman bounds",
	"row_id": "Row id", "file_id": "File id", "doc_id": "Document id", "sha256": "SHA-256", "size_bytes": "Size (bytes)",
	"rsf": "RSF", "first_line": "First line", "top_flagged": "Top flagged bins",
}

// Heading is a column's heading in the workbook: words for the JSON name
// that CSV, Parquet and JSON keep.
func Heading(name string) string {
	if h, ok := headings[strings.ToLower(name)]; ok {
		return h
	}
	s := strings.TrimSpace(strings.ReplaceAll(name, "_", " "))
	if s == "" {
		return name
	}
	r, n := utf8.DecodeRuneInString(s)
	return strings.ToUpper(string(r)) + s[n:]
}

// IsPValue says whether a column of statistics holds p-values, by its name
// (p, p_value, p_adjusted, runs_p...).
func IsPValue(name string) bool {
	n := strings.ToLower(name)
	return n == "p" || strings.HasPrefix(n, "p_") || strings.HasSuffix(n, "_p")
}

// FlagWord is how the workbook writes a true/false cell: a column named
// flagged reads "flagged" or stays empty, so that the flagged rows stand
// out and filter; other flags read yes or no.
func FlagWord(column string, v bool) string {
	if strings.EqualFold(column, "flagged") {
		if v {
			return "flagged"
		}
		return ""
	}
	if v {
		return "yes"
	}
	return "no"
}

// CellLimit is the most characters (UTF-16 code units) a workbook cell
// holds.
const CellLimit = 32767

// cutText cuts s to the workbook's cell limit, ending it with a note that
// says so and where the full text is. It reports whether it cut.
func cutText(s, table string) (string, bool) {
	if utf16Len(s) <= CellLimit {
		return s, false
	}
	mark := fmt.Sprintf(" [cut at the workbook's cell limit of %d characters; the full text of %d characters is in %s/%s.csv]",
		CellLimit, utf16Len(s), TablesDir, table)
	keep := CellLimit - utf16Len(mark)
	n := 0
	for i, r := range s {
		w := 1
		if r >= 0x10000 {
			w = 2
		}
		if n+w > keep {
			return s[:i] + mark, true
		}
		n += w
	}
	return s, false
}

func utf16Len(s string) int {
	n := 0
	for _, r := range s {
		n++
		if r >= 0x10000 {
			n++
		}
	}
	return n
}

type styles struct {
	header, title, label, wrap, bold, link int
	kind                                   map[string]int
}

// PValueFormat shows a p-value to four places, below 0.0001 to four
// significant figures in scientific notation (as numfmt.P writes it; an
// Excel format has no significant figures above that), and a p-value of 0
// (one that underflowed the floating point range: no p-value is exactly
// 0) as "< 1e-300", as the terminal and the report do.
const PValueFormat = `[=0]"< 1e-300";[<0.0001]0.000E+00;0.0000`

// IsIdentifier reports whether a whole-number column names a record (a
// line of the client's file, a row, file or run id) rather than counting
// something.
func IsIdentifier(name string) bool {
	n := strings.ToLower(name)
	return n == "line" || strings.HasSuffix(n, "_line") || n == "id" || strings.HasSuffix(n, "_id") || n == "bin"
}

// numFmt is the number format of a column: p-values as PValueFormat,
// proportions and percentages as percent (as the report shows them).
func numFmt(k Kind, scale int, name string) string {
	if (k == Number || k == Proportion) && IsPValue(name) {
		return PValueFormat
	}
	switch k {
	case Count:
		if IsIdentifier(name) {
			return "0" // a line or row number is looked up, not added: no separators
		}
		return "#,##0"
	case Money:
		if scale <= 0 {
			return "#,##0"
		}
		return "#,##0." + strings.Repeat("0", scale)
	case Number:
		return "0.0000"
	case Proportion, Percent:
		return "0.00%"
	case Date:
		return "yyyy-mm-dd"
	case Timestamp:
		return "yyyy-mm-dd hh:mm:ss"
	}
	return ""
}

func (s *styles) forKind(f *excelize.File, k Kind, scale int) (int, error) {
	return s.forColumn(f, k, scale, "")
}

func (s *styles) forColumn(f *excelize.File, k Kind, scale int, name string) (int, error) {
	code := numFmt(k, scale, name)
	if code == "" {
		return 0, nil
	}
	if id, ok := s.kind[code]; ok {
		return id, nil
	}
	id, err := f.NewStyle(&excelize.Style{CustomNumFmt: &code})
	if err != nil {
		return 0, err
	}
	s.kind[code] = id
	return id, nil
}

func newStyles(f *excelize.File) (*styles, error) {
	s := &styles{kind: map[string]int{}}
	var err error
	if s.header, err = f.NewStyle(&excelize.Style{
		Font:      &excelize.Font{Bold: true},
		Fill:      excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{"D9D9D9"}},
		Border:    []excelize.Border{{Type: "bottom", Color: "000000", Style: 1}},
		Alignment: &excelize.Alignment{Vertical: "top", WrapText: true},
	}); err != nil {
		return nil, err
	}
	if s.title, err = f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true, Size: 14}}); err != nil {
		return nil, err
	}
	if s.bold, err = f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}}); err != nil {
		return nil, err
	}
	if s.label, err = f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}, Alignment: &excelize.Alignment{Vertical: "top"}}); err != nil {
		return nil, err
	}
	if s.link, err = f.NewStyle(&excelize.Style{Font: &excelize.Font{Color: "0563C1", Underline: "single"}}); err != nil {
		return nil, err
	}
	if s.wrap, err = f.NewStyle(&excelize.Style{Alignment: &excelize.Alignment{Vertical: "top", WrapText: true}}); err != nil {
		return nil, err
	}
	return s, nil
}

// cellValue turns a normalised value into what a spreadsheet cell should
// hold: numbers as numbers (money too, unless it has more significant
// digits than a spreadsheet keeps, 15, when it stays text).
func cellValue(v any) any {
	switch x := v.(type) {
	case Decimal:
		if x.Digits() > 15 {
			return x.Text
		}
		return x.Float64()
	case time.Time:
		return x
	}
	return v
}

// WriteXLSX writes the workbook: the summary sheet, then one sheet per
// table with a frozen, bold header row and number formats by column kind.
func WriteXLSX(path string, run *Run, hooks ...XLSXHook) error {
	f := excelize.NewFile()
	defer f.Close()
	st, err := newStyles(f)
	if err != nil {
		return err
	}
	if err := f.SetSheetName("Sheet1", SummarySheet); err != nil {
		return err
	}
	sheetOf := SheetNames(run.Tables)
	for i, t := range run.Tables {
		if err := writeTableSheet(context.Background(), f, st, sheetOf[t.Name], i+1, t); err != nil {
			return fmt.Errorf("sheet %s: %w", sheetOf[t.Name], err)
		}
	}
	var cut int64
	for _, t := range run.Tables {
		cut += t.CellsCut
	}
	if cut > 0 {
		run.Summary.Notes = append(run.Summary.Notes, fmt.Sprintf("Workbook: %d text cell(s) longer than the cell limit of %d characters were cut and marked in the cell; the sheet list names the tables, whose CSV files hold the full text.", cut, CellLimit))
	}
	if err := writeSummarySheet(f, st, run, sheetOf); err != nil {
		return err
	}
	for _, h := range hooks {
		if err := h(f, run, sheetOf); err != nil {
			return err
		}
	}
	// The summary sheet is the first and the active one already: calling
	// SetActiveSheet would read every streamed sheet back in.
	title := "leadline results"
	if run.Pack.Name != "" {
		title += ": " + run.Pack.Name
	}
	if err := f.SetDocProps(&excelize.DocProperties{Creator: "leadline", Title: title, Subject: run.Pack.Client,
		Description: Caution, Created: "2000-01-01T00:00:00Z", Modified: "2000-01-01T00:00:00Z"}); err != nil {
		return err
	}
	return f.SaveAs(path)
}

// writeTableSheet writes one table's sheet: a frozen header row of
// headings in words, the rows (from the table's source when it has one, up
// to the sheet's row limit) with number formats by column, flags as words,
// text cut at the cell limit marked, and an autofilter over all of it (as
// a worksheet table, which a streamed sheet can carry). It records on the
// table the rows written and the cells cut.
func writeTableSheet(ctx context.Context, f *excelize.File, st *styles, sheet string, index int, t *Table) error {
	if _, err := f.NewSheet(sheet); err != nil {
		return err
	}
	sw, err := f.NewStreamWriter(sheet)
	if err != nil {
		return err
	}
	colStyle := make([]int, len(t.Columns))
	widths := make([]int, len(t.Columns))
	head := make([]any, len(t.Columns))
	seen := map[string]int{}
	for i, c := range t.Columns {
		scale := 0
		if c.Kind == Money {
			scale, _ = t.moneyScale(i)
		}
		if colStyle[i], err = st.forColumn(f, c.Kind, scale, c.Name); err != nil {
			return err
		}
		h := Heading(c.Name)
		// A worksheet table needs unique headings.
		if k := seen[strings.ToLower(h)]; k > 0 {
			h = fmt.Sprintf("%s (%d)", h, k+1)
		}
		seen[strings.ToLower(h)]++
		head[i] = excelize.Cell{StyleID: st.header, Value: h}
		widths[i] = utf8.RuneCountInString(h) + 4
	}
	for _, r := range t.Rows[:min(len(t.Rows), 200)] {
		for i := range t.Columns {
			n := utf8.RuneCountInString(FormatValue(r[i])) + 2
			if t.Columns[i].Kind == Money || t.Columns[i].Kind == Count {
				n += n / 3
			}
			widths[i] = max(widths[i], n)
		}
	}
	for i, w := range widths {
		if err := sw.SetColWidth(i+1, i+1, float64(min(max(w, 8), 60))); err != nil {
			return err
		}
	}
	if err := sw.SetPanes(&excelize.Panes{Freeze: true, YSplit: 1, TopLeftCell: "A2", ActivePane: "bottomLeft",
		Selection: []excelize.Selection{{SQRef: "A2", ActiveCell: "A2", Pane: "bottomLeft"}}}); err != nil {
		return err
	}
	if err := sw.SetRow("A1", head); err != nil {
		return err
	}
	var n, cut int64
	vals := make([]any, len(t.Columns))
	err = t.eachRow(ctx, maxSheetRows, func(r []any) error {
		for i, c := range t.Columns {
			vals[i] = nil
			if i >= len(r) || r[i] == nil {
				continue
			}
			v := cellValue(r[i])
			switch x := v.(type) {
			case bool:
				vals[i] = FlagWord(c.Name, x)
				continue
			case string:
				// Text is always a string cell, never a formula.
				s, was := cutText(x, t.Name)
				if was {
					cut++
				}
				if c.Kind != Text {
					vals[i] = s
					continue
				}
				v = s
			}
			vals[i] = excelize.Cell{StyleID: colStyle[i], Value: v}
		}
		cell, _ := excelize.CoordinatesToCellName(1, int(n)+2)
		n++
		return sw.SetRow(cell, vals)
	})
	if err != nil {
		return err
	}
	t.SheetRows, t.CellsCut = n, cut
	if len(t.Columns) > 0 {
		last, _ := excelize.CoordinatesToCellName(len(t.Columns), int(max(n, 1))+1)
		if err := sw.AddTable(&excelize.Table{Range: "A1:" + last, Name: fmt.Sprintf("table_%d", index), StyleName: "TableStyleLight1"}); err != nil {
			return err
		}
	}
	return sw.Flush()
}

func writeSummarySheet(f *excelize.File, st *styles, run *Run, sheetOf map[string]string) error {
	sh := SummarySheet
	row := 1
	set := func(col int, v any, style int) error {
		cell, _ := excelize.CoordinatesToCellName(col, row)
		if err := f.SetCellValue(sh, cell, v); err != nil {
			return err
		}
		if style != 0 {
			return f.SetCellStyle(sh, cell, cell, style)
		}
		return nil
	}
	// link writes text that opens the named sheet when clicked.
	link := func(col int, text, sheet string) error {
		cell, _ := excelize.CoordinatesToCellName(col, row)
		if err := set(col, text, st.link); err != nil {
			return err
		}
		return f.SetCellHyperLink(sh, cell, "'"+strings.ReplaceAll(sheet, "'", "''")+"'!A1", "Location")
	}
	pair := func(label string, v any, style int) error {
		if err := set(1, label, st.label); err != nil {
			return err
		}
		if err := set(2, v, style); err != nil {
			return err
		}
		row++
		return nil
	}
	countStyle, _ := st.forKind(f, Count, 0)
	title := "leadline results"
	if run.Pack.Name != "" {
		title += ": " + run.Pack.Name
	}
	if err := set(1, title, st.title); err != nil {
		return err
	}
	row += 2
	m := run.Manifest
	if m == nil {
		m = &Manifest{}
	}
	items := []struct {
		l string
		v any
	}{
		{"Pack", run.Pack.Name}, {"Client", run.Pack.Client}, {"Period", run.Pack.Period},
		{"Pack file", run.Pack.File}, {"Pack SHA-256", run.Pack.SHA256},
		{"Workspace", m.Workspace}, {"Workspace use", strings.Trim(m.Run.WorkspaceAction+": "+m.Run.WorkspaceReason, ": ")},
		{"Tool", strings.TrimSpace(m.Tool + " " + m.ToolVersion)}, {"DuckDB", m.DuckDBVersion},
		{"Started (UTC)", fmtTime(m.Run.StartedAt)}, {"Finished (UTC)", fmtTime(m.Run.FinishedAt)},
	}
	for _, it := range items {
		if err := pair(it.l, it.v, 0); err != nil {
			return err
		}
	}
	row++
	if err := set(1, "Caution", st.label); err != nil {
		return err
	}
	caution := run.Summary.Caution
	if caution == "" {
		caution = Caution
	}
	if err := set(2, caution, st.wrap); err != nil {
		return err
	}
	f.SetRowHeight(sh, row, 48)
	row += 2

	c := run.Summary.Completeness
	if err := set(1, "Completeness", st.bold); err != nil {
		return err
	}
	row++
	balanced := "yes"
	if !c.Balanced {
		balanced = "NO: see the files table"
	}
	moneyStyle, _ := st.forKind(f, Money, 2)
	for _, it := range []struct {
		l string
		v any
		s int
	}{
		{"Input files", int64(c.Files), countStyle},
		{"Rows read", c.RowsRead, countStyle},
		{"Rows loaded", c.RowsLoaded, countStyle},
		{"Rows rejected", c.RowsRejected, countStyle},
		{"Read = loaded + rejected, every file", balanced, 0},
	} {
		if err := pair(it.l, it.v, it.s); err != nil {
			return err
		}
	}
	// One line per currency when the ledger holds several: never a sum
	// across currencies.
	sums := []struct{ label, pos, neg, net string }{{"", c.SumPositive, c.SumNegative, c.Net}}
	if len(c.Currencies) > 1 {
		sums = sums[:0]
		for _, cur := range c.Currencies {
			name := cur.Currency
			if name == "" {
				name = "(no currency)"
			}
			sums = append(sums, struct{ label, pos, neg, net string }{" (" + name + ")", cur.SumPositive, cur.SumNegative, cur.Net})
		}
	}
	for _, sm := range sums {
		for _, it := range []struct{ l, v string }{
			{"Sum of positive amounts" + sm.label, sm.pos},
			{"Sum of negative amounts" + sm.label, sm.neg},
			{"Net" + sm.label, sm.net},
		} {
			if err := pair(it.l, moneyCell(it.v), moneyStyle); err != nil {
				return err
			}
		}
	}
	for _, j := range c.Journal {
		if err := pair("Journal check: "+j.Check, j.Text, 0); err != nil {
			return err
		}
	}
	if rc := c.Reconciliation; rc != nil {
		if err := pair("Reconciliation with "+rc.ControlFile, rc.Verdict, 0); err != nil {
			return err
		}
		if err := pair("Control file SHA-256", rc.SHA256, 0); err != nil {
			return err
		}
	}
	row++
	if err := set(1, "Key findings", st.bold); err != nil {
		return err
	}
	row++
	if len(run.Summary.Findings) == 0 {
		if err := pair("", "No step reported a finding.", 0); err != nil {
			return err
		}
	}
	for _, fd := range run.Summary.Findings {
		if err := set(1, fd.Section, st.label); err != nil {
			return err
		}
		if err := set(2, fd.Text, st.wrap); err != nil {
			return err
		}
		if sheet, ok := sheetOf[fd.Table]; ok {
			if err := link(3, "see sheet "+sheet, sheet); err != nil {
				return err
			}
		}
		row++
	}
	if len(run.Summary.Notes) > 0 {
		row++
		if err := set(1, "Notes", st.bold); err != nil {
			return err
		}
		row++
		for _, n := range run.Summary.Notes {
			if err := set(2, n, st.wrap); err != nil {
				return err
			}
			row++
		}
	}
	row++
	if err := set(1, "Sheets", st.bold); err != nil {
		return err
	}
	row++
	for i, h := range []string{"Sheet", "Title", "Rows in the sheet", "Rows in all", "Table (CSV, Parquet)", "Note"} {
		if err := set(i+1, h, st.header); err != nil {
			return err
		}
	}
	row++
	for _, t := range run.Tables {
		if err := link(1, sheetOf[t.Name], sheetOf[t.Name]); err != nil {
			return err
		}
		if err := set(2, t.Title, st.wrap); err != nil {
			return err
		}
		if err := set(3, t.SheetRows, countStyle); err != nil {
			return err
		}
		if err := set(4, max(t.RowsTotal, int64(len(t.Rows))), countStyle); err != nil {
			return err
		}
		if err := set(5, TablesDir+"/"+t.Name+".csv", 0); err != nil {
			return err
		}
		if err := set(6, SheetNote(t), st.wrap); err != nil {
			return err
		}
		row++
	}
	if err := f.SetColWidth(sh, "A", "A", 34); err != nil {
		return err
	}
	if err := f.SetColWidth(sh, "B", "B", 90); err != nil {
		return err
	}
	if err := f.SetColWidth(sh, "C", "E", 20); err != nil {
		return err
	}
	return f.SetColWidth(sh, "F", "F", 60)
}

// SheetNote says what a table's sheet leaves out: rows beyond the sheet's
// limit or beyond what the step kept, and text cut at the cell limit.
func SheetNote(t *Table) string {
	var parts []string
	total := max(t.RowsTotal, int64(len(t.Rows)))
	switch {
	case t.SheetRows < total && t.Complete:
		parts = append(parts, fmt.Sprintf("the sheet holds the first %d of %d rows (the sheet's row limit); all %d are in %s/%s.csv and .parquet",
			t.SheetRows, total, total, TablesDir, t.Name))
	case t.SheetRows < total && t.Note != "":
		parts = append(parts, t.Note)
	case t.SheetRows < total:
		parts = append(parts, fmt.Sprintf("the first %d of %d rows", t.SheetRows, total))
	}
	if t.CellsCut > 0 {
		parts = append(parts, fmt.Sprintf("%d text cell(s) cut at the cell limit of %d characters and marked; the CSV holds the full text", t.CellsCut, CellLimit))
	}
	return strings.Join(parts, "; ")
}

func moneyCell(s string) any {
	if d, ok := NewDecimal(s); ok {
		return cellValue(d)
	}
	return s
}

func fmtTime(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.UTC().Format("2006-01-02 15:04:05")
}
