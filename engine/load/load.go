// Package load brings client extracts (CSV, TSV, Parquet) into the
// workspace's ledger table, exactly and completely: every record read is
// either loaded or stored in rejects with its line and reason, inside one
// transaction, so a failed load leaves the workspace as it was.
package load

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"sort"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Options control how files are read and mapped.
type Options struct {
	Map          map[string]string `json:"map,omitempty"` // canonical -> original column
	Debit        string            `json:"debit,omitempty"`
	Credit       string            `json:"credit,omitempty"`
	DecimalComma bool              `json:"decimal_comma"`
	Scale        int               `json:"scale"`     // decimal places of amounts (default 2)
	Precision    int               `json:"precision"` // total digits (18 or 38; default 18)
	Delimiter    string            `json:"delimiter,omitempty"`
	Encoding     string            `json:"encoding,omitempty"`
	DateFormat   string            `json:"date_format,omitempty"` // strptime format of posted, e.g. %d/%m/%Y
	Replace      bool              `json:"replace"`               // reload a file already in the workspace
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
	Positive      string        `json:"sum_positive"`
	Negative      string        `json:"sum_negative"`
	Net           string        `json:"net"`
	Mapping       Mapping       `json:"mapping"`
	Delimiter     string        `json:"delimiter,omitempty"`
	Encoding      string        `json:"encoding,omitempty"`
	Warnings      []string      `json:"warnings"`
	RejectReasons []ReasonCount `json:"reject_reasons"`
}

// EntityTotal is one entity's control totals over the whole workspace.
type EntityTotal struct {
	Entity   string `json:"entity"`
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
	Seconds      float64       `json:"seconds"`
}

// Load loads the files (paths or glob patterns) into the workspace in one
// transaction.
func Load(ctx context.Context, ws *workspace.Workspace, args []string, opts Options) (*Report, error) {
	started := time.Now()
	opts.defaults()
	if opts.Scale < 0 || opts.Scale > 6 {
		return nil, fmt.Errorf("--scale %d: give 0 to 6 decimal places", opts.Scale)
	}
	if opts.Precision != 18 && opts.Precision != 38 {
		return nil, fmt.Errorf("--precision %d: give 18 (fast, amounts below 10^%d) or 38", opts.Precision, 18-opts.Scale)
	}
	paths, err := ExpandPaths(args)
	if err != nil {
		return nil, err
	}
	amountType, err := settleAmountType(ctx, ws, opts)
	if err != nil {
		return nil, err
	}

	// Examine every file before touching the workspace.
	var sources []*Source
	bySHA := map[string]string{}
	for _, p := range paths {
		src, err := examine(ctx, ws, p, opts)
		if err != nil {
			return nil, err
		}
		if other, dup := bySHA[src.SHA256]; dup {
			return nil, fmt.Errorf("%s: same content (SHA-256 %s) as %s in this load; give each file once", p, src.SHA256[:12], other)
		}
		bySHA[src.SHA256] = p
		sources = append(sources, src)
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
	if _, err := tx.ExecContext(ctx, queries.Render("create_ledger", map[string]string{"amount_type": amountType})); err != nil {
		return nil, fmt.Errorf("creating the ledger table: %w", err)
	}
	var loadID int64
	if err := tx.QueryRowContext(ctx, "SELECT nextval('load_seq')").Scan(&loadID); err != nil {
		return nil, err
	}
	rep := &Report{LoadID: loadID, Workspace: ws.Path, AmountType: amountType}
	for _, src := range sources {
		fr, err := loadOne(ctx, tx, src, opts, amountType, loadID)
		if err != nil {
			return nil, err
		}
		rep.Files = append(rep.Files, *fr)
		rep.RowsRead += fr.RowsRead
		rep.RowsLoaded += fr.RowsLoaded
		rep.RowsRejected += fr.RowsRejected
	}
	optsJSON, _ := json.Marshal(opts)
	if _, err := tx.ExecContext(ctx, queries.Get("load_insert_load"), loadID, started.UTC(), time.Now().UTC(), workspace.Version, string(optsJSON)); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("load interrupted; the workspace is unchanged: %w", err)
	}
	if err := tx.Commit(); err != nil {
		return nil, fmt.Errorf("committing the load: %w", err)
	}
	committed = true
	rep.Entities, err = EntityTotals(ctx, ws)
	if err != nil {
		return nil, err
	}
	rep.Seconds = time.Since(started).Seconds()
	return rep, nil
}

