// Package load brings client extracts (CSV, TSV, Parquet) into the
// workspace's ledger table, exactly and completely: every record read is
// either loaded or stored in rejects with its line and reason, inside one
// transaction, so a failed load leaves the workspace as it was.
//
// It owns getting extracts into the ledger: reading, mapping and parsing
// the files, the load's settings and the completeness accounting of every
// row.
package load

import (
	"bufio"
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/engine/xlsxin"
	"github.com/leadline/leadline/queries"
)

// Options control how files are read and mapped.
type Options struct {
	Map          map[string]string `json:"map,omitempty"` // canonical -> original column
	Debit        string            `json:"debit,omitempty"`
	Credit       string            `json:"credit,omitempty"`
	DecimalComma bool              `json:"decimal_comma"`
	DecimalPoint bool              `json:"decimal_point,omitempty"` // the decimal mark is a point: settles amounts such as 1.234
	Scale        int               `json:"scale"`                   // decimal places of amounts (default 2)
	Precision    int               `json:"precision"`               // total digits (18 or 38; default 18)
	Delimiter    string            `json:"delimiter,omitempty"`
	Encoding     string            `json:"encoding,omitempty"`
	DateFormat   string            `json:"date_format,omitempty"` // strptime format of posted, e.g. %d/%m/%Y
	// TimeZone is the zone in which a Parquet TIMESTAMP WITH TIME ZONE
	// becomes a posting date ("" for UTC), never the machine's own.
	TimeZone string `json:"time_zone,omitempty"`
	Replace  bool   `json:"replace"` // reload a file already in the workspace
	// MaxRejects is the largest share of a file's rows that may be
	// rejected, as "5%" ("" for DefaultMaxRejects, "100%" to accept any).
	MaxRejects string `json:"max_rejects,omitempty"`
	// Sheet is the sheet of an .xlsx file to read: its name or 1-based
	// position ("" for the first sheet holding a value).
	Sheet string `json:"sheet,omitempty"`
	// InPlace registers Parquet files where they lie instead of copying
	// their rows: the ledger becomes a view over them (inplace.go).
	InPlace bool `json:"in_place,omitempty"`
}

// DefaultMaxRejects is the share of a file's rows a load may reject unless
// told otherwise: more means the file or the options are wrong (common
// practice, no source).
const DefaultMaxRejects = "1%"

// ParseShare reads a share of rows written as a percentage ("5%", "0.5%",
// "100%"); a plain number is read as a percentage too.
func ParseShare(s string) (float64, error) {
	t := strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(s), "%"))
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || v < 0 || v > 100 || t == "" {
		return 0, fmt.Errorf("%q: give a percentage from 0%% to 100%%, e.g. 5%%", s)
	}
	return v / 100, nil
}

// timeZone is the zone dates are taken in.
func timeZone(o Options) string {
	if o.TimeZone == "" {
		return "UTC"
	}
	return o.TimeZone
}

// maxRejects is the share of rows a file may have rejected.
func (o Options) maxRejects() (float64, error) {
	if o.MaxRejects == "" {
		return ParseShare(DefaultMaxRejects)
	}
	v, err := ParseShare(o.MaxRejects)
	if err != nil {
		return 0, fmt.Errorf("--max-rejects %w", err)
	}
	return v, nil
}

func (o *Options) defaults() {
	if o.Scale == 0 {
		o.Scale = 2
	}
	if o.Precision == 0 {
		o.Precision = 18
	}
}

// AmountType is the DECIMAL type the options ask for.
func (o Options) AmountType() string {
	o.defaults()
	return fmt.Sprintf("DECIMAL(%d,%d)", o.Precision, o.Scale)
}

// ReasonCount counts rejected rows of one file by reason.
type ReasonCount struct {
	Reason    string `json:"reason"`
	Rows      int64  `json:"rows"`
	FirstLine *int64 `json:"first_line"`
}

// FileReport is the completeness record of one file.
type FileReport struct {
	FileID        int64         `json:"file_id"`
	Path          string        `json:"path"`
	Name          string        `json:"name"`
	Format        string        `json:"format"`
	SizeBytes     int64         `json:"size_bytes"`
	SHA256        string        `json:"sha256"`
	RowsRead      int64         `json:"rows_read"`
	RowsLoaded    int64         `json:"rows_loaded"`
	RowsRejected  int64         `json:"rows_rejected"`
	RowsRounded   int64         `json:"rows_rounded"` // loaded rows whose amount had more decimal places than the scale
	Positive      string        `json:"sum_positive"`
	Negative      string        `json:"sum_negative"`
	Net           string        `json:"net"`
	Mapping       Mapping       `json:"mapping"`
	Delimiter     string        `json:"delimiter,omitempty"`
	Encoding      string        `json:"encoding,omitempty"`
	Warnings      []string      `json:"warnings"`
	RejectReasons []ReasonCount `json:"reject_reasons"`
	Sheet         *SheetReport  `json:"sheet,omitempty"` // XLSX: the sheet read
	Mode          string        `json:"mode,omitempty"`  // ModeInPlace for a file registered in place
	// Currencies are the totals per currency (debit/credit sides too);
	// with more than one, Positive, Negative and Net are left empty.
	Currencies []CurrencyTotal `json:"currencies"`
	BothSides  *BothSides      `json:"both_sides,omitempty"`
}

// EntityTotal is one entity's control totals over the whole workspace.
type EntityTotal struct {
	Entity   string `json:"entity"`
	Currency string `json:"currency"` // "" for rows that name none
	Rows     int64  `json:"rows"`
	Positive string `json:"sum_positive"`
	Negative string `json:"sum_negative"`
	Net      string `json:"net"`
}

// Report is what a load did.
type Report struct {
	LoadID       int64         `json:"load_id"`
	Workspace    string        `json:"workspace"`
	AmountType   string        `json:"amount_type"`
	Files        []FileReport  `json:"files"`
	Entities     []EntityTotal `json:"entities"`
	RowsRead     int64         `json:"rows_read"`
	RowsLoaded   int64         `json:"rows_loaded"`
	RowsRejected int64         `json:"rows_rejected"`
	RowsRounded  int64         `json:"rows_rounded"`
	Seconds      float64       `json:"seconds"`
}

// Load loads the files (paths or glob patterns) into the workspace in one
// transaction. When it returns an error nothing was written: the workspace
// is exactly as before (an interrupted context included).
func Load(ctx context.Context, ws *workspace.Workspace, args []string, opts Options) (*Report, error) {
	started := time.Now()
	rep, err := loadFiles(ctx, ws, args, opts, started)
	if err != nil {
		if full := ws.DiskFull(err); full != nil {
			return nil, full
		}
		return nil, interrupted(ctx, err)
	}
	// Committed: what follows only reports, and an interruption now must
	// not make a load that happened look as if it had not.
	rep.Workspace = ws.Path
	rep.Entities, err = EntityTotals(context.WithoutCancel(ctx), ws)
	if err != nil {
		return nil, fmt.Errorf("load %d is committed, but reading the control totals failed: %w (see leadline sql \"SELECT * FROM files\")", rep.LoadID, err)
	}
	rep.Seconds = time.Since(started).Seconds()
	return rep, nil
}

