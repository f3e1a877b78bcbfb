package output

import (
	"context"
	"database/sql"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"regexp"
	"strings"

	"github.com/leadline/leadline/queries"
)

// A spreadsheet that opens a CSV file runs any cell that begins with =, +,
// -, @ (and, in some, a tab or carriage return before them) as a formula:
// =HYPERLINK(...) or +cmd|... in a client's description field would run on
// the engagement team's machine. OWASP "CSV Injection" recommends a leading
// single quote, which spreadsheets show as text; leadline does so in every
// text cell of its CSV exports unless the run keeps them raw
// (Table.KeepFormulas). A value that is a plain number, such as -12.50,
// is no formula and stays as it is. queries/output.sql holds the same rule
// for the CSV files DuckDB writes itself.

// formulaStart are the first characters that make a cell a formula.
const formulaStart = "=+-@\t\r"

var plainNumberRE = regexp.MustCompile(`^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?$`)

// NeutralizeText returns s with a leading single quote when a spreadsheet
// would read it as a formula, else s itself.
func NeutralizeText(s string) string {
	if s == "" || !strings.ContainsRune(formulaStart, rune(s[0])) || plainNumberRE.MatchString(s) {
		return s
	}
	return "'" + s
}

// csvText writes a value for CSV: text cells are neutralised unless keep.
func csvText(v any, keep bool) string {
	s := FormatValue(v)
	if _, isText := v.(string); isText && !keep {
		return NeutralizeText(s)
	}
	return s
}

// WriteCSV writes the table with a header row. Values are written as
// FormatValue writes them, so the same table gives the same bytes; text
// cells that a spreadsheet would run as formulas are neutralised (see
// NeutralizeText) unless t.KeepFormulas. A table with a Source is written
// whole by DuckDB (see writeSourceCSV).
func WriteCSV(w io.Writer, t *Table) error {
	cw := csv.NewWriter(w)
	head := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		head[i] = csvText(c.Name, t.KeepFormulas)
	}
	if err := cw.Write(head); err != nil {
		return err
	}
	if t.Source != nil {
		cw.Flush()
		if err := cw.Error(); err != nil {
			return err
		}
		return writeSourceCSV(context.Background(), w, t)
	}
	rec := make([]string, len(t.Columns))
	for _, r := range t.Rows {
		for i := range rec {
			rec[i] = ""
			if i < len(r) {
				rec[i] = csvText(r[i], t.KeepFormulas)
			}
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// queryColumns returns the name and DuckDB type of each column a query
// returns.
func queryColumns(ctx context.Context, db Querier, query string, args []any) ([]*sql.ColumnType, error) {
	rows, err := db.QueryContext(ctx, queries.Render("output_query_columns", map[string]string{"query": query}), args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	types, err := rows.ColumnTypes()
	if err != nil {
		return nil, err
	}
	return types, rows.Err()
}

// sourceColumns returns the DuckDB type of each column the source returns.
func sourceColumns(ctx context.Context, t *Table) ([]*sql.ColumnType, error) {
	types, err := queryColumns(ctx, t.Source.DB, t.Source.query(), t.Source.Args)
	if err != nil {
		return nil, err
	}
	if len(types) != len(t.Columns) {
		return nil, fmt.Errorf("table %s: the source returns %d columns, the table has %d", t.Name, len(types), len(t.Columns))
	}
	return types, nil
}

// neutralSelect wraps a query (whose arguments are args) in a SELECT that
// neutralises its text columns for CSV, naming column i names[i] (its own
// name when names is nil).
func neutralSelect(ctx context.Context, db Querier, query string, args []any, names []string) (string, error) {
	query = strings.TrimSuffix(strings.TrimSpace(query), ";")
	types, err := queryColumns(ctx, db, query, args)
	if err != nil {
		return "", err
	}
	cols := make([]string, len(types))
	for i, ct := range types {
		src := "src." + queries.QuoteIdent(ct.Name())
		if ct.DatabaseTypeName() == "VARCHAR" {
			src = queries.Render("output_neutral_text", map[string]string{"col": src})
		}
		name := ct.Name()
		if i < len(names) {
			name = names[i]
		}
		cols[i] = src + " AS " + queries.QuoteIdent(name)
	}
	return queries.Render("output_select_columns", map[string]string{"columns": strings.Join(cols, ", "), "query": query}), nil
}

// NeutralCSVQuery wraps a query whose rows DuckDB will write to a CSV
// file so that its text columns are neutralised (see NeutralizeText),
// keeping the column names.
func NeutralCSVQuery(ctx context.Context, db Querier, query string, args []any) (string, error) {
	return neutralSelect(ctx, db, query, args, nil)
}

// sourceCSVQuery is the SELECT whose rows DuckDB writes to CSV: every
// column under the table's name for it, text columns neutralised unless
// the table keeps formulas.
func sourceCSVQuery(ctx context.Context, t *Table) (string, error) {
	if _, err := sourceColumns(ctx, t); err != nil {
		return "", err
	}
	names := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		names[i] = c.Name
	}
	if !t.KeepFormulas {
		return neutralSelect(ctx, t.Source.DB, t.Source.SQL, t.Source.Args, names)
	}
	types, _ := sourceColumns(ctx, t)
	cols := make([]string, len(types))
	for i, ct := range types {
		cols[i] = "src." + queries.QuoteIdent(ct.Name()) + " AS " + queries.QuoteIdent(names[i])
	}
	return queries.Render("output_select_columns", map[string]string{"columns": strings.Join(cols, ", "), "query": t.Source.query()}), nil
}

// writeSourceCSV has DuckDB write the source's rows (no header) to a
// temporary file with COPY, which streams them without passing each row
// through Go, and copies that file to w.
func writeSourceCSV(ctx context.Context, w io.Writer, t *Table) error {
	q, err := sourceCSVQuery(ctx, t)
	if err != nil {
		return err
	}
	tmp, err := os.CreateTemp("", "leadline-*.csv")
	if err != nil {
		return err
	}
	path := tmp.Name()
	tmp.Close()
	defer os.Remove(path)
	stmt := queries.Render("output_copy_csv", map[string]string{"query": q, "path": queries.QuoteString(path)})
	if _, err := t.Source.DB.ExecContext(ctx, stmt, t.Source.Args...); err != nil {
		return fmt.Errorf("table %s: %w", t.Name, err)
	}
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	_, err = io.Copy(w, f)
	return err
}