// settleAmountType fixes the workspace's amount type at its first load and
// refuses a later load that asks for another scale.
func settleAmountType(ctx context.Context, ws *workspace.Workspace, opts Options) (string, error) {
	want := opts.AmountType()
	have, ok, err := ws.Meta(ctx, "amount_type")
	if err != nil {
		return "", err
	}
	if ok {
		if have != want && (opts.Scale != 2 || opts.Precision != 18) {
			return "", fmt.Errorf("this workspace holds amounts as %s; --scale/--precision ask for %s (use another --db)", have, want)
		}
		return have, nil
	}
	if err := ws.SetMeta(ctx, "amount_type", want); err != nil {
		return "", err
	}
	return want, nil
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
	return src, nil
}

// ParquetTypes maps column name to DuckDB type for a Parquet file.
func examineParquet(ctx context.Context, ws *workspace.Workspace, path string) (*Source, error) {
	src := &Source{Path: path, Name: baseName(path), Format: "parquet"}
	rows, err := ws.Conn.QueryContext(ctx, "DESCRIBE SELECT * FROM read_parquet("+queries.QuoteString(path)+")")
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
	m, err := Resolve(src.Path, src.Columns, opts.Map, opts.Debit, opts.Credit)
	if err != nil {
		return nil, err
	}
	fr := &FileReport{Path: src.Path, Name: src.Name, Format: src.Format, SizeBytes: src.Size, SHA256: src.SHA256,
		Mapping: m, Delimiter: src.Delimiter, Encoding: src.Encoding, Warnings: src.Warnings}
	if opts.Replace {
		var oldID int64
		err := tx.QueryRowContext(ctx, queries.Get("file_by_sha"), src.SHA256).Scan(&oldID, new(string))
		if err == nil {
			for _, q := range []string{"load_forget_ledger", "load_forget_rejects", "load_forget_file"} {
				if _, err := tx.ExecContext(ctx, queries.Get(q), oldID); err != nil {
					return nil, err
				}
			}
			fr.Warnings = append(fr.Warnings, fmt.Sprintf("replaced file %d loaded earlier with the same content", oldID))
		} else if !errors.Is(err, sql.ErrNoRows) {
			return nil, err
		}
	}
	if err := tx.QueryRowContext(ctx, "SELECT nextval('file_seq')").Scan(&fr.FileID); err != nil {
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
		expr := "CAST(" + queries.QuoteIdent(c.original) + " AS VARCHAR)"
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
		orig := queries.QuoteIdent(p)
		var expr string
		switch {
		case isDateLike(st.typ):
			expr = "TRY_CAST(" + orig + " AS DATE)"
		case opts.DateFormat != "":
			expr = "CAST(TRY_STRPTIME(trim(CAST(" + orig + " AS VARCHAR)), " + queries.QuoteString(opts.DateFormat) + ") AS DATE)"
		default:
			expr = "TRY_CAST(trim(CAST(" + orig + " AS VARCHAR)) AS DATE)"
		}
		sel = append(sel, expr+" AS posted")
	}
	dc := "false"
	if opts.DecimalComma {
		dc = "true"
	}
	parse := func(text string) string {
		return "TRY_CAST(ll_amount_canonical(" + text + ", " + dc + ") AS " + amountType + ")"
	}
	var amountExpr, fast, rawExpr, reasonExpr, amountColName string
	if m.Debit != "" {
		d, c := queries.QuoteIdent(m.Debit), queries.QuoteIdent(m.Credit)
		one := func(x string) string {
			if isNumeric(storedOf[strings.Trim(x, `"`)].typ) {
				return "CASE WHEN " + x + " IS NULL THEN 0 ELSE TRY_CAST(" + x + " AS " + amountType + ") END"
			}
			t := "CAST(" + x + " AS VARCHAR)"
			return "CASE WHEN nullif(trim(" + t + "), '') IS NULL THEN 0 ELSE " + parse(t) + " END"
		}
		blank := func(x string) string { return "nullif(trim(CAST(" + x + " AS VARCHAR)), '') IS NULL" }
		amountExpr = "CASE WHEN " + blank(d) + " AND " + blank(c) + " THEN NULL ELSE (" + one(d) + ") - (" + one(c) + ") END"
		sd, sc := queries.QuoteIdent(storedOf[m.Debit].stored), queries.QuoteIdent(storedOf[m.Credit].stored)
		rawExpr = "coalesce(" + sd + ", '') || ' | ' || coalesce(" + sc + ", '')"
		reasonExpr = "CASE WHEN nullif(trim(" + sd + "), '') IS NULL AND nullif(trim(" + sc + "), '') IS NULL THEN 'blank debit and credit' " +
			"WHEN nullif(trim(" + sd + "), '') IS NOT NULL AND TRY_CAST(ll_amount_canonical(" + sd + ", " + dc + ") AS " + amountType + ") IS NULL THEN 'debit: ' || ll_amount_reason(" + sd + ", " + dc + ") " +
			"ELSE 'credit: ' || ll_amount_reason(" + sc + ", " + dc + ") END"
		amountColName = m.Debit + " | " + m.Credit
	} else {
		a := m.Columns["amount"]
		st := storedOf[a]
		orig := queries.QuoteIdent(a)
		rawExpr = queries.QuoteIdent(st.stored)
		amountColName = a
		if isNumeric(st.typ) {
			amountExpr = "TRY_CAST(" + orig + " AS " + amountType + ")"
			reasonExpr = "CASE WHEN " + rawExpr + " IS NULL THEN 'blank amount' WHEN lower(" + rawExpr + ") IN ('nan', '-nan', 'inf', '-inf', 'infinity', '-infinity') THEN 'not a finite number' ELSE 'out of range' END"
		} else {
			fast, amountExpr = textAmountSQL("CAST("+orig+" AS VARCHAR)", opts.DecimalComma, amountType)
			reasonExpr = "ll_amount_reason(" + rawExpr + ", " + dc + ")"
		}
	}
	reasonExpr = "replace(" + reasonExpr + ", 'out of range', 'out of range for " + amountType + "')"

	reader, rejTable := readerSQL(src, fr.FileID)
	var base int64
	if err := tx.QueryRowContext(ctx, queries.Get("load_next_row_id")).Scan(&base); err != nil {
		return nil, err
	}
	lineOffset := "1" // CSV: the header is line 1
	if src.Format == "parquet" {
		lineOffset = "0"
	}
	rowNumber := "file_row_number + 1"
	if src.Format == "csv" {
		t1 := time.Now()
		if _, err := tx.ExecContext(ctx, queries.Render("load_stage", map[string]string{"reader": reader})); err != nil {
			return nil, fmt.Errorf("%s: %s", src.Path, explainReadError(err))
		}
		trace("stage", t1)
		// Inside a transaction DuckDB numbers new rows from a large offset,
		// so the position is the rowid less the first one.
		var first int64
		if err := tx.QueryRowContext(ctx, "SELECT coalesce(min(rowid), 0) FROM ll_stage").Scan(&first); err != nil {
			return nil, err
		}
		reader, rowNumber = "ll_stage", fmt.Sprintf("rowid - %d + 1", first)
		defer tx.ExecContext(context.WithoutCancel(ctx), queries.Get("load_unstage"))
	}
	insert := queries.Render("load_insert", map[string]string{
		"row_number":  rowNumber,
		"row_id_base": fmt.Sprint(base),
		"file_id":     fmt.Sprint(fr.FileID),
		"line_offset": lineOffset,
		"amount_expr": amountExpr,
		"columns":     strings.Join(sel, ",\n    "),
		"fast":        fast,
		"reader":      reader,
	})
	t0 := time.Now()
	if tracing {
		fmt.Fprintln(os.Stderr, insert)
	}
	if _, err := tx.ExecContext(ctx, insert); err != nil {
		return nil, fmt.Errorf("%s: %s", src.Path, explainReadError(err))
	}
	trace("insert", t0)
	var fromReader, maxLine int64
	if err := tx.QueryRowContext(ctx, queries.Get("load_file_counts"), fr.FileID).Scan(&fromReader, &maxLine); err != nil {
		return nil, err
	}
	var structural int64
	if rejTable != "" {
		structural, err = takeStructuralRejects(ctx, tx, rejTable, fr.FileID)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", src.Path, err)
		}
	}
	fr.RowsRead = fromReader + structural
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
	if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM ledger WHERE file_id = ?", fr.FileID).Scan(&fr.RowsLoaded); err != nil {
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
		return nil, fmt.Errorf("%s: has a header but no data rows", src.Path)
	}
	if fr.RowsLoaded == 0 {
		top := ""
		if len(fr.RejectReasons) > 0 {
			top = fmt.Sprintf(" (most common reason: %s, from line %d)", fr.RejectReasons[0].Reason, deref(fr.RejectReasons[0].FirstLine))
		}
		return nil, fmt.Errorf("%s: none of its %d rows could be loaded%s; check --delimiter, --decimal-comma, --date-format and the mapping (leadline inspect %s); nothing was loaded", src.Path, fr.RowsRead, top, src.Path)
	}
	if err := tx.QueryRowContext(ctx, `SELECT CAST(coalesce(sum(amount) FILTER (WHERE amount > 0), 0) AS VARCHAR),
		CAST(coalesce(sum(amount) FILTER (WHERE amount < 0), 0) AS VARCHAR), CAST(coalesce(sum(amount), 0) AS VARCHAR)
		FROM ledger WHERE file_id = ?`, fr.FileID).Scan(&fr.Positive, &fr.Negative, &fr.Net); err != nil {
		return nil, err
	}
	trace("counts", t0)
	mapJSON, _ := json.Marshal(m)
	dialect, _ := json.Marshal(map[string]any{"delimiter": src.Delimiter, "encoding": src.Encoding, "gzip": src.Gzip,
		"decimal_comma": opts.DecimalComma, "amount_type": amountType, "date_format": opts.DateFormat})
	if _, err := tx.ExecContext(ctx, queries.Get("load_insert_file"), fr.FileID, loadID, src.Path, src.Name, src.Format,
		src.Size, src.SHA256, fr.RowsRead, fr.RowsLoaded, fr.RowsRejected, string(mapJSON), string(dialect), time.Now().UTC()); err != nil {
		return nil, err
	}
	return fr, nil
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

