package ranges

import (
	"context"
	"database/sql"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Segment is one --by column: a column of the ledger (a canonical column
// such as entity, account, counterparty, user_id or source, or any original
// column) or month, the year and month of the posted date (YYYY-MM), unless
// the ledger has a column of its own named month.
//
// A segment's value is the column's text; blank values (NULL, empty or
// white space only) form one segment, shown as blank. This is the same
// reading as the drill-down's --segment COLUMN=VALUE, so that a segment
// found here drills down to exactly its records.
type Segment struct {
	Name string `json:"name"`
	expr string // SQL: the segment value as VARCHAR, NULL for blanks
}

// ResolveSegments checks the --by columns against the ledger. Names are
// matched without regard to case and may be given once each.
func ResolveSegments(ctx context.Context, ws *workspace.Workspace, by []string) ([]Segment, error) {
	if len(by) == 0 {
		return nil, nil
	}
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return nil, err
	}
	var out []Segment
	seen := map[string]bool{}
	for _, raw := range by {
		name := strings.TrimSpace(raw)
		if name == "" {
			return nil, fmt.Errorf("--by: give a column name, e.g. --by entity or --by month")
		}
		if seen[strings.ToLower(name)] {
			return nil, fmt.Errorf("--by %s is given twice", name)
		}
		seen[strings.ToLower(name)] = true
		if strings.EqualFold(name, "amount") {
			return nil, fmt.Errorf("--by amount: segments are groups of records (entity, account, user_id, month...); the amounts are what is tested")
		}
		col, typ, ok := findColumn(cols, name)
		if !ok && strings.EqualFold(name, "month") {
			out = append(out, Segment{Name: "month", expr: "strftime(posted, '%Y-%m')"})
			continue
		}
		if _, err := sqlguard.Column(ctx, ws.Conn, name); err != nil || !ok {
			if err == nil {
				err = fmt.Errorf("no column %q in the ledger", name)
			}
			return nil, fmt.Errorf("--by %s: %w (segments: entity, account, counterparty, user_id, source, month, or any original column)", name, err)
		}
		text := queries.QuoteIdent(col)
		if !strings.EqualFold(typ, "VARCHAR") {
			text = "CAST(" + text + " AS VARCHAR)"
		}
		out = append(out, Segment{
			Name: col,
			expr: "CASE WHEN nullif(trim(" + text + "), '') IS NULL THEN NULL ELSE " + text + " END",
		})
	}
	return out, nil
}

func findColumn(cols []workspace.Column, name string) (string, string, bool) {
	for _, c := range cols {
		if strings.EqualFold(c.Name, name) {
			return c.Name, c.Type, true
		}
	}
	return "", "", false
}

// Key is the value of each --by column for one segment, in the order of
// the columns; an invalid NullString is a blank value.
type Key []sql.NullString

// Map returns the key as column name -> value (nil for blank), for JSON.
func (k Key) Map(segs []Segment) map[string]*string {
	if len(segs) == 0 || k == nil {
		return nil
	}
	m := make(map[string]*string, len(segs))
	for i, s := range segs {
		if i < len(k) && k[i].Valid {
			v := k[i].String
			m[s.Name] = &v
		} else {
			m[s.Name] = nil
		}
	}
	return m
}

// Label is the key as text for tables: the values joined with " / ",
// blanks shown as "(blank)".
func (k Key) Label() string {
	parts := make([]string, len(k))
	for i, v := range k {
		parts[i] = valueText(v)
	}
	return strings.Join(parts, " / ")
}

func valueText(v sql.NullString) string {
	if !v.Valid {
		return "(blank)"
	}
	return v.String
}

// Less orders keys by their values, blanks first.
func (k Key) Less(o Key) bool {
	for i := range min(len(k), len(o)) {
		a, b := k[i], o[i]
		if a.Valid != b.Valid {
			return !a.Valid
		}
		if a.String != b.String {
			return a.String < b.String
		}
	}
	return len(k) < len(o)
}

// DrillSegments returns the drill-down --segment arguments of a key:
// COLUMN=VALUE, COLUMN= for a blank value.
func (k Key) DrillSegments(segs []Segment) []string {
	var out []string
	for i, s := range segs {
		if i < len(k) {
			v := ""
			if k[i].Valid {
				v = k[i].String
			}
			out = append(out, s.Name+"="+v)
		}
	}
	return out
}
