package load

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/engine/xlsxin"
	"github.com/leadline/leadline/queries"
)

// An .xlsx file is read through the CSV path: engine/xlsxin finds the
// sheet's header and writes its rows as UTF-8 CSV, each record led by its
// sheet row number, which becomes the row's line. The CSV is a temporary
// file that lives only while DuckDB stages it. The workspace records the
// workbook itself (its name, size and SHA-256) and the sheet read.

// SheetReport tells which sheet of a workbook a load read, and how.
type SheetReport struct {
	Sheet        string   `json:"sheet"`
	SheetIndex   int      `json:"sheet_index"`
	Chosen       string   `json:"chosen"`
	HeaderRow    int64    `json:"header_row"`
	Skipped      []string `json:"skipped_above_header"`
	FormulaCells int64    `json:"formula_cells"`
	EmptyRows    int64    `json:"empty_rows"`
	Date1904     bool     `json:"date_1904"`
}

// examineXLSX reads a workbook up to its header row.
func examineXLSX(path string, opts Options) (*Source, error) {
	t, err := xlsxin.Convert(path, xlsxOptions(opts), nil)
	if err != nil {
		return nil, err
	}
	src := &Source{Path: path, Name: filepath.Base(path), Format: "xlsx", Delimiter: ",", Encoding: "utf-8", sheet: t}
	var warns []string
	src.Columns, warns = cleanNames(t.Columns)
	src.Warnings = append(append(src.Warnings, t.Warnings...), warns...)
	return src, nil
}

func xlsxOptions(opts Options) xlsxin.Options {
	return xlsxin.Options{Sheet: opts.Sheet, DecimalComma: opts.DecimalComma, DateFormat: opts.DateFormat}
}

// XLSXColumns reads the column names of a workbook's sheet without loading
// it (a pack's check of its sources).
func XLSXColumns(path string, opts Options) ([]string, error) {
	src, err := examineXLSX(path, opts)
	if err != nil {
		return nil, err
	}
	return src.Columns, nil
}

// stageXLSX writes the sheet as CSV to a temporary file and stages that
// (stageCSV); the file is removed as soon as DuckDB has read it.
func stageXLSX(ctx context.Context, ws *workspace.Workspace, src *Source, opts Options, i int) error {
	f, err := os.CreateTemp("", "leadline-sheet-*.csv")
	if err != nil {
		return fmt.Errorf("%s: a temporary file for the sheet: %w", src.Path, err)
	}
	defer os.Remove(f.Name())
	t, err := xlsxin.Convert(src.Path, xlsxOptions(opts), f)
	if cerr := f.Close(); err == nil && cerr != nil {
		err = fmt.Errorf("%s: writing the sheet's rows to %s: %w", src.Path, f.Name(), cerr)
	}
	if err != nil {
		return err
	}
	if t.HeaderRow != src.sheet.HeaderRow || len(t.Columns) != len(src.sheet.Columns) {
		return fmt.Errorf("%s: the workbook changed while it was being loaded (its header moved); nothing was loaded", src.Path)
	}
	// Warnings known only once every row is read (merged cells).
	for _, w := range t.Warnings {
		if !slices.Contains(src.Warnings, w) {
			src.Warnings = append(src.Warnings, w)
		}
	}
	src.sheet, src.sheetCSV = t, f.Name()
	defer func() { src.sheetCSV = "" }()
	return stageCSV(ctx, ws, src, i)
}

// readPath is the file DuckDB's reader reads for src.
func (s *Source) readPath() string {
	if s.sheetCSV != "" {
		return s.sheetCSV
	}
	return s.csvPath()
}

// lineColumns is the reader's column list entry for the sheet row number.
func (s *Source) lineColumns() []string {
	if s.sheet == nil {
		return nil
	}
	return []string{queries.QuoteString(xlsxin.LineColumn) + ": 'BIGINT'"}
}

// rejectSheetRows moves the rows the sheet reader refused (empty rows
// inside the table, formulas without a cached value, values in a column
// with no header) from the ledger to rejects, with their reasons, before
// the amount and date rules see them. They were read, so they count as
// read and as rejected.
func rejectSheetRows(ctx context.Context, tx *sql.Tx, src *Source, fileID int64) error {
	if src.sheet == nil || len(src.sheet.Rejects) == 0 {
		return nil
	}
	rejs := src.sheet.Rejects
	for len(rejs) > 0 {
		n := min(len(rejs), 1000)
		var vals, lines []string
		for _, r := range rejs[:n] {
			vals = append(vals, fmt.Sprintf("(%d, %s, %s, %s)", r.Line, nullable(r.Column), nullable(r.Raw), queries.QuoteString(r.Reason)))
			lines = append(lines, fmt.Sprint(r.Line))
		}
		q := queries.Render("load_sheet_rejects", map[string]string{"values": strings.Join(vals, ", ")})
		if _, err := tx.ExecContext(ctx, q, fileID); err != nil {
			return fmt.Errorf("%s: recording the sheet's rejected rows: %w", src.Path, err)
		}
		q = queries.Render("load_sheet_rejects_delete", map[string]string{"lines": strings.Join(lines, ", ")})
		if _, err := tx.ExecContext(ctx, q, fileID); err != nil {
			return fmt.Errorf("%s: recording the sheet's rejected rows: %w", src.Path, err)
		}
		rejs = rejs[n:]
	}
	return nil
}