func isDateLike(t string) bool {
	t = strings.ToUpper(t)
	return strings.HasPrefix(t, "DATE") || strings.HasPrefix(t, "TIMESTAMP")
}

func readerSQL(src *Source, fileID int64) (reader, rejTable string) {
	if src.Format == "parquet" {
		return "read_parquet(" + queries.QuoteString(src.Path) + ", file_row_number = true)", ""
	}
	var cols []string
	for _, c := range src.Columns {
		cols = append(cols, queries.QuoteString(c)+": 'VARCHAR'")
	}
	rejTable = fmt.Sprintf("ll_rejects_%d", fileID)
	opts := []string{
		queries.QuoteString(src.Path),
		"auto_detect = false",
		"header = true",
		"columns = {" + strings.Join(cols, ", ") + "}",
		"delim = " + queries.QuoteString(src.Delimiter),
		`quote = '"'`,
		`escape = '"'`,
		"store_rejects = true",
		"rejects_table = " + queries.QuoteString(rejTable),
		"rejects_scan = " + queries.QuoteString(rejTable+"_scan"),
		"encoding = " + queries.QuoteString(src.Encoding),
		"max_line_size = 16777216",
	}
	if src.Gzip {
		opts = append(opts, "compression = 'gzip'")
	}
	return "read_csv(" + strings.Join(opts, ", ") + ")", rejTable
}

