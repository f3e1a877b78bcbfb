// Package segment reads --by columns: which ledger column (or the year,
// quarter or month of the posted date) splits the records into segments, how a segment's value
// is written in SQL, and the key that names one segment. The battery, the
// limit probe and the range bands all segment this way, and the drill-down's
// --segment COLUMN=VALUE reads values the same way, so a segment found by
// any of them drills down to exactly its records.
//
// It owns segments: which column splits the records, the SQL of a segment's
// value and the key naming one segment.
package segment

import (
	"context"
	"database/sql"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/field"
	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Segment is one --by column: a column of the ledger (entity, account,
// counterparty, user_id, source, or any original column) or a period of
// the posted date: year (YYYY), quarter (YYYY-Qn) or month (YYYY-MM),
// unless the ledger has a column of its own of that name. A record
// without a posted date is in the blank segment of a period.
//
// A segment's value is the column's text; blank values (NULL, empty or
// white space only) form one segment, shown as "(blank)".
type Segment struct {
	Name string `json:"name"`
	// raw is the column as stored, cheap to group on (no per-row string
	// work); normal is a format turning a raw value into the segment's
	// value; row is normal applied to the column.
	raw, normal, row string
}

// Raw is SQL for the column as stored: group on it, then apply Normal to
// the groups, when the segment's value is not needed per row.
func (s Segment) Raw() string { return s.raw }

// Normal is SQL turning x, a Raw value, into the segment's value.
func (s Segment) Normal(x string) string { return fmt.Sprintf(s.normal, x) }

// Row is SQL for the segment's value of each row (VARCHAR, NULL for blank).
func (s Segment) Row() string { return s.row }

// Resolve checks the --by columns against the ledger. Names are matched
// without regard to case and may be given once each. A refusal is a
// *field.Error of the field "by".
func Resolve(ctx context.Context, ws *workspace.Workspace, by []string) ([]Segment, error) {
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
			return nil, &field.Error{Field: "by", Reason: "give a column name, e.g. entity or month"}
		}
		if seen[strings.ToLower(name)] {
			return nil, &field.Error{Field: "by", Value: name, Reason: "given twice"}
		}
		seen[strings.ToLower(name)] = true
		if strings.EqualFold(name, "amount") {
			return nil, &field.Error{Field: "by", Value: "amount", Reason: "segments are groups of records (entity, account, user_id, month...); the amounts are what is tested"}
		}
		var col, typ string
		for _, c := range cols {
			if strings.EqualFold(c.Name, name) {
				col, typ = c.Name, c.Type
			}
		}
		if d, ok := datePart(name); ok && col == "" {
			out = append(out, Segment{
				Name:   d.name,
				raw:    fmt.Sprintf("date_trunc('%s', posted)", d.name),
				normal: d.format,
				row:    fmt.Sprintf(d.format, "posted"),
			})
			continue
		}
		if _, err := sqlguard.Column(ctx, ws.Conn, name); err != nil || col == "" {
			if err == nil {
				err = fmt.Errorf("no column %q in the ledger", name)
			}
			return nil, &field.Error{Field: "by", Value: name, Reason: "{0} (segments: entity, account, counterparty, user_id, source, year, quarter, month, or any original column)", Args: []any{err}}
		}
		q := queries.QuoteIdent(col)
		s := Segment{Name: col, raw: q}
		if strings.EqualFold(typ, "VARCHAR") {
			s.normal = "CASE WHEN nullif(trim(%[1]s), '') IS NULL THEN NULL ELSE %[1]s END"
		} else {
			// Another type's text is never blank: NULL stays NULL.
			s.normal = "CAST(%s AS VARCHAR)"
		}
		s.row = s.Normal(q)
		out = append(out, s)
	}
	return out, nil
}

// Key is the value of each --by column for one segment, in the order of
// the columns; an invalid NullString is a blank value. The whole
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

// Values returns the key as column name -> value (nil for blank), for
// JSON; nil for the whole selection.
func (k Key) Values(segs []Segment) map[string]*string {
	if len(k) == 0 || len(segs) == 0 {
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