// loadFiles does the load up to and including its commit.
func loadFiles(ctx context.Context, ws *workspace.Workspace, args []string, opts Options, started time.Time) (*Report, error) {
	opts.defaults()
	if err := CheckAmountType(opts.Scale, opts.Precision); err != nil {
		return nil, err
	}
	if errs := CheckSettings(ctx, ws, opts); len(errs) > 0 {
		return nil, errs[0]
	}
	if rep, done, err := inPlaceLoad(ctx, ws, args, opts, started); done {
		return rep, err
	}
	paths, err := ExpandPaths(args)
	if err != nil {
		return nil, err
	}
	amountType, isNew, err := settleAmountType(ctx, ws, opts)
	if err != nil {
		return nil, err
	}

	// Examine every file before touching the workspace.
	var sources []*Source
	bySHA := map[string]string{}
	defer ws.Step("loading")()
	for _, p := range paths {
		ws.Step("examining " + filepath.Base(p))
		src, err := examine(ctx, ws, p, opts)
		if err != nil {
			return nil, err
		}
		src.mapping, err = Resolve(src.Path, src.Columns, opts.Map, opts.Debit, opts.Credit)
		if err != nil {
			if src.oneColumnHint != "" {
				return nil, fmt.Errorf("%s: %s", src.Path, src.oneColumnHint)
			}
			return nil, err
		}
		if err := checkAmountTypes(src); err != nil {
			return nil, err
		}
		if other, dup := bySHA[src.SHA256]; dup {
			return nil, fmt.Errorf("%s: same content (SHA-256 %s) as %s in this load; give each file once", p, src.SHA256[:12], other)
		}
		bySHA[src.SHA256] = p
		sources = append(sources, src)
	}

	trace("examine", started)
	// CSV files are read into temporary tables before the load's
	// transaction starts (see stageCSV); they are dropped when it ends.
	defer unstage(ws, sources)
	for i, src := range sources {
		ws.Step("reading " + src.Name)
		if src.sheet != nil {
			if err := stageXLSX(ctx, ws, src, opts, i); err != nil {
				return nil, err
			}
			continue
		}
		if err := stageCSV(ctx, ws, src, i); err != nil {
			return nil, err
		}
	}
	trace("stage", started)
	for _, src := range sources {
		ws.Step("checking the amounts of " + src.Name)
		if err := checkSeparators(ctx, ws, src, opts, scaleOf(amountType)); err != nil {
			return nil, err
		}
		if err := checkCurrencyMarkers(ctx, ws, src); err != nil {
			return nil, err
		}
	}
	trace("marks", started)
	hadLedger, err := ws.HasLedger(ctx)
	if err != nil {
		return nil, err
	}
	tx, err := ws.Conn.BeginTx(ctx, nil)
	if err != nil {
		return nil, err
	}
	committed := false
	defer func() {
		if !committed {
			tx.Rollback()
		}
	}()
	if isNew {
		if _, err := tx.ExecContext(ctx, queries.Get("meta_set"), "amount_type", amountType); err != nil {
			return nil, err
		}
	}
	rep, err := loadAll(ctx, tx, sources, opts, amountType, hadLedger, started, ws.Step)
	if err != nil {
		return nil, err
	}
	if err := checkUnchanged(sources); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if err := tx.Commit(); err != nil {
		return nil, fmt.Errorf("committing the load: %w", err)
	}
	committed = true
	trace("commit", started)
	return rep, nil
}

// afterRead, when set (by tests), runs once every file has been read and
// before they are hashed again.
var afterRead func()

// checkUnchanged hashes every file again once its rows are read: a file
// that changed while it was loaded (an export still being written, a copy
// over the network) would otherwise be recorded with the SHA-256 and size
// of other bytes than its rows came from.
func checkUnchanged(sources []*Source) error {
	if afterRead != nil {
		afterRead()
	}
	for _, src := range sources {
		size, sum, err := Hash(src.Path)
		if err != nil {
			return fmt.Errorf("%s: reading it again after the load: %w; nothing was loaded", src.Path, err)
		}
		if size != src.Size || sum != src.SHA256 {
			return fmt.Errorf("%s: the file changed while it was being loaded (%d bytes, SHA-256 %s before; %d bytes, %s after); nothing was loaded. Load it again once whatever writes it has finished", src.Path, src.Size, src.SHA256[:12], size, sum[:12])
		}
	}
	return nil
}

// interrupted turns an error that follows a cancelled context into the
// plain message the analyst needs: nothing was loaded.
func interrupted(ctx context.Context, err error) error {
	if ctx.Err() == nil {
		return explainResources(err)
	}
	return fmt.Errorf("load interrupted (%v); nothing was loaded and the workspace is as it was before", ctx.Err())
}

// explainResources adds what to do to DuckDB's messages about memory and
// the temporary folder running out.
func explainResources(err error) error {
	msg := err.Error()
	low := strings.ToLower(msg)
	switch {
	case strings.Contains(low, "max_temp_directory_size") || strings.Contains(low, "no space left on device") ||
		strings.Contains(low, "failed to offload") || strings.Contains(low, "could not write") && strings.Contains(low, "tmp"):
		return fmt.Errorf("the temporary folder where DuckDB spills data ran out of room; nothing was loaded. Point --temp-dir at a folder with more free space, or give more memory with --memory-limit (DuckDB: %s)", oneLine(err))
	case strings.Contains(low, "out of memory"):
		return fmt.Errorf("DuckDB ran out of memory; nothing was loaded. Give a larger --memory-limit, or a --temp-dir with free space so that DuckDB can spill to disk (DuckDB: %s)", oneLine(err))
	}
	return err
}

// loadAll runs every file of a load inside tx.
// step names each file's load for the progress display (workspace.Step).
func loadAll(ctx context.Context, tx *sql.Tx, sources []*Source, opts Options, amountType string, hadLedger bool, started time.Time, step func(string) func()) (*Report, error) {
	if _, err := tx.ExecContext(ctx, queries.Render("create_ledger", map[string]string{"amount_type": amountType})); err != nil {
		return nil, fmt.Errorf("creating the ledger table: %w", err)
	}
	if !hadLedger {
		if err := widenNewLedger(ctx, tx, sources); err != nil {
			return nil, err
		}
	}
	trace("create", started)
	var loadID int64
	if err := tx.QueryRowContext(ctx, queries.Get("load_next_load_id")).Scan(&loadID); err != nil {
		return nil, err
	}
	rep := &Report{LoadID: loadID, AmountType: amountType}
	for _, src := range sources {
		step("loading " + src.Name)
		fr, err := loadOne(ctx, tx, src, opts, amountType, loadID)
		if err != nil {
			return nil, err
		}
		rep.Files = append(rep.Files, *fr)
		rep.RowsRead += fr.RowsRead
		rep.RowsLoaded += fr.RowsLoaded
		rep.RowsRejected += fr.RowsRejected
		rep.RowsRounded += fr.RowsRounded
	}
	optsJSON, _ := json.Marshal(opts)
	if _, err := tx.ExecContext(ctx, queries.Get("load_insert_load"), loadID, started.UTC(), time.Now().UTC(), workspace.Version, string(optsJSON)); err != nil {
		return nil, err
	}
	return rep, nil
}

// widenNewLedger gives a ledger created by this load every column its files
// will add, in one statement: adding columns one ALTER at a time costs time
// that grows with the square of their number (minutes for a 5,000-column
// extract). It rebuilds the new, still empty table from DuckDB's own DDL for
// it; should that DDL have an unexpected shape, ensureColumns adds the
// columns one by one as before.
func widenNewLedger(ctx context.Context, tx *sql.Tx, sources []*Source) error {
	seen := map[string]bool{}
	var extra []string
	for _, src := range sources {
		for _, c := range plan(src, src.mapping) {
			if c.stored != "" && !seen[strings.ToLower(c.stored)] {
				seen[strings.ToLower(c.stored)] = true
				extra = append(extra, queries.QuoteIdent(c.stored)+" VARCHAR")
			}
		}
	}
	if len(extra) < 32 {
		return nil
	}
	var ddl string
	var n int64
	if err := tx.QueryRowContext(ctx, queries.Get("ledger_ddl")).Scan(&ddl, &n); err != nil {
		return err
	}
	ddl = strings.TrimSpace(ddl)
	if n != 0 || !strings.HasSuffix(ddl, ");") {
		return nil
	}
	if _, err := tx.ExecContext(ctx, queries.Get("load_drop_new_ledger")); err != nil {
		return err
	}
	wide := strings.TrimSuffix(ddl, ");") + ", " + strings.Join(extra, ", ") + ");"
	if _, err := tx.ExecContext(ctx, wide); err != nil {
		return fmt.Errorf("creating the ledger with %d columns: %w", len(extra), err)
	}
	return nil
}

