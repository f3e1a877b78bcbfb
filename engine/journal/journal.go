// Package journal runs the integrity checks of journal-entry data that
// belong to the completeness summary of every load: documents whose lines
// do not sum to zero (per entity and document, and per currency when the
// ledger has one), postings dated outside the declared period, and line
// keys (entity, doc_id, line_id) that appear more than once. Each check is
// one listing statement in queries/journal.sql: its count, its first rows
// and the command that lists them all come from that one statement.
//
// It owns the journal checks of every load: unbalanced documents, postings
// outside the period (and the period's grammar) and repeated line keys.
package journal

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Check names.
const (
	Unbalanced    = "unbalanced_documents"
	OutOfPeriod   = "out_of_period"
	DuplicateKeys = "duplicate_line_keys"
)

// Statuses of a check.
const (
	StatusOK      = "ok"           // nothing found
	StatusFound   = "found"        // something to look at
	StatusNotRun  = "not possible" // a column the check needs is not mapped, or no period
	DefaultListed = 5
	periodMetaKey = "period"
)

// Check is one integrity check's outcome.
type Check struct {
	Name   string `json:"name"`
	Title  string `json:"title"`
	Status string `json:"status"`
	Reason string `json:"reason,omitempty"` // why the check was not possible
	// Count is what was found (documents, postings, line keys); Rows the
	// ledger rows behind them.
	Count   int64    `json:"count"`
	Unit    string   `json:"unit"`
	Rows    int64    `json:"rows"`
	Columns []string `json:"columns,omitempty"`
	First   [][]any  `json:"first,omitempty"` // the first few, in the listing's order
	Command string   `json:"command,omitempty"`
}

// Summary is every check, in a fixed order.
type Summary struct {
	Period string  `json:"period,omitempty"` // FROM..TO, "" when none was declared
	Checks []Check `json:"checks"`
}

// Options choose the period and how many of each finding to list.
type Options struct {
	Period *Period
	Listed int // first rows kept per check (DefaultListed when 0)
}

// Run runs every check on the workspace's ledger.
func Run(ctx context.Context, ws *workspace.Workspace, o Options) (*Summary, error) {
	if o.Listed <= 0 {
		o.Listed = DefaultListed
	}
	s := &Summary{}
	if o.Period != nil {
		s.Period = o.Period.String()
	}
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return nil, err
	}
	if len(cols) == 0 {
		return s, nil
	}
	hasCurrency := false
	for _, c := range cols {
		if strings.EqualFold(c.Name, "currency") {
			hasCurrency = true
		}
	}
	currencyCount, currencyKey := "0", ""
	if hasCurrency {
		currencyCount, currencyKey = "count(currency)", ", currency"
	}
	var total, entity, doc, line, posted, currency int64
	if err := ws.Conn.QueryRowContext(ctx, queries.Render("journal_mapped", map[string]string{"currency_count": currencyCount})).Scan(&total, &entity, &doc, &line, &posted, &currency); err != nil {
		return nil, fmt.Errorf("journal checks: %w", err)
	}
	notMapped := func(col, what string) string {
		return fmt.Sprintf("no %s in the ledger (%s is not mapped): load with --map %s=COLUMN", what, col, col)
	}

	defer ws.Step("journal checks")()
	// Documents that do not balance.
	ws.Step("journal checks: documents that do not balance")
	c := Check{Name: Unbalanced, Title: "Documents whose amounts do not sum to zero (per entity and document" + map[bool]string{true: " and currency)", false: ")"}[hasCurrency], Unit: "documents"}
	if doc == 0 {
		c.Status, c.Reason = StatusNotRun, notMapped("doc_id", "document numbers")
	} else {
		q := queries.Render("journal_unbalanced", map[string]string{"currency_key": currencyKey})
		if err := run(ctx, ws, &c, q, "lines", o.Listed); err != nil {
			return nil, err
		}
	}
	s.Checks = append(s.Checks, c)

	// Postings outside the period.
	ws.Step("journal checks: postings outside the period")
	c = Check{Name: OutOfPeriod, Title: "Postings dated outside the declared period", Unit: "postings"}
	switch {
	case posted == 0:
		c.Status, c.Reason = StatusNotRun, notMapped("posted", "posting dates")
	case o.Period == nil:
		c.Status, c.Reason = StatusNotRun, "no period declared: give --period 2025-01-01..2025-12-31 (load) or period = \"2025-01-01..2025-12-31\" under [pack]"
	default:
		c.Title += " (" + s.Period + ")"
		q := queries.Render("journal_out_of_period", map[string]string{
			"period_from": "DATE '" + o.Period.From.Format("2006-01-02") + "'",
			"period_to":   "DATE '" + o.Period.To.Format("2006-01-02") + "'",
		})
		if err := run(ctx, ws, &c, q, "1", o.Listed); err != nil {
			return nil, err
		}
	}
	s.Checks = append(s.Checks, c)

	// Duplicate line keys.
	ws.Step("journal checks: repeated line keys")
	c = Check{Name: DuplicateKeys, Title: "Line keys (entity, doc_id, line_id) that appear more than once", Unit: "line keys"}
	switch {
	case doc == 0:
		c.Status, c.Reason = StatusNotRun, notMapped("doc_id", "document numbers")
	case line == 0:
		c.Status, c.Reason = StatusNotRun, notMapped("line_id", "line numbers")
	default:
		if err := run(ctx, ws, &c, queries.Get("journal_duplicate_keys"), "copies", o.Listed); err != nil {
			return nil, err
		}
	}
	s.Checks = append(s.Checks, c)
	return s, nil
}

