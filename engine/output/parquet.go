package output

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"fmt"
	"strings"

	duckdb "github.com/duckdb/duckdb-go/v2"
	"github.com/leadline/leadline/queries"
)

// ParquetWriter writes tables as Parquet through a private in-memory
// DuckDB: each table goes into a temporary table with typed columns and
// out with COPY. The column types follow the kinds: text VARCHAR, count
// BIGINT, money DECIMAL(18 or 38, scale), number/proportion/percent DOUBLE,
// date DATE, timestamp TIMESTAMP, bool BOOLEAN.
type ParquetWriter struct {
	db   *sql.DB
	conn *sql.Conn
}

// NewParquetWriter opens the private database.
func NewParquetWriter(ctx context.Context) (*ParquetWriter, error) {
	connector, err := duckdb.NewConnector("", nil)
	if err != nil {
		return nil, err
	}
	db := sql.OpenDB(connector)
	db.SetMaxOpenConns(1)
	conn, err := db.Conn(ctx)
	if err != nil {
		db.Close()
		return nil, err
	}
	// One thread keeps row groups, and so the file's bytes, the same on every run.
	if _, err := conn.ExecContext(ctx, queries.Get("output_single_thread")); err != nil {
		conn.Close()
		db.Close()
		return nil, err
	}
	return &ParquetWriter{db: db, conn: conn}, nil
}

// Close releases the private database.
func (p *ParquetWriter) Close() error {
	p.conn.Close()
	return p.db.Close()
}

func (p *ParquetWriter) columnType(t *Table, i int) string {
	switch t.Columns[i].Kind {
	case Count:
		for _, r := range t.Rows {
			if _, ok := r[i].(int64); !ok && r[i] != nil {
				return "VARCHAR"
			}
		}
		return "BIGINT"
	case Money:
		for _, r := range t.Rows {
			if _, ok := r[i].(Decimal); !ok && r[i] != nil {
				return "VARCHAR"
			}
		}
		scale, digits := t.moneyScale(i)
		if digits <= 18 && scale <= 18 {
			return fmt.Sprintf("DECIMAL(18,%d)", scale)
		}
		return fmt.Sprintf("DECIMAL(38,%d)", min(scale, 38))
	case Number, Proportion, Percent:
		for _, r := range t.Rows {
			switch r[i].(type) {
			case nil, float64, int64:
			default:
				return "VARCHAR"
			}
		}
		return "DOUBLE"
	case Date, Timestamp:
		for _, r := range t.Rows {
			if r[i] != nil && Infer(r[i]) != t.Columns[i].Kind {
				return "VARCHAR"
			}
		}
		if t.Columns[i].Kind == Date {
			return "DATE"
		}
		return "TIMESTAMP"
	case Bool:
		for _, r := range t.Rows {
			if _, ok := r[i].(bool); !ok && r[i] != nil {
				return "VARCHAR"
			}
		}
		return "BOOLEAN"
	}
	return "VARCHAR"
}

// Write writes one table to path. The rows go into a table of text
// columns through DuckDB's appender, and out with COPY, each column cast
// to its type: decimals, dates and integers from their exact text, floats
// from the shortest text that reads back to the same float.
func (p *ParquetWriter) Write(ctx context.Context, path string, t *Table) error {
	if len(t.Columns) == 0 {
		return fmt.Errorf("table %s has no columns", t.Name)
	}
	if t.Source != nil {
		return writeSourceParquet(ctx, path, t)
	}
	defs := make([]string, len(t.Columns))
	casts := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		q := queries.QuoteIdent(c.Name)
		defs[i] = q + " VARCHAR"
		casts[i] = "CAST(" + q + " AS " + p.columnType(t, i) + ") AS " + q
	}
	if _, err := p.conn.ExecContext(ctx, queries.Render("output_stage_create", map[string]string{"column_defs": strings.Join(defs, ", ")})); err != nil {
		return fmt.Errorf("parquet %s: %w", t.Name, err)
	}
	defer p.conn.ExecContext(context.WithoutCancel(ctx), queries.Get("output_stage_drop"))
	err := p.conn.Raw(func(dc any) error {
		conn, ok := dc.(driver.Conn)
		if !ok {
			return fmt.Errorf("unexpected driver connection %T", dc)
		}
		a, err := duckdb.NewAppenderFromConn(conn, "", "ll_out")
		if err != nil {
			return err
		}
		vals := make([]driver.Value, len(t.Columns))
		for _, r := range t.Rows {
			for i := range vals {
				vals[i] = nil
				if i < len(r) && r[i] != nil {
					vals[i] = FormatValue(r[i])
				}
			}
			if err := a.AppendRow(vals...); err != nil {
				a.Close()
				return err
			}
		}
		return a.Close()
	})
	if err != nil {
		return fmt.Errorf("parquet %s: %w", t.Name, err)
	}
	q := queries.Render("output_copy_parquet", map[string]string{
		"query": queries.Render("output_stage_rows", map[string]string{"columns": strings.Join(casts, ", ")}),
		"path":  queries.QuoteString(path),
	})
	if _, err := p.conn.ExecContext(ctx, q); err != nil {
		return fmt.Errorf("parquet %s: %w", t.Name, err)
	}
	return nil
}

// writeSourceParquet has DuckDB write every row of the table's source to
// path with COPY, keeping the source's own column types (an extract's
// amounts stay exact DECIMAL). Parquet is a typed format that no
// spreadsheet runs formulas from, so text is written as it is.
func writeSourceParquet(ctx context.Context, path string, t *Table) error {
	types, err := sourceColumns(ctx, t)
	if err != nil {
		return err
	}
	cols := make([]string, len(types))
	for i, ct := range types {
		cols[i] = "src." + queries.QuoteIdent(ct.Name()) + " AS " + queries.QuoteIdent(t.Columns[i].Name)
	}
	q := queries.Render("output_select_columns", map[string]string{"columns": strings.Join(cols, ", "), "query": t.Source.query()})
	stmt := queries.Render("output_copy_parquet", map[string]string{"query": q, "path": queries.QuoteString(path)})
	if _, err := t.Source.DB.ExecContext(ctx, stmt, t.Source.Args...); err != nil {
		return fmt.Errorf("parquet %s: %w", t.Name, err)
	}
	return nil
}
