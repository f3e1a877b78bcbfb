package load

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Parquet in place: the files stay where they are and the ledger is a view
// over them. The view applies the amount and date rules of a copy
// (loadOne) and leaves out the rows a copy would have rejected; one pass
// over the file at registration counts rows read, kept and rejected and
// stores every rejected row, so rows read = loaded + rejected holds as for
// a copy. The workspace records each file's size, modification time and
// SHA-256; every later open checks them (workspace.CheckFiles).

// ModeCopy and ModeInPlace name how a workspace holds its rows.
const (
	ModeCopy    = "copy"
	ModeInPlace = "in place"
)

// Mode tells how the workspace holds its ledger: ModeCopy (a table of
// copied rows, or nothing loaded yet) or ModeInPlace (a view over Parquet
// files registered in place).
func Mode(ctx context.Context, ws *workspace.Workspace) (string, error) {
	kind, err := ledgerKind(ctx, ws.Conn.QueryRowContext)
	if err != nil {
		return "", err
	}
	if kind == "VIEW" {
		return ModeInPlace, nil
	}
	return ModeCopy, nil
}

type rowQuerier func(ctx context.Context, query string, args ...any) *sql.Row

// ledgerKind is the ledger's table type: "BASE TABLE", "VIEW" or "" when
// nothing has been loaded.
func ledgerKind(ctx context.Context, q rowQuerier) (string, error) {
	var kind string
	err := q(ctx, queries.Get("inplace_ledger_type")).Scan(&kind)
	if errors.Is(err, sql.ErrNoRows) {
		return "", nil
	}
	return kind, err
}

// inPlaceLoad is the load's branch for files in place. done is false for
// a copy into a workspace that holds copies (or nothing): the copy load
// goes on. A copy into an in-place workspace, or files in place into a
// workspace of copies, is refused: one ledger is either a table or a view.
func inPlaceLoad(ctx context.Context, ws *workspace.Workspace, args []string, opts Options, started time.Time) (rep *Report, done bool, err error) {
	kind, err := ledgerKind(ctx, ws.Conn.QueryRowContext)
	if err != nil {
		return nil, true, err
	}
	if !opts.InPlace {
		if kind == "VIEW" {
			return nil, true, errors.New("this workspace reads its Parquet files in place (it was loaded with --in-place), so copied rows cannot join them: give --in-place for Parquet files, or load the copy into another --db; nothing was loaded")
		}
		return nil, false, nil
	}
	if kind == "BASE TABLE" {
		return nil, true, errors.New("--in-place: this workspace holds copied rows; files registered in place need a workspace of their own (another --db), or load these files by copy without --in-place; nothing was loaded")
	}
	rep, err = registerInPlace(ctx, ws, args, opts, started)
	return rep, true, err
}

// placed is one file being registered.
type placed struct {
	src     *Source
	mtime   int64
	footer  int64
	base    int64
	kept    string // the select of its kept rows, stored and used by the view
	fr      *FileReport
	hashed  chan struct{} // closed when hashing has ended (src.SHA256 or hashErr set)
	hashErr error
}

