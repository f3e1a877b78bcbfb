// Package output writes the results of a run into an output folder: every
// result table as CSV and Parquet, one XLSX workbook (a summary sheet first,
// then a sheet per table), one JSON document of all results and a manifest
// that records what was run on what.
//
// The writers take a *Run, which any part of leadline can build: a pack run
// builds one from its steps. Other artefacts (the HTML report) join through
// the Writer interface and Register, and can add to the workbook through
// RegisterXLSXHook; see write.go.
//
// It owns the output folder of a run: its tables in every format, the
// workbook, the results document and the manifest.
package output

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"math/big"
	"regexp"
	"strconv"
	"strings"
	"time"

	duckdb "github.com/duckdb/duckdb-go/v2"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/queries"
)

// Kind says what a column holds, which decides its XLSX number format and
// its Parquet type.
type Kind string

const (
	Text       Kind = "text"       // VARCHAR; plain text
	Count      Kind = "count"      // BIGINT; #,##0
	Money      Kind = "money"      // exact DECIMAL, written as decimal text; #,##0.00 (at the values' scale)
	Number     Kind = "number"     // DOUBLE; a statistic (Z, chi-square, ratio); 0.0000
	Proportion Kind = "proportion" // DOUBLE in [0, 1]; 0.0000
	Percent    Kind = "percent"    // DOUBLE in [0, 1]; shown as 0.00%
	Date       Kind = "date"       // DATE; yyyy-mm-dd
	Timestamp  Kind = "timestamp"  // TIMESTAMP; yyyy-mm-dd hh:mm:ss
	Bool       Kind = "bool"       // BOOLEAN
)

// Kinds lists every kind, for validation and the docs.
var Kinds = []Kind{Text, Count, Money, Number, Proportion, Percent, Date, Timestamp, Bool}

// ParseKind checks a kind name.
func ParseKind(s string) (Kind, error) {
	for _, k := range Kinds {
		if string(k) == strings.ToLower(strings.TrimSpace(s)) {
			return k, nil
		}
	}
	names := make([]string, len(Kinds))
	for i, k := range Kinds {
		names[i] = string(k)
	}
	return "", fmt.Errorf("unknown column format %q: give one of %s", s, strings.Join(names, ", "))
}

// Column is one column of a result table.
type Column struct {
	Name string `json:"name"`
	Kind Kind   `json:"kind"`
}

// Table is one result table. Rows hold normalised values only: nil,
// string, int64, float64, bool, Decimal and time.Time (see Normalize).
type Table struct {
	Name      string   `json:"name"`    // lower-case file-safe id: file tables/<name>.csv, sheet name
	Title     string   `json:"title"`   // a heading in words
	Section   string   `json:"section"` // completeness, battery, limits, ranges, duplicates, extract, check...
	Note      string   `json:"note,omitempty"`
	Columns   []Column `json:"columns"`
	Rows      [][]any  `json:"rows"`
	RowsTotal int64    `json:"rows_total"` // rows the step produced; more than len(Rows) when truncated
	Truncated bool     `json:"truncated"`

	// Complete says that tables/NAME.csv and .parquet hold all RowsTotal
	// rows even when Rows holds only the first of them (a table with a
	// Source).
	Complete bool `json:"complete,omitempty"`
	// SheetRows is how many rows the workbook's sheet holds, and CellsCut
	// how many of its text cells were cut at the cell limit (32,767
	// characters); WriteXLSX fills both in.
	SheetRows int64 `json:"sheet_rows,omitempty"`
	CellsCut  int64 `json:"cells_cut,omitempty"`

	// Source, when set, yields all the table's rows; Rows then holds the
	// first of them only (for results.json and the report). The CSV,
	// Parquet and workbook writers read the source.
	Source *Source `json:"-"`
	// KeepFormulas writes text cells to CSV as they are, without
	// neutralising those that a spreadsheet would read as a formula.
	KeepFormulas bool `json:"-"`
}

// Querier runs SQL: a *sql.Conn or *sql.DB.
type Querier interface {
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
	ExecContext(ctx context.Context, query string, args ...any) (sql.Result, error)
}

// Source is a query that returns every row of a table, in order, with the
// table's columns. DB must stay open until the output folder is written.
type Source struct {
	DB   Querier
	SQL  string // one SELECT, without a trailing semicolon
	Args []any
}

// from returns the source as a subquery that other clauses can wrap.
func (s *Source) query() string {
	return strings.TrimSuffix(strings.TrimSpace(s.SQL), ";")
}