func explainReadError(err error) string {
	msg := oneLine(err)
	if strings.Contains(msg, "Invalid unicode") || strings.Contains(msg, "invalid unicode") {
		msg += " (if the file is Latin-1 give --encoding latin-1)"
	}
	return msg
}

// takeStructuralRejects moves the CSV reader's rejected records into
// rejects, corrects the line numbers of the loaded rows for the records
// skipped before them, and returns how many records were rejected.
func takeStructuralRejects(ctx context.Context, tx *sql.Tx, table string, fileID int64) (int64, error) {
	rows, err := tx.QueryContext(ctx, queries.Render("load_structural_rejects", map[string]string{"rejects_table": queries.QuoteIdent(table)}))
	if err != nil {
		return 0, fmt.Errorf("reading the reader's rejects: %w", err)
	}
	type rej struct {
		line   int64
		reason string
		raw    sql.NullString
	}
	var rejs []rej
	for rows.Next() {
		var r rej
		if err := rows.Scan(&r.line, &r.reason, &r.raw); err != nil {
			rows.Close()
			return 0, err
		}
		rejs = append(rejs, r)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return 0, err
	}
	for _, t := range []string{table, table + "_scan"} {
		if _, err := tx.ExecContext(ctx, "DROP TABLE IF EXISTS "+queries.QuoteIdent(t)); err != nil {
			return 0, err
		}
	}
	if len(rejs) == 0 {
		return 0, nil
	}
	sort.Slice(rejs, func(i, j int) bool { return rejs[i].line < rejs[j].line })
	app, err := tx.PrepareContext(ctx, "INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line) VALUES (?, ?, NULL, NULL, ?, ?)")
	if err != nil {
		return 0, err
	}
	defer app.Close()
	for _, r := range rejs {
		reason := "unreadable record: " + r.reason
		if strings.Contains(r.reason, "INVALID ENCODING") {
			reason += " (not UTF-8; if the file is Latin-1 give --encoding latin-1)"
		}
		if _, err := app.ExecContext(ctx, fileID, r.line, reason, r.raw); err != nil {
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
		q := "UPDATE ledger SET line = ledger.line + r.j FROM (VALUES " + strings.Join(vals, ", ") +
			") AS r(lo, hi, j) WHERE ledger.file_id = ? AND ledger.line - 1 > r.lo AND ledger.line - 1 <= r.hi"
		if _, err := tx.ExecContext(ctx, q, fileID); err != nil {
			return 0, fmt.Errorf("numbering lines: %w", err)
		}
	}
	return int64(len(rejs)), nil
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
		if _, err := tx.ExecContext(ctx, "ALTER TABLE ledger ADD COLUMN "+queries.QuoteIdent(c.stored)+" VARCHAR"); err != nil {
			return fmt.Errorf("adding column %q: %w", c.stored, err)
		}
		have[strings.ToLower(c.stored)] = true
	}
	return nil
}

