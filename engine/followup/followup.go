// Package followup carries the engagement team's follow-up of exported
// records back into the workspace. Every exported record set (drill --out,
// a pack's extracts and samples) ends in four empty columns the team
// fills: followup_status, followup_note, followup_reviewer and
// followup_reviewed_on. Read reads a returned file (CSV, or a sheet of an
// XLSX workbook), matches each row to one ledger record by its file_name
// and line (the columns every export carries), stores the matched rows
// and refuses the others with the reason: rows read = rows stored + rows
// refused, per file. Report reads the latest follow-up of each record
// for the next report and workbook.
//
// The columns are named with a followup_ prefix so that they never meet a
// client's own column (a ledger export often has a "status" or "note").
package followup

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/engine/xlsxin"
	"github.com/leadline/leadline/queries"
)

// The follow-up columns, in the order exports carry them.
const (
	Status     = "followup_status"
	Note       = "followup_note"
	Reviewer   = "followup_reviewer"
	ReviewedOn = "followup_reviewed_on"
)

// Columns are the follow-up columns in export order.
var Columns = []string{Status, Note, Reviewer, ReviewedOn}

// Key columns: a returned row names its ledger record by these.
const (
	FileColumn = "file_name"
	LineColumn = "line"
	ItemColumn = "item" // a pack extract's item (optional)
)

// WithColumns wraps a records query (rendered by leadline, without its
// semicolon) so that its rows end in the empty follow-up columns.
func WithColumns(query string) string {
	return queries.Render("followup_with_columns", map[string]string{"query": strings.TrimSuffix(strings.TrimSpace(query), ";")})
}

// Options say how to read returned files.
type Options struct {
	Sheet string // the sheet of an .xlsx file (name or 1-based position); "" for the first
	// FileColumn names the column holding the file name ("" for
	// file_name): drill names it file_name_2 when the ledger has a
	// file_name column of its own.
	FileColumn string
	Now        time.Time // the read's time (tests); default time.Now
}

// Refusal is one returned row that was not stored.
type Refusal struct {
	Line   int64  `json:"line"`
	Reason string `json:"reason"`
}

// FileResult is one returned file read.
type FileResult struct {
	ReadID      int64     `json:"read_id"`
	Path        string    `json:"path"`
	Sheet       string    `json:"sheet,omitempty"`
	SHA256      string    `json:"sha256"`
	RowsRead    int64     `json:"rows_read"`
	RowsStored  int64     `json:"rows_stored"`
	RowsRefused int64     `json:"rows_refused"`
	Filled      int64     `json:"rows_filled"`      // stored rows with a status or a note entered
	Refusals    []Refusal `json:"refused_first"`    // the first refused rows
	Missing     []string  `json:"columns_missing"`  // follow-up columns the file lacks (read as blank)
	Statuses    []string  `json:"statuses_entered"` // distinct statuses entered, sorted
}

// maxRefusals bounds the refused rows a FileResult lists (all are stored).
const maxRefusals = 20

// row is one returned row as read.
type row struct {
	line                                             int64
	file, recLine, item, status, note, who, reviewed string
}

// Read reads each returned file into the workspace, one transaction per
// file. A file whose header lacks the key columns is an error naming the
// file and the columns it has; rows that match no single record are
// refused (stored in followup_refused with the reason), never dropped.
func Read(ctx context.Context, ws *workspace.Workspace, paths []string, o Options) ([]FileResult, error) {
	if o.FileColumn == "" {
		o.FileColumn = FileColumn
	}
	if o.Now.IsZero() {
		o.Now = time.Now()
	}
	if _, err := ws.Conn.ExecContext(ctx, queries.Get("followup_schema")); err != nil {
		return nil, fmt.Errorf("follow-up: making its tables: %w", err)
	}
	var out []FileResult
	for _, p := range paths {
		fr, err := readOne(ctx, ws, p, o)
		if err != nil {
			return out, err
		}
		out = append(out, *fr)
	}
	return out, nil
}

