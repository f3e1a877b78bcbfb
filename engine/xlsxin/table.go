package xlsxin

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"io"
	"strings"
)

// Options say which sheet to read and how to write it.
type Options struct {
	Sheet        string // name, or 1-based position; "" for the first sheet holding a value
	DecimalComma bool   // write numbers with a decimal comma (the load reads amounts so)
	MaxRows      int64  // stop after this many table rows (0: all); for a sample
	NoLineColumn bool   // leave out the sheet row number column (a sample)
	// DateFormat is the load's strptime format of text dates: date cells
	// are written in it, so that both read alike ("" for ISO dates).
	DateFormat string
}

// EmptyRowReason is the reject reason of an empty row inside the table.
const EmptyRowReason = "empty row inside the table (no value in any column)"

// LineColumn names the CSV column holding each row's sheet row number.
const LineColumn = "ll_sheet_row"

// scanRows is how many rows with a value are looked at to find the
// header: a table's header sits near the top of its sheet.
const scanRows = 50

// RowReject is a sheet row that cannot be loaded, and why.
type RowReject struct {
	Line   int64  `json:"line"`
	Column string `json:"column"`
	Raw    string `json:"raw"`
	Reason string `json:"reason"`
}

// Table is what was found and read on the chosen sheet.
type Table struct {
	Sheets     []Sheet  `json:"sheets"`
	Sheet      string   `json:"sheet"`
	SheetIndex int      `json:"sheet_index"`
	ChosenHow  string   `json:"chosen"` // named, by position, the first sheet holding a value
	Date1904   bool     `json:"date_1904"`
	HeaderRow  int64    `json:"header_row"`
	Columns    []string `json:"columns"`
	Skipped    []string `json:"skipped_above_header"` // rows with a value above the header, "row 1: text"
	Warnings   []string `json:"warnings"`
	// Filled by a full read (Convert with a writer):
	Rows         int64       `json:"-"` // table rows written, empty rows inside the table included
	EmptyRows    int64       `json:"-"`
	FormulaCells int64       `json:"-"`
	Rejects      []RowReject `json:"-"`
}

// Describe says in one line which sheet was read and from where.
func (t *Table) Describe() string {
	s := fmt.Sprintf("sheet %q (%d of %d, %s), header at row %d", t.Sheet, t.SheetIndex, len(t.Sheets), t.ChosenHow, t.HeaderRow)
	if t.Date1904 {
		s += ", 1904 date system"
	}
	return s
}