// checkAmountTypes refuses, before anything is written, an amount (or debit
// or credit) column whose Parquet type holds no single number or text.
func checkAmountTypes(src *Source) error {
	if src.Format != "parquet" {
		return nil
	}
	for _, col := range []string{src.mapping.Columns["amount"], src.mapping.Debit, src.mapping.Credit} {
		if col == "" {
			continue
		}
		for i, n := range src.Columns {
			if n != col || i >= len(src.types) {
				continue
			}
			t := strings.ToUpper(src.types[i])
			if strings.HasPrefix(t, "STRUCT") || strings.HasPrefix(t, "MAP") || strings.HasPrefix(t, "UNION") ||
				strings.HasSuffix(t, "]") || t == "BLOB" || t == "BOOLEAN" {
				return fmt.Errorf("%s: column %q holds %s, not amounts; map the amount to a numeric or text column with --map amount=COLUMN", src.Path, col, src.types[i])
			}
		}
	}
	return nil
}

// settleAmountType reads the workspace's amount type, fixed by its first
// load, and refuses a later load that asks for another scale. isNew says
// the type is to be stored (inside the load's transaction).
func settleAmountType(ctx context.Context, ws *workspace.Workspace, opts Options) (amountType string, isNew bool, err error) {
	want := opts.AmountType()
	have, ok, err := ws.Meta(ctx, "amount_type")
	if err != nil {
		return "", false, err
	}
	if ok {
		if have != want && (opts.Scale != 2 || opts.Precision != 18) {
			return "", false, fmt.Errorf("this workspace holds amounts as %s; --scale/--precision ask for %s (use another --db)", have, want)
		}
		return have, false, nil
	}
	return want, true, nil
}

func examine(ctx context.Context, ws *workspace.Workspace, path string, opts Options) (*Source, error) {
	format, _, err := FormatOf(path)
	if err != nil {
		return nil, err
	}
	var src *Source
	if format == "csv" {
		src, err = ExamineCSV(path, opts.Delimiter, opts.Encoding)
		if err != nil {
			return nil, err
		}
	} else if format == "xlsx" {
		if src, err = examineXLSX(path, opts); err != nil {
			return nil, err
		}
	} else {
		src, err = examineParquet(ctx, ws, path)
		if err != nil {
			return nil, err
		}
	}
	src.Size, src.SHA256, err = Hash(path)
	if err != nil {
		return nil, err
	}
	if src.Size == 0 {
		return nil, fmt.Errorf("%s: the file is empty", path)
	}
	var fileID int64
	var old string
	err = ws.Conn.QueryRowContext(ctx, queries.Get("file_by_sha"), src.SHA256).Scan(&fileID, &old)
	switch {
	case errors.Is(err, sql.ErrNoRows):
	case err != nil:
		return nil, err
	case !opts.Replace:
		return nil, fmt.Errorf("%s: already loaded as file %d (%s, same SHA-256 %s); give --replace to load it again in its place", path, fileID, old, src.SHA256[:12])
	}
	// The same path with other content: a corrected or re-sent extract.
	// Loading it beside the first would count its rows twice.
	var oldSHA string
	var oldLoad int64
	err = ws.Conn.QueryRowContext(ctx, queries.Get("load_file_by_path"), path).Scan(&fileID, &oldLoad, &oldSHA)
	switch {
	case errors.Is(err, sql.ErrNoRows):
	case err != nil:
		return nil, err
	case !opts.Replace && oldSHA != src.SHA256:
		return nil, fmt.Errorf("%s: this path was loaded before as file %d (load %d) with other content (SHA-256 %s then, %s now), and its rows are in the workspace; give --replace to replace that file's rows with this version in one transaction, or copy the file under another name if both versions belong in the ledger; nothing was loaded",
			path, fileID, oldLoad, oldSHA[:12], src.SHA256[:12])
	}
	return src, nil
}

// ParquetTypes maps column name to DuckDB type for a Parquet file.
func examineParquet(ctx context.Context, ws *workspace.Workspace, path string) (*Source, error) {
	src := &Source{Path: path, Name: baseName(path), Format: "parquet"}
	rows, err := ws.Conn.QueryContext(ctx, queries.Render("load_describe_parquet", map[string]string{"path": queries.QuoteString(ExactPath(path))}))
	if err != nil {
		return nil, fmt.Errorf("%s: not a readable Parquet file: %s", path, oneLine(err))
	}
	defer rows.Close()
	cols, _ := rows.Columns()
	for rows.Next() {
		vals := make([]any, len(cols))
		ptrs := make([]any, len(cols))
		for i := range vals {
			ptrs[i] = &vals[i]
		}
		if err := rows.Scan(ptrs...); err != nil {
			return nil, err
		}
		src.Columns = append(src.Columns, fmt.Sprint(vals[0]))
		src.types = append(src.types, fmt.Sprint(vals[1]))
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("%s: not a readable Parquet file: %s", path, oneLine(err))
	}
	return src, nil
}

func oneLine(err error) string {
	s := err.Error()
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		s = s[:i]
	}
	return s
}