func readOne(ctx context.Context, ws *workspace.Workspace, path string, o Options) (*FileResult, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("follow-up: %w", err)
	}
	sum := sha256.Sum256(data)
	fr := &FileResult{Path: abs, SHA256: hex.EncodeToString(sum[:]), Refusals: []Refusal{}, Missing: []string{}, Statuses: []string{}}
	var text []byte
	lineCol := "" // the column holding each row's own line, for a workbook
	switch strings.ToLower(filepath.Ext(path)) {
	case ".xlsx", ".xlsm":
		var buf bytes.Buffer
		t, err := xlsxin.Convert(path, xlsxin.Options{Sheet: o.Sheet}, &buf)
		if err != nil {
			return nil, fmt.Errorf("follow-up: %w", err)
		}
		fr.Sheet = t.Sheet
		text, lineCol = buf.Bytes(), xlsxin.LineColumn
	case ".csv", ".txt", ".tsv":
		if o.Sheet != "" {
			return nil, fmt.Errorf("follow-up: %s: --sheet is for a workbook (.xlsx); this is a text file", path)
		}
		text = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	default:
		return nil, fmt.Errorf("follow-up: %s: give a returned .csv or .xlsx file (an export of leadline with its follow-up columns filled)", path)
	}
	rows, missing, err := parse(text, path, lineCol, o.FileColumn)
	if err != nil {
		return nil, err
	}
	fr.Missing = missing
	fr.RowsRead = int64(len(rows))

	tx, err := ws.Conn.BeginTx(ctx, nil)
	if err != nil {
		return nil, err
	}
	defer tx.Rollback()
	if err := tx.QueryRowContext(ctx, queries.Get("followup_next_read")).Scan(&fr.ReadID); err != nil {
		return nil, err
	}
	if _, err := tx.ExecContext(ctx, queries.Get("followup_stage_create")); err != nil {
		return nil, err
	}
	const batch = 250
	for i := 0; i < len(rows); i += batch {
		part := rows[i:min(i+batch, len(rows))]
		marks := strings.TrimSuffix(strings.Repeat("(?, ?, ?, ?, ?, ?, ?, ?), ", len(part)), ", ")
		args := make([]any, 0, 8*len(part))
		for _, r := range part {
			args = append(args, r.line, r.file, r.recLine, r.item, r.status, r.note, r.who, r.reviewed)
		}
		if _, err := tx.ExecContext(ctx, queries.Render("followup_stage_insert", map[string]string{"values": marks}), args...); err != nil {
			return nil, fmt.Errorf("follow-up: %s: %w", path, err)
		}
	}
	for _, q := range []string{"followup_match"} {
		if _, err := tx.ExecContext(ctx, queries.Get(q)); err != nil {
			return nil, fmt.Errorf("follow-up: %s: %w", path, err)
		}
	}
	for _, q := range []string{"followup_store", "followup_refuse"} {
		if _, err := tx.ExecContext(ctx, queries.Get(q), fr.ReadID); err != nil {
			return nil, fmt.Errorf("follow-up: %s: %w", path, err)
		}
	}
	if err := tx.QueryRowContext(ctx, queries.Get("followup_counts"), fr.ReadID, fr.ReadID, fr.ReadID).Scan(&fr.RowsStored, &fr.RowsRefused, &fr.Filled); err != nil {
		return nil, err
	}
	if fr.RowsStored+fr.RowsRefused != fr.RowsRead {
		return nil, fmt.Errorf("follow-up: %s: %d rows read but %d stored + %d refused; nothing was kept", path, fr.RowsRead, fr.RowsStored, fr.RowsRefused)
	}
	ref, err := tx.QueryContext(ctx, queries.Get("followup_refused_first"), fr.ReadID, maxRefusals)
	if err != nil {
		return nil, err
	}
	for ref.Next() {
		var r Refusal
		if err := ref.Scan(&r.Line, &r.Reason); err != nil {
			ref.Close()
			return nil, err
		}
		fr.Refusals = append(fr.Refusals, r)
	}
	ref.Close()
	if err := ref.Err(); err != nil {
		return nil, err
	}
	sts, err := tx.QueryContext(ctx, queries.Get("followup_statuses"), fr.ReadID)
	if err != nil {
		return nil, err
	}
	for sts.Next() {
		var s string
		if err := sts.Scan(&s); err != nil {
			sts.Close()
			return nil, err
		}
		fr.Statuses = append(fr.Statuses, s)
	}
	sts.Close()
	if err := sts.Err(); err != nil {
		return nil, err
	}
	if _, err := tx.ExecContext(ctx, queries.Get("followup_insert_read"), fr.ReadID, o.Now.UTC(), fr.Path, nullable(fr.Sheet), fr.SHA256, fr.RowsRead, fr.RowsStored, fr.RowsRefused); err != nil {
		return nil, err
	}
	if err := tx.Commit(); err != nil {
		return nil, err
	}
	return fr, nil
}

