package output

import (
	"fmt"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"
)

// SummarySheet is the name of the workbook's first sheet.
const SummarySheet = "summary"

// maxSheetRows leaves room for the header within a worksheet's 1,048,576 rows.
const maxSheetRows = 1_048_575

// XLSXHook adds to the workbook after the sheets are written, e.g. native
// charts. sheetOf maps each table's name to its sheet's name.
type XLSXHook func(f *excelize.File, run *Run, sheetOf map[string]string) error

// SheetNames gives each table a sheet name: its name cut to Excel's 31
// characters, made unique. The summary sheet comes first.
func SheetNames(tables []*Table) map[string]string {
	used := map[string]bool{strings.ToLower(SummarySheet): true}
	out := map[string]string{}
	for _, t := range tables {
		base := t.Name
		if utf8.RuneCountInString(base) > 31 {
			base = string([]rune(base)[:31])
		}
		name := base
		for k := 2; used[strings.ToLower(name)]; k++ {
			suf := fmt.Sprintf("_%d", k)
			r := []rune(base)
			if len(r)+len(suf) > 31 {
				r = r[:31-len(suf)]
			}
			name = string(r) + suf
		}
		used[strings.ToLower(name)] = true
		out[t.Name] = name
	}
	return out
}

type styles struct {
	header, title, label, wrap, bold int
	kind                             map[string]int
}

func numFmt(k Kind, scale int) string {
	switch k {
	case Count:
		return "#,##0"
	case Money:
		if scale <= 0 {
			return "#,##0"
		}
		return "#,##0." + strings.Repeat("0", scale)
	case Number, Proportion:
		return "0.0000"
	case Percent:
		return "0.00%"
	case Date:
		return "yyyy-mm-dd"
	case Timestamp:
		return "yyyy-mm-dd hh:mm:ss"
	}
	return ""
}

func (s *styles) forKind(f *excelize.File, k Kind, scale int) (int, error) {
	code := numFmt(k, scale)
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
	if err := writeSummarySheet(f, st, run, sheetOf); err != nil {
		return err
	}
	for _, t := range run.Tables {
		if err := writeTableSheet(f, st, sheetOf[t.Name], t); err != nil {
			return fmt.Errorf("sheet %s: %w", sheetOf[t.Name], err)
		}
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

func writeTableSheet(f *excelize.File, st *styles, sheet string, t *Table) error {
	if _, err := f.NewSheet(sheet); err != nil {
		return err
	}
	sw, err := f.NewStreamWriter(sheet)
	if err != nil {
		return err
	}
	colStyle := make([]int, len(t.Columns))
	widths := make([]int, len(t.Columns))
	for i, c := range t.Columns {
		scale := 0
		if c.Kind == Money {
			scale, _ = t.moneyScale(i)
		}
		if colStyle[i], err = st.forKind(f, c.Kind, scale); err != nil {
			return err
		}
		widths[i] = utf8.RuneCountInString(c.Name) + 2
	}
	rows := t.Rows
	if len(rows) > maxSheetRows {
		rows = rows[:maxSheetRows]
	}
	for _, r := range rows[:min(len(rows), 200)] {
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
	head := make([]any, len(t.Columns))
	for i, c := range t.Columns {
		head[i] = excelize.Cell{StyleID: st.header, Value: c.Name}
	}
	if err := sw.SetRow("A1", head); err != nil {
		return err
	}
	for n, r := range rows {
		vals := make([]any, len(t.Columns))
		for i := range t.Columns {
			v := cellValue(r[i])
			if v == nil {
				continue
			}
			if s, ok := v.(string); ok && t.Columns[i].Kind != Text {
				vals[i] = s
				continue
			}
			vals[i] = excelize.Cell{StyleID: colStyle[i], Value: v}
		}
		cell, _ := excelize.CoordinatesToCellName(1, n+2)
		if err := sw.SetRow(cell, vals); err != nil {
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
		{"Sum of positive amounts", moneyCell(c.SumPositive), moneyStyle},
		{"Sum of negative amounts", moneyCell(c.SumNegative), moneyStyle},
		{"Net", moneyCell(c.Net), moneyStyle},
	} {
		if err := pair(it.l, it.v, it.s); err != nil {
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
		if fd.Table != "" {
			if err := set(3, "see sheet "+sheetOf[fd.Table], 0); err != nil {
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
	for i, h := range []string{"sheet", "title", "rows"} {
		if err := set(i+1, h, st.header); err != nil {
			return err
		}
	}
	row++
	for _, t := range run.Tables {
		if err := set(1, sheetOf[t.Name], 0); err != nil {
			return err
		}
		title := t.Title
		if t.Truncated {
			title += fmt.Sprintf(" (first %d of %d rows)", len(t.Rows), t.RowsTotal)
		}
		if err := set(2, title, 0); err != nil {
			return err
		}
		if err := set(3, int64(len(t.Rows)), countStyle); err != nil {
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
	return f.SetColWidth(sh, "C", "C", 28)
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
