package drill

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"github.com/duckdb/duckdb-go/v2"
	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// DefaultLimit is how many records or groups a drill shows by default.
const DefaultLimit = 50

// DefaultTopAmounts is how many repeated amounts a group lists.
const DefaultTopAmounts = 3

// ErrNoRecords is returned when a selection matches nothing.
var ErrNoRecords = errors.New("no records match")

// Summary counts what a selection matches.
type Summary struct {
	Records int64  `json:"records"`
	Total   string `json:"total"` // signed sum of the amounts, exact
}

// Summarize counts the records of a selection and sums their amounts.
func Summarize(ctx context.Context, ws *workspace.Workspace, b *Built) (Summary, error) {
	var s Summary
	q := queries.Render("drill_summary", map[string]string{"where": b.Where.SQL})
	if err := ws.Conn.QueryRowContext(ctx, q, b.Where.Args...).Scan(&s.Records, &s.Total); err != nil {
		return s, fmt.Errorf("drill: %w", err)
	}
	return s, nil
}

// NoRecordsError explains an empty selection.
func NoRecordsError(b *Built) error {
	return fmt.Errorf("%w: %s (widen the selection: --signs both, --min 0, another bin or range)", ErrNoRecords, strings.Join(b.Description, "; "))
}

// RecordOptions order and cut the records.
type RecordOptions struct {
	Sort  string // a ledger column or file_name; default: file order (row_id)
	Desc  bool
	Limit int // rows to return; 0 = every row (exports only)
}

// fileColumn is the name of the file-name column added to the records:
// file_name, unless the ledger has a column of that name.
func fileColumn(cols []workspace.Column) string {
	fileCol := "file_name"
	for k := 2; hasColumn(cols, fileCol); k++ {
		fileCol = fmt.Sprintf("file_name_%d", k)
	}
	return fileCol
}

// orderBy returns the ORDER BY of the records with columns qualified by
// prefix ("" inside a query over ledger alone, "sel." over the drill CTE),
// and whether it is the plain file order.
func orderBy(ctx context.Context, ws *workspace.Workspace, o RecordOptions, fileCol, prefix string) (string, bool, error) {
	dir := " ASC NULLS LAST"
	if o.Desc {
		dir = " DESC NULLS LAST"
	}
	s := strings.TrimSpace(o.Sort)
	if s == "" {
		if o.Desc {
			return prefix + "row_id DESC", false, nil
		}
		return prefix + "row_id", true, nil
	}
	if strings.EqualFold(s, fileCol) || strings.EqualFold(s, "file_name") {
		t := "ledger"
		if prefix != "" {
			t = strings.TrimSuffix(prefix, ".")
		}
		return "(SELECT f2.name FROM files f2 WHERE f2.file_id = " + t + ".file_id)" + dir + ", " + prefix + "row_id", false, nil
	}
	name, _, err := ledgerColumn(ctx, ws, s)
	if err != nil {
		return "", false, fmt.Errorf("--sort: %w", err)
	}
	return prefix + quoteIdent(name) + dir + ", " + prefix + "row_id", false, nil
}

// recordsQuery returns the one-query form of the records (used by Export,
// where DuckDB writes every row straight to the file) and its arguments.
func recordsQuery(ctx context.Context, ws *workspace.Workspace, b *Built, o RecordOptions) (string, []any, error) {
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return "", nil, err
	}
	fileCol := fileColumn(cols)
	order, _, err := orderBy(ctx, ws, o, fileCol, "sel.")
	if err != nil {
		return "", nil, err
	}
	args := append([]any(nil), b.Where.Args...)
	limit := ""
	if o.Limit > 0 {
		limit = "LIMIT ?"
		args = append(args, o.Limit)
	}
	q := queries.Render("drill_records", map[string]string{
		"where": b.Where.SQL, "file_col": quoteIdent(fileCol), "order": order, "limit": limit,
	})
	return q, args, nil
}