// eachRow calls fn with every row of the table (normalised), at most limit
// rows when limit > 0: the source's rows when it has one, else Rows.
func (t *Table) eachRow(ctx context.Context, limit int64, fn func(row []any) error) error {
	if t.Source == nil {
		for i, r := range t.Rows {
			if limit > 0 && int64(i) >= limit {
				break
			}
			if err := fn(r); err != nil {
				return err
			}
		}
		return nil
	}
	args := append([]any(nil), t.Source.Args...)
	lim := ""
	if limit > 0 {
		lim = "LIMIT ?"
		args = append(args, limit)
	}
	q := queries.Render("output_source_rows", map[string]string{"query": t.Source.query(), "limit": lim})
	rows, err := t.Source.DB.QueryContext(ctx, q, args...)
	if err != nil {
		return err
	}
	defer rows.Close()
	cols, err := rows.Columns()
	if err != nil {
		return err
	}
	if len(cols) != len(t.Columns) {
		return fmt.Errorf("table %s: the source returns %d columns, the table has %d", t.Name, len(cols), len(t.Columns))
	}
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	row := make([]any, len(cols))
	for rows.Next() {
		if err := rows.Scan(ptrs...); err != nil {
			return err
		}
		for i, v := range vals {
			row[i] = Normalize(v)
			if t.Columns[i].Kind == Money {
				if s, ok := row[i].(string); ok {
					if d, ok := NewDecimal(s); ok {
						row[i] = d
					}
				}
			}
		}
		if err := fn(row); err != nil {
			return err
		}
	}
	return rows.Err()
}

// Decimal is an exact decimal number held as its text ("1234.50"), so that
// no writer turns money into a binary float. JSON writes it as a string.
type Decimal struct {
	Text  string
	Scale int
}

// MarshalJSON writes the decimal as a JSON string.
func (d Decimal) MarshalJSON() ([]byte, error) { return []byte(strconv.Quote(d.Text)), nil }

// String returns the decimal text.
func (d Decimal) String() string { return d.Text }

// Float64 returns the nearest float (for spreadsheet cells).
func (d Decimal) Float64() float64 {
	f, _ := strconv.ParseFloat(d.Text, 64)
	return f
}

// Digits is the number of significant decimal digits written.
func (d Decimal) Digits() int {
	n := 0
	for _, c := range strings.TrimLeft(strings.TrimPrefix(d.Text, "-"), "0.") {
		if c >= '0' && c <= '9' {
			n++
		}
	}
	return n
}

// NewDecimal makes a Decimal from decimal text such as "-12.50". It
// reports false for text that is not a plain decimal.
func NewDecimal(text string) (Decimal, bool) {
	if !decimalRE.MatchString(text) {
		return Decimal{}, false
	}
	scale := 0
	if i := strings.IndexByte(text, '.'); i >= 0 {
		scale = len(text) - i - 1
	}
	return Decimal{Text: text, Scale: scale}, true
}

var decimalRE = regexp.MustCompile(`^-?\d+(\.\d+)?$`)

// DecimalFromDuckDB writes a DuckDB DECIMAL with all its places ("5.00").
func DecimalFromDuckDB(d duckdb.Decimal) Decimal {
	if d.Value == nil {
		return Decimal{}
	}
	scale := int(d.Scale)
	neg := d.Value.Sign() < 0
	s := new(big.Int).Abs(d.Value).String()
	if scale > 0 {
		if len(s) <= scale {
			s = strings.Repeat("0", scale-len(s)+1) + s
		}
		s = s[:len(s)-scale] + "." + s[len(s)-scale:]
	}
	if neg {
		s = "-" + s
	}
	return Decimal{Text: s, Scale: scale}
}

// Normalize turns a value read from DuckDB or built in Go into one of the
// types the writers know: nil, string, int64, float64, bool, Decimal,
// time.Time. Anything else becomes its text.
func Normalize(v any) any {
	switch x := v.(type) {
	case nil:
		return nil
	case string, int64, bool, Decimal:
		return x
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil
		}
		return x
	case float32:
		return Normalize(float64(x))
	case int:
		return int64(x)
	case int8:
		return int64(x)
	case int16:
		return int64(x)
	case int32:
		return int64(x)
	case uint8:
		return int64(x)
	case uint16:
		return int64(x)
	case uint32:
		return int64(x)
	case uint64:
		if x <= math.MaxInt64 {
			return int64(x)
		}
		return strconv.FormatUint(x, 10)
	case uint:
		return Normalize(uint64(x))
	case *big.Int:
		if x == nil {
			return nil
		}
		if x.IsInt64() {
			return x.Int64()
		}
		return Decimal{Text: x.String()}
	case duckdb.Decimal:
		return DecimalFromDuckDB(x)
	case *duckdb.Decimal:
		if x == nil {
			return nil
		}
		return DecimalFromDuckDB(*x)
	case time.Time:
		return x.UTC()
	case []byte:
		return string(x)
	case fmt.Stringer:
		return x.String()
	}
	return fmt.Sprint(v)
}