// run counts a listing, keeps its first rows and writes the command that
// lists them all.
func run(ctx context.Context, ws *workspace.Workspace, c *Check, listing, weight string, listed int) error {
	q := queries.Render("journal_count", map[string]string{"query": listing, "weight": weight})
	if err := ws.Conn.QueryRowContext(ctx, q).Scan(&c.Count, &c.Rows); err != nil {
		return fmt.Errorf("%s: %w", c.Name, err)
	}
	c.Status = StatusOK
	if c.Count == 0 {
		return nil
	}
	c.Status = StatusFound
	rows, err := ws.Conn.QueryContext(ctx, queries.Render("journal_first", map[string]string{"query": listing}), listed)
	if err != nil {
		return fmt.Errorf("%s: %w", c.Name, err)
	}
	t, _, err := tabular.FromRows(rows, listed)
	if err != nil {
		return fmt.Errorf("%s: %w", c.Name, err)
	}
	c.Columns = t.Columns
	for _, r := range t.Rows {
		row := make([]any, len(r))
		for i, v := range r {
			row[i] = tabular.Format(v)
		}
		c.First = append(c.First, row)
	}
	c.Command = "leadline sql --db " + shellQuote(ws.Path) + " " + shellQuote(strings.Join(strings.Fields(listing), " "))
	return nil
}

// shellQuote quotes s for a POSIX shell when it needs quoting.
func shellQuote(s string) string {
	if s != "" && !strings.ContainsAny(s, " \t\n'\"\\$`*?[]{}()<>|&;#~!") {
		return s
	}
	if !strings.ContainsAny(s, "\"$`\\!") {
		return `"` + s + `"`
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// Text is one line per check for the terminal and the summaries.
func (c Check) Text() string { return c.Title + ": " + c.Outcome() }

// Outcome is what the check found, without its title.
func (c Check) Outcome() string {
	switch c.Status {
	case StatusNotRun:
		return "not possible: " + c.Reason
	case StatusOK:
		return "none"
	}
	return fmt.Sprintf("%d %s (%d ledger rows)", c.Count, c.Unit, c.Rows)
}

// FirstTable is the check's first rows as a table.
func (c Check) FirstTable() *tabular.Table {
	t := &tabular.Table{Name: c.Name, Columns: c.Columns}
	t.Rows = c.First
	return t
}

// SavePeriod records the period declared at load, for the checks of later
// commands (report, reconcile).
func SavePeriod(ctx context.Context, ws *workspace.Workspace, p Period) error {
	return ws.SetMeta(ctx, periodMetaKey, p.String())
}

// SavedPeriod is the period last declared at load, or nil.
func SavedPeriod(ctx context.Context, ws *workspace.Workspace) (*Period, error) {
	v, ok, err := ws.Meta(ctx, periodMetaKey)
	if err != nil || !ok {
		return nil, err
	}
	p, err := ParsePeriod(v)
	if err != nil {
		return nil, err
	}
	return &p, nil
}