func nullable(s string) any {
	if s == "" {
		return nil
	}
	return s
}

// normalHeader reads a header cell as a column name: the JSON name of a
// CSV ("followup_status") or the workbook's heading ("Followup status").
func normalHeader(h string) string {
	h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "'")))
	return strings.Join(strings.Fields(h), "_")
}

// ErrNoKey is returned for a file without the key columns.
var ErrNoKey = errors.New("no key columns")

// parse reads the returned file's text as CSV (comma, or semicolon when
// the header holds semicolons and no comma, as a spreadsheet of a
// decimal-comma locale saves it). lineCol names a column that holds each
// row's own line number (a workbook's sheet row); otherwise the CSV line
// where the row starts (header = 1) is its line.
func parse(text []byte, path, lineCol, fileCol string) ([]row, []string, error) {
	first, _, _ := bytes.Cut(text, []byte("\n"))
	cr := csv.NewReader(bytes.NewReader(text))
	if !bytes.Contains(first, []byte(",")) && bytes.Contains(first, []byte(";")) {
		cr.Comma = ';'
	}
	cr.FieldsPerRecord = -1
	head, err := cr.Read()
	if err == io.EOF {
		return nil, nil, fmt.Errorf("follow-up: %s is empty: give the returned export, header row included", path)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("follow-up: %s: %w", path, err)
	}
	at := map[string]int{}
	for i, h := range head {
		n := normalHeader(h)
		if _, dup := at[n]; !dup {
			at[n] = i
		}
	}
	need := []string{fileCol, LineColumn}
	for _, k := range need {
		if _, ok := at[k]; !ok {
			return nil, nil, fmt.Errorf("follow-up: %s: %w: the header has no %q column (it has: %s); a returned file must keep the %s and %s columns of the export, which name each record",
				path, ErrNoKey, k, strings.Join(head, ", "), fileCol, LineColumn)
		}
	}
	var missing []string
	for _, c := range Columns {
		if _, ok := at[c]; !ok {
			missing = append(missing, c)
		}
	}
	if len(missing) == len(Columns) {
		return nil, nil, fmt.Errorf("follow-up: %s: none of the follow-up columns (%s) is in its header: it is not an export with follow-up columns, or they were renamed", path, strings.Join(Columns, ", "))
	}
	get := func(rec []string, name string) string {
		i, ok := at[name]
		if !ok || i >= len(rec) {
			return ""
		}
		return unneutral(rec[i])
	}
	var out []row
	for {
		line, _ := cr.FieldPos(0)
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, nil, fmt.Errorf("follow-up: %s: %w (fix the file's quoting and read it again)", path, err)
		}
		if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
			continue
		}
		line, _ = cr.FieldPos(0)
		r := row{line: int64(line), file: get(rec, fileCol), recLine: get(rec, LineColumn), item: get(rec, ItemColumn),
			status: get(rec, Status), note: get(rec, Note), who: get(rec, Reviewer), reviewed: get(rec, ReviewedOn)}
		if lineCol != "" {
			var n int64
			if _, err := fmt.Sscan(get(rec, lineCol), &n); err == nil {
				r.line = n
			}
		}
		out = append(out, r)
	}
	return out, missing, nil
}

// unneutral undoes the leading quote that CSV exports put before text a
// spreadsheet would run as a formula ('=x is =x).
func unneutral(s string) string {
	if len(s) > 1 && s[0] == '\'' && strings.ContainsRune("=+-@\t\r", rune(s[1])) {
		return s[1:]
	}
	return s
}