// FormatValue writes a normalised value as text, the way CSV holds it:
// decimals with all their places, floats in the shortest form that reads
// back exactly, dates as YYYY-MM-DD.
func FormatValue(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return x
	case int64:
		return strconv.FormatInt(x, 10)
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case bool:
		return strconv.FormatBool(x)
	case Decimal:
		return x.Text
	case time.Time:
		if x.Hour() == 0 && x.Minute() == 0 && x.Second() == 0 && x.Nanosecond() == 0 {
			return x.Format("2006-01-02")
		}
		return x.Format("2006-01-02 15:04:05.999999")
	}
	return fmt.Sprint(v)
}

// Infer returns the kind a value suggests.
func Infer(v any) Kind {
	switch x := v.(type) {
	case int64:
		return Count
	case float64:
		return Number
	case bool:
		return Bool
	case Decimal:
		return Money
	case time.Time:
		if x.Hour() == 0 && x.Minute() == 0 && x.Second() == 0 && x.Nanosecond() == 0 {
			return Date
		}
		return Timestamp
	}
	return Text
}

var nameRE = regexp.MustCompile(`[^a-z0-9_]+`)

// SafeName turns a label into a lower-case file-safe table name.
func SafeName(s string) string {
	s = nameRE.ReplaceAllString(strings.ToLower(strings.TrimSpace(s)), "_")
	s = strings.Trim(s, "_")
	if s == "" {
		s = "table"
	}
	return s
}

// NewTable builds a table from column names and rows of any values:
// values are normalised and each column's kind is taken from kinds when
// given there (by column name), or else from its first non-empty value.
// Duplicate column names get a suffix (_2, _3...).
func NewTable(name, title, section string, columns []string, rows [][]any, kinds map[string]Kind) *Table {
	t := &Table{Name: SafeName(name), Title: title, Section: section}
	seen := map[string]int{}
	for _, c := range columns {
		n := c
		if k := seen[strings.ToLower(c)]; k > 0 {
			n = fmt.Sprintf("%s_%d", c, k+1)
		}
		seen[strings.ToLower(c)]++
		t.Columns = append(t.Columns, Column{Name: n})
	}
	t.Rows = make([][]any, 0, len(rows))
	for _, r := range rows {
		row := make([]any, len(columns))
		for i := range row {
			if i < len(r) {
				row[i] = Normalize(r[i])
			}
		}
		t.Rows = append(t.Rows, row)
	}
	for i := range t.Columns {
		if k, ok := kinds[columns[i]]; ok && k != "" {
			t.Columns[i].Kind = k
			if k == Money {
				for _, r := range t.Rows {
					if s, ok := r[i].(string); ok {
						if d, ok := NewDecimal(s); ok {
							r[i] = d
						}
					}
				}
			}
			continue
		}
		t.Columns[i].Kind = Text
		for _, r := range t.Rows {
			if r[i] != nil {
				t.Columns[i].Kind = Infer(r[i])
				break
			}
		}
	}
	t.RowsTotal = int64(len(t.Rows))
	return t
}

// FromTabular converts a tabular.Table (the terminal commands' tables).
func FromTabular(tt *tabular.Table, name, title, section string, kinds map[string]Kind) *Table {
	return NewTable(name, title, section, tt.Columns, tt.Rows, kinds)
}

// moneyScale is the largest scale among a money column's values (2 when
// the column is empty).
func (t *Table) moneyScale(col int) (scale, digits int) {
	scale = -1
	for _, r := range t.Rows {
		if d, ok := r[col].(Decimal); ok {
			if d.Scale > scale {
				scale = d.Scale
			}
			if n := len(strings.TrimPrefix(d.Text, "-")); n > digits {
				digits = n
			}
		}
	}
	if scale < 0 {
		scale = 2
	}
	return scale, digits
}