func nullable(s string) string {
	if s == "" {
		return "NULL"
	}
	return queries.QuoteString(s)
}

// sheetReport is what a load says about the sheet it read (nil for CSV
// and Parquet).
func sheetReport(src *Source) *SheetReport {
	t := src.sheet
	if t == nil {
		return nil
	}
	return &SheetReport{Sheet: t.Sheet, SheetIndex: t.SheetIndex, Chosen: t.ChosenHow, HeaderRow: t.HeaderRow,
		Skipped: t.Skipped, FormulaCells: t.FormulaCells, EmptyRows: t.EmptyRows, Date1904: t.Date1904}
}

// sheetName is the sheet read, for the files table's dialect ("" unless
// the file is a workbook).
func sheetName(src *Source) string {
	if src.sheet == nil {
		return ""
	}
	return src.sheet.Sheet
}

// sharedRejects is the number of a file's rejected rows that count against
// --max-rejects: an empty row inside a sheet's table holds nothing that
// could be lost, so it is counted as read and rejected but not held
// against the share.
func sharedRejects(fr *FileReport) int64 {
	if fr.Sheet == nil {
		return fr.RowsRejected
	}
	return fr.RowsRejected - fr.Sheet.EmptyRows
}

// inspectXLSX inspects a workbook's sheet: the sheet's first rows are
// written as a CSV sample and inspected as such, and the result speaks of
// the workbook.
func inspectXLSX(ctx context.Context, ws *workspace.Workspace, path string, opts Options, sampleRows int) (*Inspection, error) {
	f, err := os.CreateTemp("", "leadline-sheet-*.csv")
	if err != nil {
		return nil, err
	}
	defer os.Remove(f.Name())
	xo := xlsxOptions(opts)
	xo.MaxRows, xo.NoLineColumn = 20480, true
	t, err := xlsxin.Convert(path, xo, f)
	if cerr := f.Close(); err == nil && cerr != nil {
		err = cerr
	}
	if err != nil {
		return nil, err
	}
	co := opts
	co.Delimiter, co.Encoding, co.Sheet = ",", "", ""
	in, err := Inspect(ctx, ws, f.Name(), co, sampleRows)
	if err != nil {
		return nil, fmt.Errorf("%s: %s", path, strings.TrimPrefix(err.Error(), f.Name()+": "))
	}
	in.Path, in.Format, in.Delimiter, in.Encoding = path, "xlsx", "", ""
	in.SizeBytes, in.SHA256, err = Hash(path)
	if err != nil {
		return nil, err
	}
	if w, err := xlsxin.Open(path); err == nil {
		if w.CountRows() == nil {
			t.Sheets = w.Sheets
		}
		w.Close()
	}
	in.Sheet = t
	in.Warnings = append(t.Warnings, in.Warnings...)
	// The command names the sheet, so that it reads the same sheet even
	// if another is added in front of it later.
	q := shellQuote(f.Name())
	in.LoadCommand = strings.TrimSuffix(in.LoadCommand, q) + "--sheet " + shellQuote(t.Sheet) + " " + shellQuote(path)
	in.LoadCommand = strings.ReplaceAll(in.LoadCommand, " --delimiter ','", "")
	return in, nil
}

// xlsxFormat tells a workbook's format from its name: .xlsx and .xlsm are
// read; the old binary .xls is refused with what to do.
func xlsxFormat(path, lower string, gz bool) (string, bool, error) {
	switch {
	case strings.HasSuffix(lower, ".xls"):
		return "", false, fmt.Errorf("%s: an old binary Excel workbook (.xls), which leadline does not read; open it in the spreadsheet program and save it as .xlsx (Excel Workbook) or as CSV UTF-8, then load that", path)
	case gz:
		return "", false, fmt.Errorf("%s: gzip around a workbook is not supported; an .xlsx file compresses itself: gunzip it first", path)
	}
	return "xlsx", false, nil
}

// topReason is the most common reject reason that counts against
// --max-rejects (an empty sheet row does not).
func topReason(fr *FileReport) ReasonCount {
	for _, r := range fr.RejectReasons {
		if fr.Sheet == nil || !strings.HasPrefix(r.Reason, xlsxin.EmptyRowReason) {
			return r
		}
	}
	return fr.RejectReasons[0]
}