// RecordsQuery returns one query that lists the selection's records in
// order (o.Limit of them; 0 = all), with the columns Records returns, and
// its arguments: for writers that have DuckDB stream every record.
func RecordsQuery(ctx context.Context, ws *workspace.Workspace, b *Built, o RecordOptions) (string, []any, error) {
	return recordsQuery(ctx, ws, b, o)
}

// Records returns up to o.Limit records of the selection, in order, with
// every ledger column and the file name. more reports whether the
// selection holds further records. Only the returned rows are held in
// memory.
//
// In file order the scan stops once enough records are found. In another
// order the records are found in two steps (their row_ids first, reading
// only the columns the order needs, then their rows), because sorting
// whole rows would read every column of every row the selection holds.
func Records(ctx context.Context, ws *workspace.Workspace, b *Built, o RecordOptions) (t *tabular.Table, more bool, err error) {
	if o.Limit <= 0 {
		o.Limit = DefaultLimit
	}
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return nil, false, err
	}
	fileCol := fileColumn(cols)
	inner, plain, err := orderBy(ctx, ws, o, fileCol, "")
	if err != nil {
		return nil, false, err
	}
	var q string
	var args []any
	if plain {
		q = queries.Render("drill_records_first", map[string]string{"where": b.Where.SQL, "file_col": quoteIdent(fileCol)})
		args = append(append(args, b.Where.Args...), o.Limit+1)
	} else {
		ids, err := recordIDs(ctx, ws, b, inner, o.Limit+1)
		if err != nil {
			return nil, false, err
		}
		outer, _, err := orderBy(ctx, ws, o, fileCol, "sel.")
		if err != nil {
			return nil, false, err
		}
		marks := "NULL"
		if len(ids) > 0 {
			marks = strings.TrimSuffix(strings.Repeat("?, ", len(ids)), ", ")
		}
		q = queries.Render("drill_records_by_id", map[string]string{"ids": marks, "file_col": quoteIdent(fileCol), "order": outer})
		args = ids
	}
	rows, err := ws.Conn.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, false, fmt.Errorf("drill: %w", err)
	}
	t, more, err = tabular.FromRows(rows, o.Limit)
	if err != nil {
		return nil, false, fmt.Errorf("drill: %w", err)
	}
	t.Name = "records"
	exactDecimals(t)
	return t, more, nil
}

func recordIDs(ctx context.Context, ws *workspace.Workspace, b *Built, order string, limit int) ([]any, error) {
	q := queries.Render("drill_record_ids", map[string]string{"where": b.Where.SQL, "order": order})
	rows, err := ws.Conn.QueryContext(ctx, q, append(append([]any(nil), b.Where.Args...), limit)...)
	if err != nil {
		return nil, fmt.Errorf("drill: %w", err)
	}
	defer rows.Close()
	var ids []any
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			return nil, err
		}
		ids = append(ids, id)
	}
	return ids, rows.Err()
}

// GroupOptions say how to group a selection.
type GroupOptions struct {
	Column string // a ledger column, file_name, or year, quarter or month (of posted)
	Limit  int    // groups to return (default DefaultLimit)
	Top    int    // repeated amounts listed per group (default DefaultTopAmounts)
}

// GroupResult is a selection grouped by a column.
type GroupResult struct {
	Column      string           `json:"group_by"`
	GroupsTotal int64            `json:"groups_total"` // groups in the selection (the table holds at most Limit)
	Table       *tabular.Table   `json:"-"`
	Rows        []map[string]any `json:"rows"`
}

