package battery

import (
	"context"
	"database/sql"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Segment is one --by column: a column of the ledger (entity, account,
// counterparty, user_id, source, or any original column) or month, the year
// and month of the posted date (YYYY-MM), unless the ledger has a column of
// its own named month.
//
// A segment's value is the column's text; blank values (NULL, empty or
// white space only) form one segment, shown as "(blank)". This is the
// reading of the drill-down's --segment COLUMN=VALUE and of the limits and
// ranges commands, so a segment found here drills down to its records.
type Segment struct {
	Name string `json:"name"`
	// raw is what the scan groups on: the column as stored, cheap to hash
	// (no per-row string work). normal turns a raw value into the
	// segment's value; it runs over the groups, not the rows.
	raw, normal string
	// row is normal applied to the column, for the queries that need the
	// segment per row (the second-order test's partitions).
	row string
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
		var col, typ string
		for _, c := range cols {
			if strings.EqualFold(c.Name, name) {
				col, typ = c.Name, c.Type
			}
		}
		if col == "" && strings.EqualFold(name, "month") {
			out = append(out, Segment{
				Name:   "month",
				raw:    "date_trunc('month', posted)",
				normal: "strftime(%s, '%%Y-%%m')",
				row:    "strftime(posted, '%Y-%m')",
			})
			continue
		}
		if _, err := sqlguard.Column(ctx, ws.Conn, name); err != nil || col == "" {
			if err == nil {
				err = fmt.Errorf("no column %q in the ledger", name)
			}
			return nil, fmt.Errorf("--by %s: %w (segments: entity, account, counterparty, user_id, source, month, or any original column)", name, err)
		}
		q := queries.QuoteIdent(col)
		s := Segment{Name: col, raw: q}
		if strings.EqualFold(typ, "VARCHAR") {
			s.normal = "CASE WHEN nullif(trim(%[1]s), '') IS NULL THEN NULL ELSE %[1]s END"
		} else {
			s.normal = "CAST(%s AS VARCHAR)"
		}
		s.row = fmt.Sprintf(s.normal, q)
		out = append(out, s)
	}
	return out, nil
}

// Key is the value of each segment column for one segment, in the order
// of the --by columns; an invalid NullString is a blank value. The whole
// selection has the empty key.
type Key []sql.NullString

// Label is the key as text for tables: the values joined with " / ",
// blanks shown as "(blank)"; "" for the whole selection.
func (k Key) Label() string {
	parts := make([]string, len(k))
	for i, v := range k {
		if v.Valid {
			parts[i] = v.String
		} else {
			parts[i] = "(blank)"
		}
	}
	return strings.Join(parts, " / ")
}

// Values returns the key as column name -> value (nil for blank), for JSON.
func (k Key) Values(segs []Segment) map[string]*string {
	if len(k) == 0 {
		return nil
	}
	m := make(map[string]*string, len(k))
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

// String is a map key for the segment (distinct for distinct keys).
func (k Key) String() string {
	var b strings.Builder
	for _, v := range k {
		if v.Valid {
			b.WriteByte('v')
			fmt.Fprintf(&b, "%d:", len(v.String))
			b.WriteString(v.String)
		} else {
			b.WriteByte('n')
		}
	}
	return b.String()
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