func baseName(p string) string {
	if i := strings.LastIndexAny(p, `/\`); i >= 0 {
		return p[i+1:]
	}
	return p
}

// storage decides the ledger column each original column is kept in.
type storage struct {
	original string // name in the file
	stored   string // ledger column holding the text as sent
	canon    string // canonical text column it fills directly, if any
	typ      string // Parquet type, "" for CSV (all text)
}

func plan(src *Source, m Mapping) []storage {
	canonOf := map[string]string{}
	for c, n := range m.Columns {
		if textCanonical[c] {
			canonOf[n] = c
		}
	}
	used := map[string]bool{}
	for c := range reserved {
		used[c] = true
	}
	var out []storage
	for i, n := range src.Columns {
		st := storage{original: n}
		if i < len(src.types) {
			st.typ = src.types[i]
		}
		if c, ok := canonOf[n]; ok {
			st.canon = c
			out = append(out, st)
			continue
		}
		name := n
		if used[strings.ToLower(name)] {
			name = n + "_text"
			for k := 2; used[strings.ToLower(name)]; k++ {
				name = fmt.Sprintf("%s_text%d", n, k)
			}
		}
		used[strings.ToLower(name)] = true
		st.stored = name
		out = append(out, st)
	}
	return out
}

func loadOne(ctx context.Context, tx *sql.Tx, src *Source, opts Options, amountType string, loadID int64) (*FileReport, error) {
	m := src.mapping
	fr := &FileReport{Path: src.Path, Name: src.Name, Format: src.Format, SizeBytes: src.Size, SHA256: src.SHA256,
		Mapping: m, Delimiter: src.Delimiter, Encoding: src.Encoding, Warnings: src.Warnings, Sheet: sheetReport(src)}
	if opts.Replace {
		// Earlier loads of the same content, or of the same path.
		rows, err := tx.QueryContext(ctx, queries.Get("load_files_to_replace"), src.SHA256, src.Path)
		if err != nil {
			return nil, err
		}
		var old []int64
		var same []bool
		for rows.Next() {
			var id int64
			var sameContent bool
			if err := rows.Scan(&id, &sameContent); err != nil {
				rows.Close()
				return nil, err
			}
			old, same = append(old, id), append(same, sameContent)
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return nil, err
		}
		for i, oldID := range old {
			for _, q := range []string{"load_forget_ledger", "load_forget_rejects", "load_forget_file", "load_forget_file_totals", "load_forget_both_sides"} {
				if _, err := tx.ExecContext(ctx, queries.Get(q), oldID); err != nil {
					return nil, err
				}
			}
			if same[i] {
				fr.Warnings = append(fr.Warnings, fmt.Sprintf("replaced file %d loaded earlier with the same content", oldID))
			} else {
				fr.Warnings = append(fr.Warnings, fmt.Sprintf("replaced file %d loaded earlier from the same path with other content", oldID))
			}
		}
	}
	if err := tx.QueryRowContext(ctx, queries.Get("load_next_file_id")).Scan(&fr.FileID); err != nil {
		return nil, err
	}
	cols := plan(src, m)
	if err := ensureColumns(ctx, tx, cols); err != nil {
		return nil, err
	}
	storedOf := map[string]storage{}
	for _, c := range cols {
		storedOf[c.original] = c
	}
	// The select list: canonical text columns and every original column kept as text.
	var sel []string
	for _, c := range cols {
		expr := "CAST(" + src.ref(c.original) + " AS VARCHAR)"
		if c.canon != "" {
			sel = append(sel, expr+" AS "+queries.QuoteIdent(c.canon))
		} else {
			sel = append(sel, expr+" AS "+queries.QuoteIdent(c.stored))
		}
	}
	// posted
	postedRaw := ""
	if p, ok := m.Columns["posted"]; ok {
		st := storedOf[p]
		postedRaw = queries.QuoteIdent(st.stored)
		orig := src.ref(p)
		var expr string
		switch {
		case strings.Contains(strings.ToUpper(st.typ), "WITH TIME ZONE"):
			expr = "TRY_CAST(timezone(" + queries.QuoteString(timeZone(opts)) + ", " + orig + ") AS DATE)"
		case isDateLike(st.typ):
			expr = "TRY_CAST(" + orig + " AS DATE)"
		case opts.DateFormat != "":
			expr = "CAST(TRY_STRPTIME(trim(CAST(" + orig + " AS VARCHAR)), " + queries.QuoteString(opts.DateFormat) + ") AS DATE)"
		default:
			expr = "TRY_CAST(trim(CAST(" + orig + " AS VARCHAR)) AS DATE)"
		}
		sel = append(sel, expr+" AS posted")
	}
	rule := amountSQL(src, storedOf, opts, amountType)
	amountExpr, fast, parts, rawExpr, reasonExpr, amountColName := rule.expr, rule.fast, rule.parts, rule.raw, rule.reason, rule.column
	if c := currencyFromMarkers(src, storedOf); c != "" {
		sel = append(sel, c)
	}

	var base int64
	if err := tx.QueryRowContext(ctx, queries.Get("load_next_row_id")).Scan(&base); err != nil {
		return nil, err
	}
	lineOffset := "1" // CSV: the header is line 1
	if src.Format == "parquet" {
		lineOffset = "0"
	}
	// Parquet rows come numbered by the reader; CSV records from the stage.
	reader, rejTable, rowNumber := readerSQL(src, ""), "", "ll_file_row + 1"
	if src.stage != "" {
		reader = queries.QuoteIdent(src.stage)
		rowNumber = fmt.Sprintf("rowid - %d + 1", src.stageFirst)
	}
	if src.Format == "csv" || src.sheet != nil {
		rejTable = src.rejects
	}
	if src.sheet != nil {
		rowNumber, lineOffset = xlsxin.LineColumn, "0" // the sheet row number
	}
	insert := queries.Render("load_insert", map[string]string{
		"row_number":  rowNumber,
		"row_id_base": fmt.Sprint(base),
		"file_id":     fmt.Sprint(fr.FileID),
		"line_offset": lineOffset,
		"amount_expr": amountExpr,
		"columns":     strings.Join(sel, ",\n    "),
		"fast":        fast,
		"parts":       parts,
		"reader":      reader,
	})
	t0 := time.Now()
	if tracing {
		fmt.Fprintln(os.Stderr, insert)
	}
	// Every row carries its line, so the ledger need not keep file order.
	// Keeping it makes DuckDB write a part-filled row group after every
	// batch, which it then merges and rewrites at the next checkpoint
	// (about a third of the load's time on a 5,000,000-row file). Without
	// it, though, every thread builds row groups of its own, each holding
	// a block per column: a 5,000-column file then needs more than a
	// 1280MB memory limit, so wide files keep the order.
	var threads int
	if err := tx.QueryRowContext(ctx, queries.Get("load_threads")).Scan(&threads); err != nil {
		return nil, err
	}
	keepOrder := len(src.Columns)*max(threads, 1) > 1024
	if _, err := tx.ExecContext(ctx, queries.Render("load_insertion_order", map[string]string{"keep": fmt.Sprint(keepOrder)})); err != nil {
		return nil, err
	}
	_, err := tx.ExecContext(ctx, insert)
	if _, rerr := tx.ExecContext(context.WithoutCancel(ctx), queries.Render("load_insertion_order", map[string]string{"keep": "true"})); rerr != nil && err == nil {
		err = rerr
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %s", src.Path, explainReadError(err))
	}
	trace("insert", t0)
	var fromReader, maxLine int64
	if err := tx.QueryRowContext(ctx, queries.Get("load_file_counts"), fr.FileID).Scan(&fromReader, &maxLine); err != nil {
		return nil, err
	}
	var structural int64
	if rejTable != "" {
		structural, err = takeStructuralRejects(ctx, tx, rejTable, fr.FileID, src, fromReader)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", src.Path, err)
		}
	}
	fr.RowsRead = fromReader + structural
	if err := rejectSheetRows(ctx, tx, src, fr.FileID); err != nil {
		return nil, err
	}
	if _, err := tx.ExecContext(ctx, queries.Render("load_reject_amounts", map[string]string{"raw_expr": rawExpr, "reason_expr": reasonExpr}), amountColName, fr.FileID); err != nil {
		return nil, fmt.Errorf("%s: recording rejected amounts: %w", src.Path, err)
	}
	if postedRaw != "" {
		reason := "invalid date"
		if opts.DateFormat != "" {
			reason += " (expected " + opts.DateFormat + ")"
		} else {
			reason += " (expected YYYY-MM-DD; give --date-format, e.g. %d/%m/%Y)"
		}
		if _, err := tx.ExecContext(ctx, queries.Render("load_reject_dates", map[string]string{"raw_expr": postedRaw}), m.Columns["posted"], reason, fr.FileID); err != nil {
			return nil, fmt.Errorf("%s: recording rejected dates: %w", src.Path, err)
		}
		if _, err := tx.ExecContext(ctx, queries.Render("load_delete_rejected", map[string]string{"raw_expr": postedRaw}), fr.FileID); err != nil {
			return nil, err
		}
	} else if _, err := tx.ExecContext(ctx, queries.Get("load_delete_rejected_no_date"), fr.FileID); err != nil {
		return nil, err
	}
	trace("rejects", t0)
	if err := tx.QueryRowContext(ctx, queries.Get("load_rejected_count"), fr.FileID).Scan(&fr.RowsRejected); err != nil {
		return nil, err
	}
	if err := tx.QueryRowContext(ctx, queries.Get("load_loaded_count"), fr.FileID).Scan(&fr.RowsLoaded); err != nil {
		return nil, err
	}
	if fr.RowsLoaded+fr.RowsRejected != fr.RowsRead {
		return nil, fmt.Errorf("%s: internal accounting error: read %d, loaded %d, rejected %d; nothing was loaded", src.Path, fr.RowsRead, fr.RowsLoaded, fr.RowsRejected)
	}
	fr.RejectReasons, err = reasons(ctx, tx, fr.FileID)
	if err != nil {
		return nil, err
	}
	if fr.RowsRead == 0 {
		if src.Format == "parquet" {
			return nil, fmt.Errorf("%s: the Parquet file has no rows", src.Path)
		}
		return nil, fmt.Errorf("%s: has a header but no data rows", src.Path)
	}
	if fr.RowsLoaded == 0 {
		top := ""
		if len(fr.RejectReasons) > 0 {
			top = fmt.Sprintf(" (most common reason: %s, from line %d)", fr.RejectReasons[0].Reason, deref(fr.RejectReasons[0].FirstLine))
		}
		return nil, fmt.Errorf("%s: none of its %d rows could be loaded%s;%s check --delimiter, --decimal-comma, --date-format and the mapping (leadline inspect %s); nothing was loaded", src.Path, fr.RowsRead, top, encodingAdvice(src, fr), src.Path)
	}
	if err := checkRejectShare(src, fr, opts); err != nil {
		return nil, err
	}
	rounded := queries.Render("load_rounded_count", map[string]string{"test": roundedTest(src, m, storedOf, opts.DecimalComma, scaleOf(amountType))})
	if err := tx.QueryRowContext(ctx, rounded, fr.FileID).Scan(&fr.RowsRounded); err != nil {
		return nil, fmt.Errorf("%s: counting rounded amounts: %w", src.Path, err)
	}
	if fr.RowsRounded > 0 {
		fr.Warnings = append(fr.Warnings, fmt.Sprintf("%d amounts had more decimal places than the scale of %d and were rounded half away from zero; their text as sent is kept in the ledger beside the amount", fr.RowsRounded, scaleOf(amountType)))
	}
	if err := tx.QueryRowContext(ctx, queries.Get("load_file_sums"), fr.FileID).Scan(&fr.Positive, &fr.Negative, &fr.Net); err != nil {
		return nil, err
	}
	if err := fileTotals(ctx, tx, src, fr, opts, amountType, storedOf); err != nil {
		return nil, err
	}
	trace("counts", t0)
	mapJSON, _ := json.Marshal(m)
	dialect, _ := json.Marshal(map[string]any{"delimiter": src.Delimiter, "encoding": src.Encoding, "gzip": src.Gzip,
		"decimal_comma": opts.DecimalComma, "decimal_point": opts.DecimalPoint, "time_zone": timeZone(opts), "amount_type": amountType, "date_format": opts.DateFormat,
		"rows_rounded": fr.RowsRounded, "max_rejects": maxRejectsText(opts), "sheet": sheetName(src)})
	if _, err := tx.ExecContext(ctx, queries.Get("load_insert_file"), fr.FileID, loadID, src.Path, src.Name, src.Format,
		src.Size, src.SHA256, fr.RowsRead, fr.RowsLoaded, fr.RowsRejected, string(mapJSON), string(dialect), time.Now().UTC()); err != nil {
		return nil, err
	}
	return fr, nil
}

// checkRejectShare fails a file whose rejected rows exceed the share the
// options allow: rows read = loaded + rejected is necessary, not
// sufficient, and a load that lost most of a file is no success.
func checkRejectShare(src *Source, fr *FileReport, opts Options) error {
	limit, err := opts.maxRejects()
	if err != nil {
		return err
	}
	if fr.RowsRead == 0 || float64(sharedRejects(fr)) <= limit*float64(fr.RowsRead) {
		return nil
	}
	share := float64(sharedRejects(fr)) / float64(fr.RowsRead)
	top, hint := "", ""
	if len(fr.RejectReasons) > 0 {
		r := topReason(fr)
		top = fmt.Sprintf(" (most common reason, %d rows: %s, first at line %d)", r.Rows, r.Reason, deref(r.FirstLine))
		switch {
		case strings.Contains(r.Reason, "decimal comma?"):
			hint = " If the amounts write a decimal comma, give --decimal-comma."
		case strings.Contains(r.Reason, "too many fields"):
			hint = " Too many fields often means a delimiter inside unquoted values (a thousands separator, a comma in a text), or the wrong --delimiter."
		case strings.Contains(r.Reason, "invalid date"):
			hint = " Give the dates' format with --date-format."
		case strings.Contains(r.Reason, "not valid UTF-8"):
			hint = encodingAdvice(src, fr)
		}
	}
	return fmt.Errorf("%s: %d of %d rows (%s) were rejected, more than the %s a load accepts%s.%s Fix the file or the options (leadline inspect shows how the file reads), or accept the rejects with --max-rejects %s or --accept-rejects; nothing was loaded",
		fr.Path, sharedRejects(fr), fr.RowsRead, percent(share), maxRejectsText(opts), top, hint, percent(share))
}

func maxRejectsText(o Options) string {
	if o.MaxRejects == "" {
		return DefaultMaxRejects
	}
	v, _ := ParseShare(o.MaxRejects)
	return percent(v)
}

// percent writes a share as a percentage rounded up to one decimal place
// (so that --max-rejects with it accepts the share).
func percent(share float64) string {
	return strconv.FormatFloat(math.Ceil(share*1000-1e-9)/10, 'f', -1, 64) + "%"
}

// roundedTest is the condition, on a loaded ledger row, that its amount
// text as sent had a nonzero digit beyond the scale: the texts that
// could hold one (a run of more than scale digits after a mark, or an
// exponent) are parsed again and their exact decimal text examined.
func roundedTest(src *Source, m Mapping, storedOf map[string]storage, decimalComma bool, scale int) string {
	cols := []string{m.Columns["amount"]}
	if m.Debit != "" {
		cols = []string{m.Debit, m.Credit}
	}
	var tests []string
	for _, c := range cols {
		st := storedOf[c]
		x := queries.QuoteIdent(st.stored)
		dc := decimalComma && !isNumeric(st.typ)
		// Candidates without a regular expression: an exponent, or more
		// than scale characters after the last mark.
		pre := fmt.Sprintf("(contains(%s, 'e') OR contains(%s, 'E') OR least(nullif(strpos(reverse(%s), '.'), 0), nullif(strpos(reverse(%s), ','), 0)) > %d)", x, x, x, x, scale+1)
		beyond := queries.QuoteString(fmt.Sprintf(`\.[0-9]{%d}[0-9]*[1-9]`, scale))
		tests = append(tests, fmt.Sprintf("(%s AND regexp_matches(coalesce(ll_amount_canonical(%s, %t), ''), %s))", pre, x, dc, beyond))
	}
	return strings.Join(tests, " OR ")
}

func deref(p *int64) int64 {
	if p == nil {
		return 0
	}
	return *p
}

func isNumeric(t string) bool {
	t = strings.ToUpper(t)
	for _, p := range []string{"DECIMAL", "DOUBLE", "FLOAT", "INTEGER", "BIGINT", "SMALLINT", "TINYINT", "HUGEINT", "UBIGINT", "UINTEGER", "USMALLINT", "UTINYINT", "REAL", "NUMERIC"} {
		if strings.HasPrefix(t, p) {
			return true
		}
	}
	return false
}

// largestOf is the largest value of the options' amount type, as text.
func largestOf(o Options) string {
	o.defaults()
	s := strings.Repeat("9", o.Precision-o.Scale)
	if o.Scale > 0 {
		s += "." + strings.Repeat("9", o.Scale)
	}
	return s
}

// numericAmount casts a typed numeric column to the amount type. A binary
// float goes through its shortest decimal text, which is what the
// exporting system meant: the double nearest 2.675 is 2.67499999..., whose
// text 2.675 rounds half away from zero to 2.68, as the same amount written
// in a CSV file does.
func numericAmount(x, typ, amountType string) string {
	switch t := strings.ToUpper(typ); {
	case strings.HasPrefix(t, "DOUBLE"), strings.HasPrefix(t, "FLOAT"), strings.HasPrefix(t, "REAL"):
		return "TRY_CAST(CAST(" + x + " AS VARCHAR) AS " + amountType + ")"
	}
	return "TRY_CAST(" + x + " AS " + amountType + ")"
}

func isDateLike(t string) bool {
	t = strings.ToUpper(t)
	return strings.HasPrefix(t, "DATE") || strings.HasPrefix(t, "TIMESTAMP")
}

// stageCSV reads a CSV file into a temporary table, in file order, so
// that each record's rowid gives its position (DuckDB's CSV reader has no
// row number of its own, and a window over the reader would make the load
// single-threaded). It runs before the load's transaction starts: DuckDB
// reads a temporary table created inside the same transaction about half
// as fast as a committed one (14 s against 6 s for the insert of
// 5,000,000 rows). The records the reader cannot take go to a second
// temporary table, src.rejects.
//
// A Parquet file is read directly, numbered by the reader's
// file_row_number, unless it has a column of that name itself, which the
// reader then refuses to add: such a file is staged too.
func stageCSV(ctx context.Context, ws *workspace.Workspace, src *Source, i int) error {
	if src.Format != "csv" && src.sheet == nil && !src.ownRowNumber() {
		return nil
	}
	if err := src.prepareText(0); err != nil { // encoding.go
		return err
	}
	src.stage, src.rejects = fmt.Sprintf("ll_stage_%d", i), fmt.Sprintf("ll_rejects_%d", i)
	q := queries.Render("load_stage", map[string]string{"stage": queries.QuoteIdent(src.stage), "reader": readerSQL(src, src.rejects)})
	if _, err := ws.Conn.ExecContext(ctx, q); err != nil {
		return fmt.Errorf("%s: %s", src.Path, explainReadError(err))
	}
	return ws.Conn.QueryRowContext(ctx, queries.Render("load_stage_first", map[string]string{"stage": queries.QuoteIdent(src.stage)})).Scan(&src.stageFirst)
}

// unstage drops the temporary tables of stageCSV.
func unstage(ws *workspace.Workspace, sources []*Source) {
	for _, src := range sources {
		src.removeText()
		if src.stage == "" {
			continue
		}
		for _, t := range []string{src.stage, src.rejects, src.rejects + "_scan"} {
			ws.Conn.ExecContext(context.Background(), queries.Render("load_drop_temp", map[string]string{"table": queries.QuoteIdent(t)}))
		}
	}
}

// The reader names the file's columns by their position (ll_c1, ll_c2 ...)
// and the statements refer to them so: a client's column may be called
// anything, rowid or ll_rn or file_row_number included, without meeting
// a name the load uses itself.
func colName(i int) string { return fmt.Sprintf("ll_c%d", i+1) }

// ref is the reader's name of the file's column original.
func (s *Source) ref(original string) string {
	for i, c := range s.Columns {
		if c == original {
			return queries.QuoteIdent(colName(i))
		}
	}
	return queries.QuoteIdent(original)
}

// originalNames turns the reader's names in a list such as "ll_c2, ll_c3"
// back into the file's own, in name order.
func (s *Source) originalNames(list string) string {
	if list == "" {
		return list
	}
	names := strings.Split(list, ", ")
	for i, n := range names {
		if k, err := strconv.Atoi(strings.TrimPrefix(n, "ll_c")); err == nil && strings.HasPrefix(n, "ll_c") && k >= 1 && k <= len(s.Columns) {
			names[i] = s.Columns[k-1]
		}
	}
	sort.Strings(names)
	return strings.Join(names, ", ")
}

// ownRowNumber tells a Parquet file with a column named file_row_number.
func (s *Source) ownRowNumber() bool {
	if s.Format != "parquet" {
		return false
	}
	for _, c := range s.Columns {
		if strings.EqualFold(c, "file_row_number") {
			return true
		}
	}
	return false
}

// readerSQL is the table function that reads src; a CSV reader stores the
// records it cannot take in the temporary table rejTable (unused for
// Parquet).
func readerSQL(src *Source, rejTable string) string {
	if src.Format == "parquet" {
		var names []string
		for i := range src.Columns {
			names = append(names, src.ref(src.Columns[i]))
		}
		if src.ownRowNumber() {
			return "read_parquet(" + queries.QuoteString(ExactPath(src.Path)) + ") AS ll_file(" + strings.Join(names, ", ") + ")"
		}
		return "read_parquet(" + queries.QuoteString(ExactPath(src.Path)) + ", file_row_number = true) AS ll_file(" + strings.Join(names, ", ") + ", ll_file_row)"
	}
	cols := src.lineColumns()
	for i := range src.Columns {
		cols = append(cols, queries.QuoteString(colName(i))+": 'VARCHAR'")
	}
	opts := []string{
		queries.QuoteString(ExactPath(src.readPath())),
		"auto_detect = false",
		"header = true",
		"columns = {" + strings.Join(cols, ", ") + "}",
		"delim = " + queries.QuoteString(src.Delimiter),
		`quote = '"'`,
		`escape = '"'`,
		"store_rejects = true",
		"rejects_table = " + queries.QuoteString(rejTable),
		"rejects_scan = " + queries.QuoteString(rejTable+"_scan"),
		"encoding = " + queries.QuoteString(src.csvEncoding()),
		"max_line_size = 16777216",
		// DuckDB sizes its read buffer at 16 times max_line_size unless
		// told: 256 MiB per buffer, which fails any --memory-limit below
		// that. 32 MiB is its buffer at the default line size.
		"buffer_size = 33554432",
	}
	if src.csvGzip() {
		opts = append(opts, "compression = 'gzip'")
	}
	return "read_csv(" + strings.Join(opts, ", ") + ")"
}

func explainReadError(err error) string {
	msg := oneLine(err)
	if strings.Contains(msg, "Invalid unicode") || strings.Contains(msg, "invalid unicode") {
		msg += " (the file is not UTF-8: give its --encoding; leadline inspect names the likely one)"
	}
	return msg
}

// takeStructuralRejects moves the CSV reader's rejected records into
// rejects, corrects the line numbers of the loaded rows for the records
// skipped before them, and returns how many records were rejected.
func takeStructuralRejects(ctx context.Context, tx *sql.Tx, table string, fileID int64, src *Source, goodRows int64) (int64, error) {
	rows, err := tx.QueryContext(ctx, queries.Render("load_structural_rejects", map[string]string{"rejects_table": queries.QuoteIdent(table)}))
	if err != nil {
		return 0, fmt.Errorf("reading the reader's rejects: %w", err)
	}
	type rej struct {
		line         int64
		types        string
		columns      sql.NullString
		raw          sql.NullString
		unterminated bool
		bytePos      sql.NullInt64
	}
	var rejs []rej
	for rows.Next() {
		var r rej
		if err := rows.Scan(&r.line, &r.types, &r.columns, &r.raw, &r.unterminated, &r.bytePos); err != nil {
			rows.Close()
			return 0, err
		}
		r.columns.String = src.originalNames(r.columns.String)
		rejs = append(rejs, r)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return 0, err
	}
	for _, t := range []string{table, table + "_scan"} {
		if _, err := tx.ExecContext(ctx, queries.Render("load_drop_temp", map[string]string{"table": queries.QuoteIdent(t)})); err != nil {
			return 0, err
		}
	}
	if len(rejs) == 0 {
		return 0, nil
	}
	sort.Slice(rejs, func(i, j int) bool { return rejs[i].line < rejs[j].line })
	// A quote that is never closed makes the reader take the rest of the
	// file as one field of the last record. Rejecting that record would
	// account for it as one row while every line after it vanishes from
	// view, so the file is refused instead, with the place to fix. (The
	// last record is the last reject with no good row after it: records
	// are numbered from 2, so the i-th reject at record r has r - 1 - i good
	// rows before it.)
	swallowed := false
	if last := rejs[len(rejs)-1]; last.unterminated && last.line-1-int64(len(rejs)) == goodRows {
		if lines := linesFrom(src, last.bytePos, last.raw.String); lines > 1 {
			return 0, fmt.Errorf("line %d: a quote opened in this record (field %s) is never closed, so the reader would take the %s as one field; fix the quoting there (a quote inside a quoted field is written \"\"), then load again; nothing was loaded",
				last.line, last.columns.String, describeLines(lines))
		}
		swallowed = true
	}
	app, err := tx.PrepareContext(ctx, queries.Get("load_insert_structural_reject"))
	if err != nil {
		return 0, err
	}
	defer app.Close()
	for i, r := range rejs {
		reason := "unreadable record: " + readerReason(r.types, r.columns.String, len(src.Columns), swallowed && i == len(rejs)-1) + " [" + r.types + "]"
		if _, err := app.ExecContext(ctx, fileID, r.line, r.columns, reason, r.raw); err != nil {
			return 0, err
		}
	}
	// Good rows were numbered 1..n in reading order (line = n + 1). The
	// i-th rejected record (1-based) at record number r_i has g_i = r_i - 1 - i
	// good rows before it; good rows after it move down by i.
	var vals []string
	for i, r := range rejs {
		lo := r.line - 1 - int64(i+1)
		hi := int64(1) << 62
		if i+1 < len(rejs) {
			hi = rejs[i+1].line - 1 - int64(i+2)
		}
		if hi > lo {
			vals = append(vals, fmt.Sprintf("(%d, %d, %d)", lo, hi, i+1))
		}
	}
	if len(vals) > 0 {
		q := queries.Render("load_renumber_lines", map[string]string{"ranges": strings.Join(vals, ", ")})
		if _, err := tx.ExecContext(ctx, q, fileID); err != nil {
			return 0, fmt.Errorf("numbering lines: %w", err)
		}
	}
	return int64(len(rejs)), nil
}

// readerReason says in plain words why the CSV reader could not take a
// record; DuckDB's own error types follow in brackets.
func readerReason(types, columns string, width int, unterminated bool) string {
	var parts []string
	for _, t := range strings.Split(types, "; ") {
		switch t {
		case "MISSING COLUMNS":
			parts = append(parts, fmt.Sprintf("too few fields (the header has %d; missing %s)", width, columns))
		case "TOO MANY COLUMNS":
			parts = append(parts, fmt.Sprintf("too many fields (the header has %d)", width))
		case "UNQUOTED VALUE":
			if unterminated {
				parts = append(parts, "a quote is never closed (is the file cut short?)")
			} else {
				parts = append(parts, "bad quoting: a quote inside an unquoted field or after a closing quote (write a quote inside a quoted field as \"\")")
			}
		case "INVALID ENCODING":
			parts = append(parts, "not valid UTF-8 (if the file is in another encoding, give --encoding; leadline inspect names the likely one)")
		case "LINE SIZE OVER MAXIMUM":
			parts = append(parts, "the record is longer than the reader's limit of 16 MiB")
		default:
			parts = append(parts, strings.ToLower(t))
		}
	}
	return strings.Join(parts, "; ")
}

// linesFrom counts the non-blank physical lines from a record's first byte
// to the end of the file, for a plain file whose byte positions the reader
// reports; otherwise (gzip, UTF-16) it counts those in the record's text as
// the reader kept it, which may be cut short (so a lower bound).
func linesFrom(src *Source, pos sql.NullInt64, raw string) int64 {
	count := func(r io.Reader) int64 {
		sc := bufio.NewScanner(r)
		sc.Buffer(make([]byte, 1<<20), 64<<20)
		var n int64
		for sc.Scan() {
			if len(bytes.TrimSpace(sc.Bytes())) > 0 {
				n++
			}
		}
		return n
	}
	if pos.Valid && !src.csvGzip() {
		if f, err := os.Open(src.csvPath()); err == nil {
			defer f.Close()
			if _, err := f.Seek(pos.Int64, io.SeekStart); err == nil {
				return count(f)
			}
		}
	}
	return count(strings.NewReader(raw))
}

func describeLines(n int64) string {
	if n == 2 {
		return "next line"
	}
	return fmt.Sprintf("remaining %d lines of the file", n)
}

func ensureColumns(ctx context.Context, tx *sql.Tx, cols []storage) error {
	rows, err := tx.QueryContext(ctx, queries.Get("ledger_columns"))
	if err != nil {
		return err
	}
	have := map[string]bool{}
	for rows.Next() {
		var n, t string
		if err := rows.Scan(&n, &t); err != nil {
			rows.Close()
			return err
		}
		have[strings.ToLower(n)] = true
	}
	rows.Close()
	for _, c := range cols {
		if c.stored == "" || have[strings.ToLower(c.stored)] {
			continue
		}
		if _, err := tx.ExecContext(ctx, queries.Render("load_add_column", map[string]string{"column": queries.QuoteIdent(c.stored)})); err != nil {
			return fmt.Errorf("adding column %q: %w", c.stored, err)
		}
		have[strings.ToLower(c.stored)] = true
	}
	return nil
}

func reasons(ctx context.Context, tx *sql.Tx, fileID int64) ([]ReasonCount, error) {
	rows, err := tx.QueryContext(ctx, queries.Get("load_file_reasons"), fileID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := []ReasonCount{}
	for rows.Next() {
		var r ReasonCount
		var first sql.NullInt64
		if err := rows.Scan(&r.Reason, &r.Rows, &first); err != nil {
			return nil, err
		}
		if first.Valid {
			v := first.Int64
			r.FirstLine = &v
		}
		out = append(out, r)
	}
	return out, rows.Err()
}

// EntityTotals returns the control totals per entity over the workspace.
func EntityTotals(ctx context.Context, ws *workspace.Workspace) ([]EntityTotal, error) {
	col, err := CurrencyColumn(ctx, ws.Conn)
	if err != nil {
		return nil, err
	}
	rows, err := ws.Conn.QueryContext(ctx, queries.Render("entity_totals", map[string]string{"currency": col}))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := []EntityTotal{}
	for rows.Next() {
		var e EntityTotal
		if err := rows.Scan(&e.Entity, &e.Currency, &e.Rows, &e.Positive, &e.Negative, &e.Net); err != nil {
			return nil, err
		}
		out = append(out, e)
	}
	return out, rows.Err()
}

// textAmountSQL returns, for an amount held as text, the projection that
// computes the fast-path value (", ... AS ll_fast", in the inner select),
// the projection that splits the text into the grammar's parts for the
// rows the fast path does not take (", ... AS ll_parts", in the select
// around it), and the amount expression over both. The fast path is a plain
// DECIMAL cast, which takes the common shapes (1234.56, -5); everything
// else goes through the grammar of queries/amount.sql. The parts get a
// projection of their own because an expression inside a CASE branch is not
// shared: the grammar's macros refer to the parts some twenty times, and
// inline each would run its regular expressions twenty times a row (ten
// times slower on a file of 1,234.56-style amounts).
func textAmountSQL(text string, decimalComma bool, amountType string) (fast, parts, expr string) {
	return textAmountSQLNamed(text, decimalComma, amountType, "")
}

// textAmountSQLNamed is textAmountSQL with its projections named
// ll_fast<suffix> and ll_parts<suffix>, for more than one amount column.
func textAmountSQLNamed(text string, decimalComma bool, amountType, suffix string) (fast, parts, expr string) {
	dc := "false"
	// DuckDB's own cast rounds exponent text wrongly below the last kept
	// place ('5e-4' gives 0.01), so exponents take the grammar's path.
	guard := "NOT contains(" + text + ", '_') AND NOT contains(" + text + ", 'e') AND NOT contains(" + text + ", 'E')"
	if decimalComma {
		dc = "true"
		guard += " AND NOT contains(" + text + ", '.')"
	}
	// DuckDB's cast also reads a lone sign followed by white space ('- ',
	// as accounting formats write nil) as 0: a zero from the fast path
	// counts only when the text holds a digit (found by FuzzAmount).
	f, p := "ll_fast"+suffix, "ll_parts"+suffix
	fast = ", CASE WHEN " + guard + " THEN TRY_CAST(" + text + " AS " + amountType + ") END AS " + f
	parts = ", CASE WHEN " + f + " IS NULL OR " + f + " = 0 AND NOT regexp_matches(" + text + ", '[0-9]') THEN ll_amount_parts(" + text + ") END AS " + p
	expr = "CASE WHEN " + p + " IS NULL THEN " + f + " ELSE TRY_CAST(ll_amount_canonical_parts(" + p + ", " + dc + ") AS " + amountType + ") END"
	return fast, parts, expr
}

// ParseText parses one amount text exactly as a load would and returns the
// value as text (with the type's scale) or the rejection reason. It exists
// for tests and the fuzzer, which hold it against engine/amount.
func ParseText(ctx context.Context, ws *workspace.Workspace, s string, decimalComma bool, amountType string) (value, reason string, err error) {
	p, err := NewAmountParser(ctx, ws, decimalComma, amountType)
	if err != nil {
		return "", "", err
	}
	defer p.Close()
	return p.Parse(ctx, s)
}

// AmountParser is ParseText prepared once for many texts: the amount
// expression is planned once, which makes each text about ten times
// cheaper (the fuzzer's loop).
type AmountParser struct{ stmt *sql.Stmt }

// NewAmountParser prepares the load's amount expression on ws.
func NewAmountParser(ctx context.Context, ws *workspace.Workspace, decimalComma bool, amountType string) (*AmountParser, error) {
	fast, parts, expr := textAmountSQL("v", decimalComma, amountType)
	dc := "false"
	if decimalComma {
		dc = "true"
	}
	q := "SELECT CAST(" + expr + " AS VARCHAR), ll_amount_reason(v, " + dc + ") FROM (SELECT *" + parts + " FROM (SELECT v" + fast + " FROM (SELECT CAST(? AS VARCHAR) AS v)))"
	st, err := ws.Conn.PrepareContext(ctx, q)
	if err != nil {
		return nil, err
	}
	return &AmountParser{stmt: st}, nil
}

// Parse returns the value of s as text, or the reason it is rejected.
func (p *AmountParser) Parse(ctx context.Context, s string) (value, reason string, err error) {
	var val sql.NullString
	if err := p.stmt.QueryRowContext(ctx, s).Scan(&val, &reason); err != nil {
		return "", "", err
	}
	if val.Valid {
		return val.String, "", nil
	}
	return "", reason, nil
}

// Close releases the prepared statement.
func (p *AmountParser) Close() error { return p.stmt.Close() }

var tracing = os.Getenv("LEADLINE_TRACE") != ""

// trace prints how long a load step has taken so far, when LEADLINE_TRACE
// is set: a plain aid for finding where a slow load spends its time.
func trace(step string, since time.Time) {
	if tracing {
		fmt.Fprintf(os.Stderr, "trace: %-10s %6.2fs\n", step, time.Since(since).Seconds())
	}
}

// InputTotals is what every load of the workspace read, loaded and
// rejected: the files, and rows read = loaded + rejected.
type InputTotals struct {
	Files, RowsRead, RowsLoaded, RowsRejected int64
}

// Inputs sums the workspace's file records.
func Inputs(ctx context.Context, ws *workspace.Workspace) (InputTotals, error) {
	var t InputTotals
	err := ws.Conn.QueryRowContext(ctx, queries.Get("load_input_totals")).Scan(&t.Files, &t.RowsRead, &t.RowsLoaded, &t.RowsRejected)
	return t, err
}

// RejectedShare is rows rejected over rows read (0 when nothing was read).
func (t InputTotals) RejectedShare() float64 {
	if t.RowsRead == 0 {
		return 0
	}
	return float64(t.RowsRejected) / float64(t.RowsRead)
}

// amountRule is the SQL of a file's amount, the one rule a copy and a file
// in place share: the expression (amount, or debit - credit), the fast
// cast and grammar projections it reads, the raw text a reject shows, the
// reject's reason and the column it names.
type amountRule struct {
	expr, fast, parts, raw, reason, column string
}

func amountSQL(src *Source, storedOf map[string]storage, opts Options, amountType string) amountRule {
	dc := "false"
	if opts.DecimalComma {
		dc = "true"
	}
	parse := func(text string) string {
		return "TRY_CAST(ll_amount_canonical(" + text + ", " + dc + ") AS " + amountType + ")"
	}
	var amountExpr, fast, parts, rawExpr, reasonExpr, amountColName string
	m := src.mapping
	if m.Debit != "" {
		d, c := src.ref(m.Debit), src.ref(m.Credit)
		// Each side: a typed number as it is; text through the fast cast
		// and the grammar (projections ll_fast_d, ll_parts_d and so on);
		// a blank side counts as zero unless both are blank.
		one := func(x, name, suffix string) string {
			if typ := storedOf[name].typ; isNumeric(typ) {
				return "CASE WHEN " + x + " IS NULL THEN 0 ELSE " + numericAmount(x, typ, amountType) + " END"
			}
			t := "CAST(" + x + " AS VARCHAR)"
			f, p, e := textAmountSQLNamed(t, opts.DecimalComma, amountType, suffix)
			fast += f
			parts += p
			return "CASE WHEN ll_amount_blank(" + t + ") THEN 0 ELSE " + e + " END"
		}
		blank := func(x string) string { return "ll_amount_blank(CAST(" + x + " AS VARCHAR))" }
		// debit - credit overflows (an error, not a NULL, in DuckDB) only
		// when the two have opposite signs and |debit| + |credit| exceeds
		// the type's largest value: test that first.
		dv, cv := "("+one(d, m.Debit, "_d")+")", "("+one(c, m.Credit, "_c")+")"
		largest := "CAST('" + largestOf(opts) + "' AS " + amountType + ")"
		amountExpr = "CASE WHEN " + blank(d) + " AND " + blank(c) + " THEN NULL " +
			"WHEN abs(" + dv + ") <= " + largest + " - abs(" + cv + ") OR (" + dv + " >= 0) = (" + cv + " >= 0) THEN " + dv + " - " + cv + " END"
		sd, sc := queries.QuoteIdent(storedOf[m.Debit].stored), queries.QuoteIdent(storedOf[m.Credit].stored)
		rawExpr = "coalesce(" + sd + ", '') || ' | ' || coalesce(" + sc + ", '')"
		reasonExpr = "CASE WHEN ll_amount_blank(" + sd + ") AND ll_amount_blank(" + sc + ") THEN 'blank debit and credit' " +
			"WHEN NOT ll_amount_blank(" + sd + ") AND " + parse(sd) + " IS NULL THEN 'debit: ' || ll_amount_reason(" + sd + ", " + dc + ") " +
			"WHEN NOT ll_amount_blank(" + sc + ") AND " + parse(sc) + " IS NULL THEN 'credit: ' || ll_amount_reason(" + sc + ", " + dc + ") " +
			"ELSE 'debit minus credit: out of range' END"
		amountColName = m.Debit + " | " + m.Credit
	} else {
		a := m.Columns["amount"]
		st := storedOf[a]
		orig := src.ref(a)
		rawExpr = queries.QuoteIdent(st.stored)
		amountColName = a
		if isNumeric(st.typ) {
			amountExpr = numericAmount(orig, st.typ, amountType)
			reasonExpr = "CASE WHEN " + rawExpr + " IS NULL THEN 'blank amount' WHEN lower(" + rawExpr + ") IN ('nan', '-nan', 'inf', '-inf', 'infinity', '-infinity') THEN 'not a finite number' ELSE 'out of range' END"
		} else {
			fast, parts, amountExpr = textAmountSQL("CAST("+orig+" AS VARCHAR)", opts.DecimalComma, amountType)
			reasonExpr = "ll_amount_reason(" + rawExpr + ", " + dc + ")"
		}
	}
	reasonExpr = "replace(" + reasonExpr + ", 'out of range', 'out of range for " + amountType + "')"
	return amountRule{expr: amountExpr, fast: fast, parts: parts, raw: rawExpr, reason: reasonExpr, column: amountColName}
}