// Group returns per group of the column: records, total amount, distinct
// amounts and the most repeated amounts with their counts, the groups with
// most records first.
func Group(ctx context.Context, ws *workspace.Workspace, b *Built, o GroupOptions) (*GroupResult, error) {
	if o.Limit <= 0 {
		o.Limit = DefaultLimit
	}
	if o.Top <= 0 {
		o.Top = DefaultTopAmounts
	}
	expr, label, err := groupExpr(ctx, ws, o.Column)
	if err != nil {
		return nil, err
	}
	q := queries.Render("drill_groups", map[string]string{
		"where": b.Where.SQL, "group_expr": expr,
		"wide_type": fmt.Sprintf("DECIMAL(38,%d)", b.AmountType.Scale),
	})
	args := append(append([]any(nil), b.Where.Args...), o.Top, o.Limit)
	rows, err := ws.Conn.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("drill: %w", err)
	}
	defer rows.Close()
	t := &tabular.Table{Name: "groups", Columns: []string{label, "records", "total", "distinct_amounts", "repeated_amounts"}}
	res := &GroupResult{Column: label, Table: t}
	for rows.Next() {
		var g any
		var n, distinct int64
		var total, rep string
		if err := rows.Scan(&g, &n, &total, &distinct, &rep, &res.GroupsTotal); err != nil {
			return nil, fmt.Errorf("drill: %w", err)
		}
		if d, ok := g.(duckdb.Decimal); ok {
			g = DecimalText(d)
		}
		t.Add(g, n, total, distinct, rep)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("drill: %w", err)
	}
	res.Rows = t.Records()
	return res, nil
}

func groupExpr(ctx context.Context, ws *workspace.Workspace, col string) (expr, label string, err error) {
	c := strings.TrimSpace(col)
	if c == "" {
		return "", "", fmt.Errorf("--group: give a column, e.g. --group counterparty")
	}
	name, _, err := ledgerColumn(ctx, ws, c)
	if err == nil {
		return quoteIdent(name), name, nil
	}
	if expr, label, ok := segment.PeriodOfPosted(c); ok {
		return expr, label, nil
	}
	switch strings.ToLower(c) {
	case "file_name", "file":
		return "(SELECT f.name FROM files f WHERE f.file_id = ledger.file_id)", "file_name", nil
	}
	return "", "", fmt.Errorf("--group: %w", err)
}

// ExportFormat returns the export format of a file name: csv, json or
// parquet, from its extension.
func ExportFormat(path string) (string, error) {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv":
		return "csv", nil
	case ".json":
		return "json", nil
	case ".parquet", ".pq":
		return "parquet", nil
	}
	return "", fmt.Errorf("--out %s: name a .csv, .json or .parquet file", path)
}

// copyOptions are leadline's own COPY format clauses.
var copyOptions = map[string]string{
	"csv":     "FORMAT csv, HEADER true",
	"json":    "FORMAT json, ARRAY true",
	"parquet": "FORMAT parquet, COMPRESSION zstd",
}

// Export writes the selection's records (o.Limit of them, 0 = all) to the
// file at path, in the format its extension names, each followed by the
// empty follow-up columns the engagement team fills (engine/followup). In CSV, text that a
// spreadsheet would run as a formula gets a leading quote
// (output.NeutralizeText); Parquet and JSON keep it as it is. DuckDB writes the file
// straight from the query: no row passes through Go. Amounts keep their
// exact type in Parquet and are written as exact decimal text in CSV and
// JSON.
func Export(ctx context.Context, ws *workspace.Workspace, b *Built, o RecordOptions, path string) error {
	format, err := ExportFormat(path)
	if err != nil {
		return err
	}
	q, args, err := recordsQuery(ctx, ws, b, o)
	if err != nil {
		return err
	}
	return exportRecords(ctx, ws, q, args, path, format)
}

// exportRecords writes the records of q to path: amounts as exact text
// (but in Parquet), the empty follow-up columns after the record's own
// (engine/followup), text neutralised in CSV.
func exportRecords(ctx context.Context, ws *workspace.Workspace, q string, args []any, path, format string) error {
	var err error
	if format != "parquet" {
		q = queries.Render("drill_export_text_amounts", map[string]string{"query": strings.TrimSuffix(strings.TrimSpace(q), ";")})
	}
	q = followup.WithColumns(q)
	if format == "csv" {
		if q, err = output.NeutralCSVQuery(ctx, ws.Conn, q, args); err != nil {
			return fmt.Errorf("--out %s: %s", path, firstLine(err.Error()))
		}
	}
	return copyTo(ctx, ws, q, args, path, format)
}