// Convert reads the chosen sheet of the workbook at path. With out nil it
// stops once the header is known; otherwise it writes the table to out as
// UTF-8 CSV: the header (after the sheet row column, unless left out),
// then one record per sheet row from the one below the header to the last
// row holding a value. An empty row inside the table is written too
// (counted as read, and rejected by the load as empty); empty rows after
// the last value are not part of the table.
func Convert(path string, o Options, out io.Writer) (*Table, error) {
	w, err := Open(path)
	if err != nil {
		return nil, err
	}
	defer w.Close()
	s, how, err := w.Choose(o.Sheet)
	if err != nil {
		return nil, err
	}
	t := &Table{Sheets: w.Sheets, Sheet: s.Name, SheetIndex: s.Index, ChosenHow: how, Date1904: w.Date1904}
	if s.state != "" && s.state != "visible" {
		t.Warnings = append(t.Warnings, fmt.Sprintf("sheet %q is %s in the workbook", s.Name, s.state))
	}
	r, err := w.openRows(s)
	if err != nil {
		return nil, err
	}
	defer r.close()
	fail := func(err error) (*Table, error) {
		return nil, fmt.Errorf("%s: sheet %q: %v", path, s.Name, err)
	}
	// Buffer the first rows holding a value, then pick the header.
	head, err := r.head()
	if err != nil {
		return fail(err)
	}
	h := pickHeader(head)
	if h < 0 {
		return nil, fmt.Errorf("%s: sheet %q: no header row found among its first %d rows holding a value (a header is a row with at least two text cells and rows of data below it); choose another sheet with --sheet (%s)", path, s.Name, len(head), w.names())
	}
	hdr := head[h]
	t.HeaderRow = hdr.num
	for _, rw := range head[:h] {
		t.Skipped = append(t.Skipped, fmt.Sprintf("row %d: %s", rw.num, preview(rw)))
	}
	if len(t.Skipped) > 0 {
		t.Warnings = append(t.Warnings, fmt.Sprintf("%d row(s) above the header (row %d) skipped as titles: %s", len(t.Skipped), hdr.num, strings.Join(t.Skipped, "; ")))
	}
	// The table is as wide as its header, or as the rows read with it
	// when they reach further (a header cell left blank at the end, or
	// merged with the one before it).
	width := 0
	for _, rw := range head[h:] {
		for _, c := range rw.cells {
			width = max(width, c.col+1)
		}
	}
	names := make([]string, width)
	var blank []int
	for _, c := range hdr.cells {
		// A header wrapped onto two lines in its cell ("Posting\ndate")
		// is named with single spaces, as it reads on screen.
		names[c.col] = strings.Join(strings.Fields(c.text), " ")
		if c.kind == kNoValue {
			names[c.col] = ""
		}
	}
	for i, n := range names {
		if n == "" {
			names[i] = "column_" + Letter(i)
			blank = append(blank, i)
		}
	}
	t.Columns = names
	for _, i := range blank {
		t.Warnings = append(t.Warnings, blankHeader(i, hdr.num))
	}
	if out == nil {
		return t, nil
	}

	bw := bufio.NewWriterSize(out, 1<<20)
	cw := csv.NewWriter(bw)
	rec := make([]string, 0, width+1)
	if !o.NoLineColumn {
		rec = append(rec, LineColumn)
	}
	if err := cw.Write(append(rec, names...)); err != nil {
		return nil, err
	}
	last := hdr.num
	var pending []int64 // empty rows not yet known to lie inside the table
	emit := func(rw *row) error {
		for n := last + 1; n < rw.num; n++ {
			pending = append(pending, n)
		}
		last = rw.num
		if rw.nonEmpty() == 0 {
			pending = append(pending, rw.num)
			return nil
		}
		for _, n := range pending {
			if err := writeEmpty(cw, rec[:0], n, width, o); err != nil {
				return err
			}
			t.Rows++
			t.EmptyRows++
			t.Rejects = append(t.Rejects, RowReject{Line: n, Reason: EmptyRowReason})
		}
		pending = pending[:0]
		rec = rec[:0]
		if !o.NoLineColumn {
			rec = append(rec, fmt.Sprint(rw.num))
		}
		fields := make([]string, width)
		var rej *RowReject
		for _, c := range rw.cells {
			if c.formula {
				t.FormulaCells++
			}
			if c.col >= width {
				if rej == nil {
					rej = &RowReject{Line: rw.num, Column: Letter(c.col), Raw: c.text,
						Reason: fmt.Sprintf("value in column %s, right of the header's last column %s: give that column a header in the sheet (row %d), then load again", Letter(c.col), Letter(width-1), hdr.num)}
				}
				continue
			}
			if c.kind == kNoValue {
				if rej == nil {
					f := c.fText
					if f == "=" {
						f = "(a shared formula)"
					}
					rej = &RowReject{Line: rw.num, Column: names[c.col], Raw: f,
						Reason: fmt.Sprintf("formula in %s%d has no cached value: open the workbook in a spreadsheet program, let it calculate, save it and load again", Letter(c.col), rw.num)}
				}
				continue
			}
			fields[c.col] = c.text
			if c.kind == kDate && o.DateFormat != "" && strings.Count(c.text, "-") == 2 {
				fields[c.col] = strftime(c.text, o.DateFormat)
			}
			if c.kind == kNumber && o.DecimalComma {
				fields[c.col] = strings.Replace(c.text, ".", ",", 1)
			}
			if c.kind == kNumber {
				fields[c.col] = unambiguous(fields[c.col])
			}
		}
		if rej != nil {
			t.Rejects = append(t.Rejects, *rej)
		}
		t.Rows++
		return cw.Write(append(rec, fields...))
	}
	for _, rw := range head[h+1:] {
		if err := emit(rw); err != nil {
			return nil, err
		}
		if o.MaxRows > 0 && t.Rows >= o.MaxRows {
			break
		}
	}
	for o.MaxRows == 0 || t.Rows < o.MaxRows {
		rw, err := r.next()
		if err != nil {
			return fail(err)
		}
		if rw == nil {
			break
		}
		if err := emit(rw); err != nil {
			return nil, err
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return nil, err
	}
	if err := bw.Flush(); err != nil {
		return nil, err
	}
	if t.Rows == 0 {
		return nil, fmt.Errorf("%s: sheet %q: the header at row %d has no data rows below it", path, s.Name, hdr.num)
	}
	for _, i := range blank {
		if m := mergesOn(r.Merges, hdr.num, i); len(m) > 0 {
			t.Warnings = append(t.Warnings, fmt.Sprintf("header cell %s%d is part of the merged cells %s, whose value sits in their first cell only: unmerge the header cells and name each column", Letter(i), hdr.num, strings.Join(m, ", ")))
		}
	}
	if m := dataMerges(r.Merges, hdr.num); len(m) > 0 {
		t.Warnings = append(t.Warnings, fmt.Sprintf("merged cells inside the table (%s): a merged range keeps its value in its first cell only, so the other rows read those columns as blank", strings.Join(m, ", ")))
	}
	return t, nil
}

func writeEmpty(cw *csv.Writer, rec []string, n int64, width int, o Options) error {
	if !o.NoLineColumn {
		rec = append(rec, fmt.Sprint(n))
	}
	return cw.Write(append(rec, make([]string, width)...))
}

// unambiguous gives a number with exactly three decimals and at most
// three digits before its mark (1.234) a fourth decimal (1.2340), so that
// the load's check of decimal marks cannot take the mark for a thousands
// separator: a number cell has no such doubt.
func unambiguous(s string) string {
	t := strings.TrimPrefix(s, "-")
	i := strings.IndexAny(t, ".,")
	if i >= 1 && i <= 3 && len(t)-i-1 == 3 {
		return s + "0"
	}
	return s
}

// head reads the first rows holding a value.
func (r *rowReader) head() ([]*row, error) {
	var head []*row
	for len(head) < scanRows {
		rw, err := r.next()
		if err != nil {
			return nil, err
		}
		if rw == nil {
			break
		}
		if rw.nonEmpty() > 0 {
			head = append(head, rw)
		}
	}
	return head, nil
}

// pickHeader chooses the header among the first rows holding a value: the
// first row with at least two non-blank text cells, as many values as at
// least half the widest of these rows (a title above a table holds fewer),
// and a row with a value below it. It returns -1 when no row qualifies.
func pickHeader(rows []*row) int {
	widest := 0
	for _, r := range rows {
		widest = max(widest, r.nonEmpty())
	}
	for i, r := range rows {
		if i+1 < len(rows) && r.texts() >= 2 && 2*r.nonEmpty() >= widest {
			return i
		}
	}
	return -1
}

func preview(r *row) string {
	var parts []string
	for _, c := range r.cells {
		parts = append(parts, c.text)
	}
	s := strings.Join(parts, " | ")
	if len([]rune(s)) > 60 {
		s = string([]rune(s)[:57]) + "..."
	}
	return fmt.Sprintf("%q", s)
}

func blankHeader(col int, hdrRow int64) string {
	name := "column_" + Letter(col)
	return fmt.Sprintf("column %s has no header (cell %s%d is blank or merged); called it %s: give it a header in the sheet, or map it (e.g. --map descr=%s)", Letter(col), Letter(col), hdrRow, name, name)
}

// mergesOn returns the merged ranges covering the cell at col, row.
func mergesOn(merges []string, row int64, col int) []string {
	var out []string
	for _, m := range merges {
		c0, r0, c1, r1, ok := rangeOf(m)
		if ok && row >= r0 && row <= r1 && col >= c0 && col <= c1 {
			out = append(out, m)
		}
	}
	return out
}

// dataMerges returns the merged ranges below the header spanning rows.
func dataMerges(merges []string, hdr int64) []string {
	var out []string
	for _, m := range merges {
		_, r0, _, r1, ok := rangeOf(m)
		if ok && r1 > hdr && r1 > r0 {
			out = append(out, m)
			if len(out) == 10 {
				out = append(out, "...")
				break
			}
		}
	}
	return out
}

func rangeOf(ref string) (c0 int, r0 int64, c1 int, r1 int64, ok bool) {
	a, b, found := strings.Cut(ref, ":")
	if !found {
		b = a
	}
	var err error
	if c0, r0, err = splitRef(a); err != nil {
		return
	}
	if c1, r1, err = splitRef(b); err != nil {
		return
	}
	return c0, r0, c1, r1, true
}