func reasons(ctx context.Context, tx *sql.Tx, fileID int64) ([]ReasonCount, error) {
	rows, err := tx.QueryContext(ctx, `SELECT reason, count(*), min(line) FROM rejects WHERE file_id = ? GROUP BY reason ORDER BY count(*) DESC, reason`, fileID)
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
	rows, err := ws.Conn.QueryContext(ctx, queries.Get("entity_totals"))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := []EntityTotal{}
	for rows.Next() {
		var e EntityTotal
		if err := rows.Scan(&e.Entity, &e.Rows, &e.Positive, &e.Negative, &e.Net); err != nil {
			return nil, err
		}
		out = append(out, e)
	}
	return out, rows.Err()
}

// textAmountSQL returns the projection that computes the fast-path value
// (", ... AS ll_fast", evaluated once per row in the inner select) and the
// amount expression over it, for an amount held as text. The fast path is a
// plain DECIMAL cast, which takes the common shapes (1234.56, -5, 1e3);
// everything else goes through the grammar of queries/amount.sql.
func textAmountSQL(text string, decimalComma bool, amountType string) (fast, expr string) {
	dc := "false"
	guard := "NOT contains(" + text + ", '_')"
	if decimalComma {
		dc = "true"
		guard += " AND NOT contains(" + text + ", '.')"
	}
	fast = ", CASE WHEN " + guard + " THEN TRY_CAST(" + text + " AS " + amountType + ") END AS ll_fast"
	expr = "CASE WHEN ll_fast IS NOT NULL THEN ll_fast ELSE TRY_CAST(ll_amount_canonical(" + text + ", " + dc + ") AS " + amountType + ") END"
	return fast, expr
}

// ParseText parses one amount text exactly as a load would and returns the
// value as text (with the type's scale) or the rejection reason. It exists
// for tests and the fuzzer, which hold it against engine/amount.
func ParseText(ctx context.Context, ws *workspace.Workspace, s string, decimalComma bool, amountType string) (value, reason string, err error) {
	fast, expr := textAmountSQL("v", decimalComma, amountType)
	dc := "false"
	if decimalComma {
		dc = "true"
	}
	q := "SELECT CAST(" + expr + " AS VARCHAR), replace(ll_amount_reason(v, " + dc + "), 'out of range', 'out of range') FROM (SELECT v" + fast + " FROM (SELECT CAST(? AS VARCHAR) AS v))"
	var val sql.NullString
	if err := ws.Conn.QueryRowContext(ctx, q, s).Scan(&val, &reason); err != nil {
		return "", "", err
	}
	if val.Valid {
		return val.String, "", nil
	}
	return "", reason, nil
}

var tracing = os.Getenv("LEADLINE_TRACE") != ""

// trace prints how long a load step has taken so far, when LEADLINE_TRACE
// is set: a plain aid for finding where a slow load spends its time.
func trace(step string, since time.Time) {
	if tracing {
		fmt.Fprintf(os.Stderr, "trace: %-10s %6.2fs\n", step, time.Since(since).Seconds())
	}
}