// ExportGroups writes a grouped selection (every group) to path.
func ExportGroups(ctx context.Context, ws *workspace.Workspace, b *Built, o GroupOptions, path string) error {
	format, err := ExportFormat(path)
	if err != nil {
		return err
	}
	if o.Top <= 0 {
		o.Top = DefaultTopAmounts
	}
	expr, label, err := groupExpr(ctx, ws, o.Column)
	if err != nil {
		return err
	}
	q := queries.Render("drill_groups", map[string]string{
		"where": b.Where.SQL, "group_expr": expr,
		"wide_type": fmt.Sprintf("DECIMAL(38,%d)", b.AmountType.Scale),
	})
	q = queries.Render("drill_export_groups", map[string]string{
		"label": quoteIdent(label), "query": strings.TrimSuffix(strings.TrimSpace(q), ";"),
	})
	limit := o.Limit
	if limit <= 0 {
		limit = 1 << 62
	}
	args := append(append([]any(nil), b.Where.Args...), o.Top, limit)
	if format == "csv" {
		if q, err = output.NeutralCSVQuery(ctx, ws.Conn, q, args); err != nil {
			return fmt.Errorf("--out %s: %s", path, firstLine(err.Error()))
		}
	}
	return copyTo(ctx, ws, q, args, path, format)
}

func copyTo(ctx context.Context, ws *workspace.Workspace, q string, args []any, path, format string) error {
	abs, err := filepath.Abs(path)
	if err != nil {
		return err
	}
	stmt := queries.Render("drill_copy", map[string]string{
		"query":   strings.TrimSuffix(strings.TrimSpace(q), ";"),
		"path":    queries.QuoteString(abs),
		"options": copyOptions[format],
	})
	if _, err := ws.Conn.ExecContext(ctx, stmt, args...); err != nil {
		return fmt.Errorf("--out %s: %s", path, firstLine(err.Error()))
	}
	return nil
}

// exactDecimals replaces scanned DECIMAL values by their exact text with
// every decimal place.
func exactDecimals(t *tabular.Table) {
	for _, r := range t.Rows {
		for i, v := range r {
			switch d := v.(type) {
			case duckdb.Decimal:
				r[i] = DecimalText(d)
			case *duckdb.Decimal:
				if d != nil {
					r[i] = DecimalText(*d)
				}
			}
		}
	}
}

// DropEmptyColumns removes the columns that are empty in every row (for the
// terminal, where unmapped canonical columns only take room). It returns the
// names dropped.
func DropEmptyColumns(t *tabular.Table) []string {
	if len(t.Rows) == 0 {
		return nil
	}
	keep := make([]bool, len(t.Columns))
	for _, r := range t.Rows {
		for i := range t.Columns {
			if i < len(r) && tabular.Format(r[i]) != "" {
				keep[i] = true
			}
		}
	}
	var dropped []string
	cols := t.Columns[:0:0]
	for i, c := range t.Columns {
		if keep[i] {
			cols = append(cols, c)
		} else {
			dropped = append(dropped, c)
		}
	}
	if len(dropped) == 0 {
		return nil
	}
	for ri, r := range t.Rows {
		nr := make([]any, 0, len(cols))
		for i := range t.Columns {
			if keep[i] && i < len(r) {
				nr = append(nr, r[i])
			}
		}
		t.Rows[ri] = nr
	}
	t.Columns = cols
	return dropped
}

func hasColumn(cols []workspace.Column, name string) bool {
	for _, c := range cols {
		if strings.EqualFold(c.Name, name) {
			return true
		}
	}
	return false
}

// ledgerColumn checks name with sqlguard and returns the ledger's own
// spelling and type.
func ledgerColumn(ctx context.Context, ws *workspace.Workspace, name string) (string, string, error) {
	if _, err := sqlguard.Column(ctx, ws.Conn, name); err != nil {
		return "", "", err
	}
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return "", "", err
	}
	for _, c := range cols {
		if strings.EqualFold(c.Name, name) {
			return c.Name, c.Type, nil
		}
	}
	return "", "", fmt.Errorf("no column %q in the ledger", name)
}

func quoteIdent(s string) string { return queries.QuoteIdent(s) }

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}
