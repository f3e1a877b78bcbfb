// Package tabular prints result tables: aligned text for the terminal, CSV
// and JSON for scripts. Every command's table output goes through it so
// that the formats stay alike.
//
// It owns the text, CSV and JSON tables printed on the terminal.
package tabular

import (
	"database/sql"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"math/big"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/leadline/leadline/engine/jsondoc"
)

// Table is a named grid of values.
type Table struct {
	Name    string   `json:"name,omitempty"`
	Columns []string `json:"columns"`
	Rows    [][]any  `json:"rows"`
}

// Add appends a row.
func (t *Table) Add(vals ...any) { t.Rows = append(t.Rows, vals) }

// Format renders one value as text.
func Format(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return x
	case []byte:
		return string(x)
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return strconv.FormatFloat(x, 'f', -1, 64)
		}
		return strconv.FormatFloat(x, 'g', 10, 64)
	case float32:
		return strconv.FormatFloat(float64(x), 'g', 7, 32)
	case time.Time:
		if x.Hour() == 0 && x.Minute() == 0 && x.Second() == 0 && x.Nanosecond() == 0 {
			return x.Format("2006-01-02")
		}
		return x.Format("2006-01-02 15:04:05")
	case *big.Int:
		return x.String()
	case fmt.Stringer:
		return x.String()
	}
	return fmt.Sprint(v)
}

// WriteText writes the table aligned in columns, numbers right-aligned.
func (t *Table) WriteText(w io.Writer, maxWidth int) error {
	// tabwriter cannot mix alignments per column; do it by hand.
	cells := make([][]string, len(t.Rows)+1)
	cells[0] = t.Columns
	numeric := make([]bool, len(t.Columns))
	for i := range numeric {
		numeric[i] = true
	}
	for r, row := range t.Rows {
		cells[r+1] = make([]string, len(t.Columns))
		for c := range t.Columns {
			var v any
			if c < len(row) {
				v = row[c]
			}
			s := Format(v)
			if maxWidth > 0 && utf8.RuneCountInString(s) > maxWidth {
				s = string([]rune(s)[:maxWidth-1]) + "…"
			}
			s = strings.NewReplacer("\n", " ", "\r", " ", "\t", " ").Replace(s)
			cells[r+1][c] = s
			if s != "" && !looksNumeric(s) {
				numeric[c] = false
			}
		}
	}
	widths := make([]int, len(t.Columns))
	for _, row := range cells {
		for c, s := range row {
			if n := utf8.RuneCountInString(s); n > widths[c] {
				widths[c] = n
			}
		}
	}
	var b strings.Builder
	for r, row := range cells {
		b.Reset()
		for c, s := range row {
			pad := widths[c] - utf8.RuneCountInString(s)
			if c > 0 {
				b.WriteString("  ")
			}
			if numeric[c] && r > 0 {
				b.WriteString(strings.Repeat(" ", pad))
				b.WriteString(s)
			} else {
				b.WriteString(s)
				if c < len(row)-1 {
					b.WriteString(strings.Repeat(" ", pad))
				}
			}
		}
		if _, err := io.WriteString(w, strings.TrimRight(b.String(), " ")+"\n"); err != nil {
			return err
		}
		if r == 0 {
			b.Reset()
			for c := range row {
				if c > 0 {
					b.WriteString("  ")
				}
				b.WriteString(strings.Repeat("-", widths[c]))
			}
			if _, err := io.WriteString(w, b.String()+"\n"); err != nil {
				return err
			}
		}
	}
	return nil
}

func looksNumeric(s string) bool {
	if s == "" {
		return false
	}
	_, err := strconv.ParseFloat(strings.TrimSuffix(strings.ReplaceAll(s, ",", ""), "%"), 64)
	return err == nil
}

// WriteCSV writes the table as CSV with a header row.
func (t *Table) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(t.Columns); err != nil {
		return err
	}
	rec := make([]string, len(t.Columns))
	for _, row := range t.Rows {
		for c := range t.Columns {
			if c < len(row) {
				rec[c] = Format(row[c])
			} else {
				rec[c] = ""
			}
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// Records returns the rows as JSON-ready objects keyed by column name.
func (t *Table) Records() []map[string]any {
	out := make([]map[string]any, 0, len(t.Rows))
	for _, row := range t.Rows {
		m := make(map[string]any, len(t.Columns))
		for c, name := range t.Columns {
			if c < len(row) {
				m[name] = jsonValue(row[c])
			}
		}
		out = append(out, m)
	}
	return out
}

func jsonValue(v any) any {
	switch x := v.(type) {
	case []byte:
		return string(x)
	case time.Time:
		return Format(x)
	case *big.Int:
		return x.String()
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil
		}
	case fmt.Stringer:
		return x.String()
	}
	return v
}

// WriteJSON writes {"columns": [...], "rows": [{col: value}...]}.
func (t *Table) WriteJSON(w io.Writer) error {
	return jsondoc.Write(w, map[string]any{"columns": t.Columns, "rows": t.Records()})
}

// FromRows reads a query result into a table, holding at most limit rows
// (0 = all). It reports whether more rows were left unread.
func FromRows(rows *sql.Rows, limit int) (*Table, bool, error) {
	defer rows.Close()
	cols, err := rows.Columns()
	if err != nil {
		return nil, false, err
	}
	t := &Table{Columns: cols}
	more := false
	for rows.Next() {
		if limit > 0 && len(t.Rows) >= limit {
			more = true
			break
		}
		vals := make([]any, len(cols))
		ptrs := make([]any, len(cols))
		for i := range vals {
			ptrs[i] = &vals[i]
		}
		if err := rows.Scan(ptrs...); err != nil {
			return nil, false, err
		}
		t.Rows = append(t.Rows, vals)
	}
	return t, more, rows.Err()
}

// CheckFormat accepts the output formats every command's --format takes.
func CheckFormat(format string) error {
	switch format {
	case "text", "csv", "json":
		return nil
	}
	return fmt.Errorf("--format %q: give text, csv or json", format)
}