// registerInPlace registers Parquet files in place, in one transaction.
func registerInPlace(ctx context.Context, ws *workspace.Workspace, args []string, opts Options, started time.Time) (*Report, error) {
	paths, err := ExpandPaths(args)
	if err != nil {
		return nil, err
	}
	for _, p := range paths {
		format, _, err := FormatOf(p)
		if err != nil {
			return nil, err
		}
		if err := CheckInPlace(p, format); err != nil {
			return nil, fmt.Errorf("%w; nothing was loaded", err)
		}
	}
	amountType, isNew, err := settleAmountType(ctx, ws, opts)
	if err != nil {
		return nil, err
	}
	skip := map[string]bool{}
	if opts.Replace {
		for _, p := range paths {
			skip[p] = true
		}
	}
	if _, err := ws.CheckFiles(ctx, false, skip); err != nil {
		return nil, err
	}
	var files []*placed
	for _, p := range paths {
		f, err := examineInPlace(ctx, ws, p, opts)
		if err != nil {
			return nil, err
		}
		files = append(files, f)
	}
	// The same refusals as a copy: amounts whose decimal mark the file
	// does not settle, and currency markers on some amounts only. A view
	// takes no currency from markers: such a file is loaded by copy.
	for _, f := range files {
		if err := checkSeparators(ctx, ws, f.src, opts, scaleOf(amountType)); err != nil {
			return nil, err
		}
		if err := checkCurrencyMarkers(ctx, ws, f.src); err != nil {
			return nil, err
		}
		if f.src.mapping.CurrencyFromMarkers {
			return nil, fmt.Errorf("%s: every amount names its currency (EUR 12.00, $ 12.00) and the file has no currency column; --in-place takes the currency from a column only: load this file by copy, without --in-place; nothing was loaded", f.src.Path)
		}
	}
	// Hashing runs beside the completeness pass: both read the file, and
	// neither needs the other.
	for _, f := range files {
		f.hashed = make(chan struct{})
		go func(f *placed) {
			defer close(f.hashed)
			size, sum, err := Hash(f.src.Path)
			if err == nil && size != f.src.Size {
				err = fmt.Errorf("%s: the file changed while it was being registered (%d bytes, then %d); nothing was loaded", f.src.Path, f.src.Size, size)
			}
			f.src.SHA256, f.hashErr = sum, err
		}(f)
	}
	defer func() {
		for _, f := range files {
			<-f.hashed // no hashing outlives the load
		}
	}()
	trace("examine", started)

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
	if _, err := tx.ExecContext(ctx, queries.Get("inplace_create")); err != nil {
		return nil, fmt.Errorf("recording files in place: %w", err)
	}
	var loadID int64
	if err := tx.QueryRowContext(ctx, queries.Get("load_next_load_id")).Scan(&loadID); err != nil {
		return nil, err
	}
	rep := &Report{LoadID: loadID, AmountType: amountType}
	bySHA := map[string]string{}
	for _, f := range files {
		if err := passInPlace(ctx, tx, f, opts, amountType); err != nil {
			return nil, err
		}
		trace("pass", started)
		<-f.hashed
		if f.hashErr != nil {
			return nil, f.hashErr
		}
		if other, dup := bySHA[f.src.SHA256]; dup {
			return nil, fmt.Errorf("%s: same content (SHA-256 %s) as %s in this load; give each file once", f.src.Path, f.src.SHA256[:12], other)
		}
		bySHA[f.src.SHA256] = f.src.Path
		if err := recordInPlace(ctx, tx, f, opts, amountType, loadID); err != nil {
			return nil, err
		}
		rep.Files = append(rep.Files, *f.fr)
		rep.RowsRead += f.fr.RowsRead
		rep.RowsLoaded += f.fr.RowsLoaded
		rep.RowsRejected += f.fr.RowsRejected
		rep.RowsRounded += f.fr.RowsRounded
	}
	if err := createLedgerView(ctx, tx); err != nil {
		return nil, err
	}
	optsJSON, _ := json.Marshal(opts)
	if _, err := tx.ExecContext(ctx, queries.Get("load_insert_load"), loadID, started.UTC(), time.Now().UTC(), workspace.Version, string(optsJSON)); err != nil {
		return nil, err
	}
	// A file that changed while it was read would be recorded with the
	// size, time and hash of other bytes than its rows came from.
	for _, f := range files {
		st, err := os.Stat(f.src.Path)
		if err != nil {
			return nil, fmt.Errorf("%s: reading it again after the pass: %w; nothing was loaded", f.src.Path, err)
		}
		if st.Size() != f.src.Size || st.ModTime().UnixNano() != f.mtime {
			return nil, fmt.Errorf("%s: the file changed while it was being registered; nothing was loaded. Register it again once whatever writes it has finished", f.src.Path)
		}
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

// examineInPlace reads a file's schema and mapping before anything is
// written.
func examineInPlace(ctx context.Context, ws *workspace.Workspace, path string, opts Options) (*placed, error) {
	src, err := examineParquet(ctx, ws, path)
	if err != nil {
		return nil, err
	}
	st, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	src.Size = st.Size()
	if src.Size == 0 {
		return nil, fmt.Errorf("%s: the file is empty", path)
	}
	if src.ownRowNumber() {
		return nil, fmt.Errorf("%s: the file has a column named file_row_number, which the Parquet reader needs for its own row numbers; load it by copy, without --in-place", path)
	}
	src.mapping, err = Resolve(src.Path, src.Columns, opts.Map, opts.Debit, opts.Credit)
	if err != nil {
		return nil, err
	}
	if err := checkAmountTypes(src); err != nil {
		return nil, err
	}
	var footer int64
	q := queries.Render("inplace_footer_rows", map[string]string{"path": queries.QuoteString(ExactPath(path))})
	if err := ws.Conn.QueryRowContext(ctx, q).Scan(&footer); err != nil {
		return nil, fmt.Errorf("%s: reading the Parquet footer: %s", path, oneLine(err))
	}
	return &placed{src: src, mtime: st.ModTime().UnixNano(), footer: footer}, nil
}

// inPlaceSQL is what the view and the pass need of one file: the select
// of its rows in the ledger's columns (before rejects are left out), the
// test a kept row passes, and the rejects' column, value and reason.
type inPlaceSQL struct {
	sel, keep                    string
	rawExpr, reasonExpr, dateRaw string
	amountCol, dateCol           string
	dateReason, rounded          string
	pass                         passSQL
}

// passSQL is what the completeness pass reads: the select with the amount
// and date columns also as the file types them, and the keep test and
// the rejects' expressions written on those, so that a row's text is
// made only where a test needs it (a date that did not convert, a
// rejected row). The ledger's text columns are projections: used in the
// pass, DuckDB made text of every row's amount and date, five times the
// cost of reading them.
type passSQL struct {
	sel, keep                             string
	rawExpr, reasonExpr, dateRaw, rounded string
}

// buildInPlaceSQL builds, for a Parquet file, the expressions loadOne
// builds for a copy: the same amount (typed number, text through the
// grammar, or debit minus credit), the same date, the same text columns,
// the same reasons.
func buildInPlaceSQL(src *Source, opts Options, amountType string, fileID, base int64) inPlaceSQL {
	m := src.mapping
	cols := plan(src, m)
	storedOf := map[string]storage{}
	for _, c := range cols {
		storedOf[c.original] = c
	}
	// The ledger table's own columns first, in its order, then the file's
	// other columns as text, as ensureColumns adds them.
	have := map[string]string{}
	var extra []string
	for _, c := range cols {
		expr := "CAST(" + src.ref(c.original) + " AS VARCHAR)"
		if c.canon != "" {
			have[c.canon] = expr
		} else {
			extra = append(extra, expr+" AS "+queries.QuoteIdent(c.stored))
		}
	}
	var out inPlaceSQL
	out.dateRaw, out.dateReason = "NULL", ""
	posted := "CAST(NULL AS DATE)"
	if p, ok := m.Columns["posted"]; ok {
		st := storedOf[p]
		out.dateRaw = queries.QuoteIdent(st.stored)
		out.dateCol = p
		orig := src.ref(p)
		switch {
		case strings.Contains(strings.ToUpper(st.typ), "WITH TIME ZONE"):
			posted = "TRY_CAST(timezone(" + queries.QuoteString(timeZone(opts)) + ", " + orig + ") AS DATE)"
		case isDateLike(st.typ):
			posted = "TRY_CAST(" + orig + " AS DATE)"
		case opts.DateFormat != "":
			posted = "CAST(TRY_STRPTIME(trim(CAST(" + orig + " AS VARCHAR)), " + queries.QuoteString(opts.DateFormat) + ") AS DATE)"
		default:
			posted = "TRY_CAST(trim(CAST(" + orig + " AS VARCHAR)) AS DATE)"
		}
		out.dateReason = "invalid date"
		if opts.DateFormat != "" {
			out.dateReason += " (expected " + opts.DateFormat + ")"
		} else {
			out.dateReason += " (expected YYYY-MM-DD; give --date-format, e.g. %d/%m/%Y)"
		}
	}
	var sel []string
	for _, c := range []string{"entity", "account", "counterparty", "doc_id", "line_id"} {
		sel = append(sel, textOrNull(have[c])+" AS "+queries.QuoteIdent(c))
	}
	sel = append(sel, posted+" AS posted")
	for _, c := range []string{"user_id", "source", "descr", "currency"} {
		sel = append(sel, textOrNull(have[c])+" AS "+queries.QuoteIdent(c))
	}
	sel = append(sel, extra...)

	rule := amountSQL(src, storedOf, opts, amountType)
	amountExpr, fast, parts := rule.expr, rule.fast, rule.parts
	out.rawExpr, out.reasonExpr, out.amountCol = rule.raw, rule.reason, rule.column
	out.rounded = roundedInPlace(m, storedOf, opts.DecimalComma, scaleOf(amountType))
	out.sel = queries.Render("inplace_select", map[string]string{
		"row_id_base": fmt.Sprint(base),
		"file_id":     fmt.Sprint(fileID),
		"amount_expr": amountExpr,
		"columns":     strings.Join(sel, ",\n    "),
		"fast":        fast,
		"parts":       parts,
		"reader":      readerSQL(src, ""),
	})
	out.keep = "amount IS NOT NULL"
	if out.dateRaw != "NULL" {
		out.keep += " AND NOT (posted IS NULL AND nullif(trim(CAST(" + out.dateRaw + " AS VARCHAR)), '') IS NOT NULL)"
	}

	// The pass: the text of the amount and date columns comes from their
	// typed values under new names (ll_pass_raw_N), inside the tests that
	// need it.
	var rawCols, pairs []string
	seen := map[string]bool{}
	addRaw := func(orig string) {
		q := queries.QuoteIdent(storedOf[orig].stored)
		if seen[q] {
			return
		}
		seen[q] = true
		name := fmt.Sprintf("ll_pass_raw_%d", len(rawCols)+1)
		rawCols = append(rawCols, src.ref(orig)+" AS "+name)
		pairs = append(pairs, q, "CAST("+name+" AS VARCHAR)")
	}
	if m.Debit != "" {
		addRaw(m.Debit)
		addRaw(m.Credit)
	} else {
		addRaw(m.Columns["amount"])
	}
	if out.dateCol != "" {
		addRaw(out.dateCol)
	}
	lazy := strings.NewReplacer(pairs...)
	out.pass = passSQL{
		rawExpr: lazy.Replace(out.rawExpr), reasonExpr: lazy.Replace(out.reasonExpr),
		dateRaw: lazy.Replace(out.dateRaw), rounded: lazy.Replace(out.rounded),
		keep: "amount IS NOT NULL",
	}
	if out.dateRaw != "NULL" {
		// The same test as keep's, the text made only for dates that
		// did not convert.
		out.pass.keep += " AND NOT coalesce(CASE WHEN posted IS NULL THEN nullif(trim(CAST(" + out.pass.dateRaw + " AS VARCHAR)), '') IS NOT NULL END, false)"
	}
	out.pass.sel = queries.Render("inplace_select", map[string]string{
		"row_id_base": fmt.Sprint(base),
		"file_id":     fmt.Sprint(fileID),
		"amount_expr": amountExpr,
		"columns":     strings.Join(append(sel, rawCols...), ",\n    "),
		"fast":        fast,
		"parts":       parts,
		"reader":      readerSQL(src, ""),
	})
	return out
}

// roundedInPlace is roundedTest (the copy's count of amounts rounded to
// the scale) written so that the pass stays one cheap read: the grammar's
// parse runs only for the texts the cheap test picks (a CASE; inside an
// aggregate's FILTER an AND evaluated the parse for every row, 100 times
// slower), and a column whose type cannot hold more decimals than the
// scale (integers, DECIMAL of that scale or less) has none.
func roundedInPlace(m Mapping, storedOf map[string]storage, decimalComma bool, scale int) string {
	cols := []string{m.Columns["amount"]}
	if m.Debit != "" {
		cols = []string{m.Debit, m.Credit}
	}
	var tests []string
	for _, c := range cols {
		st := storedOf[c]
		if decimalsOf(st.typ) >= 0 && decimalsOf(st.typ) <= scale {
			continue
		}
		x := queries.QuoteIdent(st.stored)
		dc := decimalComma && !isNumeric(st.typ)
		pre := fmt.Sprintf("(contains(%s, 'e') OR contains(%s, 'E') OR least(nullif(strpos(reverse(%s), '.'), 0), nullif(strpos(reverse(%s), ','), 0)) > %d)", x, x, x, x, scale+1)
		beyond := queries.QuoteString(fmt.Sprintf(`\.[0-9]{%d}[0-9]*[1-9]`, scale))
		tests = append(tests, fmt.Sprintf("CASE WHEN %s THEN regexp_matches(coalesce(ll_amount_canonical(%s, %t), ''), %s) ELSE false END", pre, x, dc, beyond))
	}
	if len(tests) == 0 {
		return "false"
	}
	return strings.Join(tests, " OR ")
}

// decimalsOf is the most decimal places a Parquet column's type can
// hold: 0 for integers, s for DECIMAL(p,s), -1 when unbounded (floats,
// text).
func decimalsOf(typ string) int {
	t := strings.ToUpper(strings.TrimSpace(typ))
	for _, p := range []string{"TINYINT", "SMALLINT", "INTEGER", "BIGINT", "HUGEINT", "UTINYINT", "USMALLINT", "UINTEGER", "UBIGINT", "UHUGEINT"} {
		if t == p {
			return 0
		}
	}
	var p, s int
	if n, _ := fmt.Sscanf(t, "DECIMAL(%d,%d)", &p, &s); n == 2 {
		return s
	}
	return -1
}

func textOrNull(expr string) string {
	if expr == "" {
		return "CAST(NULL AS VARCHAR)"
	}
	return expr
}

// passInPlace reads the file once: rows read, kept, rounded, the control
// totals, and the rejected rows into rejects.
func passInPlace(ctx context.Context, tx *sql.Tx, f *placed, opts Options, amountType string) error {
	src := f.src
	f.fr = &FileReport{Path: src.Path, Name: src.Name, Format: src.Format, SizeBytes: src.Size,
		Mapping: src.mapping, Warnings: src.Warnings, Mode: ModeInPlace}
	if err := tx.QueryRowContext(ctx, queries.Get("load_next_file_id")).Scan(&f.fr.FileID); err != nil {
		return err
	}
	if err := tx.QueryRowContext(ctx, queries.Get("inplace_next_row_base")).Scan(&f.base); err != nil {
		return err
	}
	s := buildInPlaceSQL(src, opts, amountType, f.fr.FileID, f.base)
	f.kept = queries.Render("inplace_kept", map[string]string{"select": s.sel, "keep": s.keep})
	p := s.pass
	pass := queries.Render("inplace_pass", map[string]string{"select": p.sel, "keep": p.keep, "rounded": p.rounded})
	if tracing {
		fmt.Fprintln(os.Stderr, pass)
	}
	defer tx.ExecContext(context.WithoutCancel(ctx), queries.Get("inplace_drop_pass"))
	if _, err := tx.ExecContext(ctx, pass); err != nil {
		return fmt.Errorf("%s: %s", src.Path, explainReadError(err))
	}
	fr := f.fr
	if err := tx.QueryRowContext(ctx, queries.Get("inplace_pass_counts")).Scan(&fr.RowsRead, &fr.RowsLoaded, &fr.RowsRounded,
		&fr.Positive, &fr.Negative, &fr.Net); err != nil {
		return err
	}
	// The rows left out, listed by a second read only when there are some.
	var listed int64
	if fr.RowsRead != fr.RowsLoaded {
		q := queries.Render("inplace_insert_rejects", map[string]string{
			"select": p.sel, "keep": p.keep, "raw_expr": p.rawExpr, "reason_expr": p.reasonExpr, "date_raw": p.dateRaw,
		})
		res, err := tx.ExecContext(ctx, q, fr.FileID, s.amountCol, s.dateCol, s.dateReason)
		if err != nil {
			return fmt.Errorf("%s: recording rejected rows: %s", src.Path, explainReadError(err))
		}
		if listed, err = res.RowsAffected(); err != nil {
			return err
		}
	}
	if err := tx.QueryRowContext(ctx, queries.Get("load_rejected_count"), fr.FileID).Scan(&fr.RowsRejected); err != nil {
		return err
	}
	// The footer's row count is the file's own statement of its rows; the
	// pass must have read exactly those, and each either kept or rejected.
	if fr.RowsRead != f.footer || fr.RowsLoaded+fr.RowsRejected != fr.RowsRead || listed != fr.RowsRejected {
		return fmt.Errorf("%s: internal accounting error: the footer declares %d rows; read %d, kept %d, rejected %d; nothing was loaded", src.Path, f.footer, fr.RowsRead, fr.RowsLoaded, fr.RowsRejected)
	}
	var err error
	if fr.RejectReasons, err = reasons(ctx, tx, fr.FileID); err != nil {
		return err
	}
	if fr.RowsRead == 0 {
		return fmt.Errorf("%s: the Parquet file has no rows", src.Path)
	}
	if fr.RowsLoaded == 0 {
		top := ""
		if len(fr.RejectReasons) > 0 {
			top = fmt.Sprintf(" (most common reason: %s, from line %d)", fr.RejectReasons[0].Reason, deref(fr.RejectReasons[0].FirstLine))
		}
		return fmt.Errorf("%s: none of its %d rows could be loaded%s; check --decimal-comma, --date-format and the mapping (leadline inspect %s); nothing was loaded", src.Path, fr.RowsRead, top, src.Path)
	}
	if err := checkRejectShare(src, fr, opts); err != nil {
		return err
	}
	if fr.RowsRounded > 0 {
		fr.Warnings = append(fr.Warnings, fmt.Sprintf("%d amounts had more decimal places than the scale of %d and were rounded half away from zero; their text as sent is kept in the ledger beside the amount", fr.RowsRounded, scaleOf(amountType)))
	}
	return nil
}

// recordInPlace refuses a file already in the workspace (unless --replace,
// which takes the earlier one out) and writes the file's records.
func recordInPlace(ctx context.Context, tx *sql.Tx, f *placed, opts Options, amountType string, loadID int64) error {
	src, fr := f.src, f.fr
	fr.SHA256 = src.SHA256
	rows, err := tx.QueryContext(ctx, queries.Get("load_files_to_replace"), src.SHA256, src.Path)
	if err != nil {
		return err
	}
	type old struct {
		id   int64
		same bool
	}
	var olds []old
	for rows.Next() {
		var o old
		if err := rows.Scan(&o.id, &o.same); err != nil {
			rows.Close()
			return err
		}
		olds = append(olds, o)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	for _, o := range olds {
		if !opts.Replace {
			if o.same {
				return fmt.Errorf("%s: already loaded as file %d (same SHA-256 %s); give --replace to register it again in its place", src.Path, o.id, src.SHA256[:12])
			}
			return fmt.Errorf("%s: this path was loaded before as file %d with other content; give --replace to put this version in its place, or copy the file under another name if both versions belong in the ledger; nothing was loaded", src.Path, o.id)
		}
		for _, q := range []string{"inplace_forget", "load_forget_rejects", "load_forget_file"} {
			if _, err := tx.ExecContext(ctx, queries.Get(q), o.id); err != nil {
				return err
			}
		}
		what := "from the same path with other content"
		if o.same {
			what = "with the same content"
		}
		fr.Warnings = append(fr.Warnings, fmt.Sprintf("replaced file %d registered earlier %s", o.id, what))
	}
	mapJSON, _ := json.Marshal(src.mapping)
	dialect, _ := json.Marshal(map[string]any{"mode": ModeInPlace, "decimal_comma": opts.DecimalComma, "decimal_point": opts.DecimalPoint,
		"time_zone": timeZone(opts), "amount_type": amountType, "date_format": opts.DateFormat,
		"rows_rounded": fr.RowsRounded, "max_rejects": maxRejectsText(opts), "mtime_ns": f.mtime, "footer_rows": f.footer})
	if _, err := tx.ExecContext(ctx, queries.Get("load_insert_file"), fr.FileID, loadID, src.Path, src.Name, src.Format,
		src.Size, src.SHA256, fr.RowsRead, fr.RowsLoaded, fr.RowsRejected, string(mapJSON), string(dialect), time.Now().UTC()); err != nil {
		return err
	}
	if _, err := tx.ExecContext(ctx, queries.Get("inplace_set_mode"), fr.FileID); err != nil {
		return err
	}
	_, err = tx.ExecContext(ctx, queries.Get("inplace_insert_file"), fr.FileID, src.Path, src.Size, f.mtime, src.SHA256, f.footer, f.base, f.kept)
	return err
}

// createLedgerView makes the ledger the union of every registered file's
// kept rows.
func createLedgerView(ctx context.Context, tx *sql.Tx) error {
	rows, err := tx.QueryContext(ctx, queries.Get("inplace_selects"))
	if err != nil {
		return err
	}
	var parts []string
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			rows.Close()
			return err
		}
		parts = append(parts, "("+s+")")
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	if len(parts) == 0 {
		return errors.New("no file registered in place")
	}
	q := queries.Render("inplace_view", map[string]string{"union": strings.Join(parts, "\nUNION ALL BY NAME\n")})
	if _, err := tx.ExecContext(ctx, q); err != nil {
		return fmt.Errorf("creating the ledger view: %w", err)
	}
	return nil
}
