package output

import (
	"context"
	"database/sql"
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
	if _, err := conn.ExecContext(ctx, "SET threads = 1"); err != nil {
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

func bindValue(v any, typ string) any {
	switch x := v.(type) {
	case nil:
		return nil
	case Decimal:
		return x.Text
	}
	if typ == "VARCHAR" {
		return FormatValue(v)
	}
	return v
}

// Write writes one table to path.
func (p *ParquetWriter) Write(ctx context.Context, path string, t *Table) error {
	if len(t.Columns) == 0 {
		return fmt.Errorf("table %s has no columns", t.Name)
	}
	types := make([]string, len(t.Columns))
	defs := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		types[i] = p.columnType(t, i)
		defs[i] = queries.QuoteIdent(c.Name) + " " + types[i]
	}
	if _, err := p.conn.ExecContext(ctx, "CREATE OR REPLACE TEMP TABLE ll_out ("+strings.Join(defs, ", ")+")"); err != nil {
		return fmt.Errorf("parquet %s: %w", t.Name, err)
	}
	defer p.conn.ExecContext(context.WithoutCancel(ctx), "DROP TABLE IF EXISTS ll_out")
	// Batches of bound rows, a few thousand values per statement.
	per := max(1, 2000/len(t.Columns))
	ph := "(" + strings.TrimSuffix(strings.Repeat("?, ", len(t.Columns)), ", ") + ")"
	for start := 0; start < len(t.Rows); start += per {
		end := min(start+per, len(t.Rows))
		args := make([]any, 0, (end-start)*len(t.Columns))
		phs := make([]string, 0, end-start)
		for _, r := range t.Rows[start:end] {
			for i := range t.Columns {
				args = append(args, bindValue(r[i], types[i]))
			}
			phs = append(phs, ph)
		}
		if _, err := p.conn.ExecContext(ctx, "INSERT INTO ll_out VALUES "+strings.Join(phs, ", "), args...); err != nil {
			return fmt.Errorf("parquet %s: %w", t.Name, err)
		}
	}
	if _, err := p.conn.ExecContext(ctx, "COPY (SELECT * FROM ll_out) TO "+queries.QuoteString(path)+" (FORMAT parquet, COMPRESSION zstd)"); err != nil {
		return fmt.Errorf("parquet %s: %w", t.Name, err)
	}
	return nil
}
