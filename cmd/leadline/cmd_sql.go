package main

import (
	"context"
	"database/sql"
	"fmt"
	"regexp"
	"strings"

	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/queries"
	"github.com/spf13/pflag"
)

var describeRE = regexp.MustCompile(`(?i)^\s*(describe|show)\s+("?)([A-Za-z_][A-Za-z0-9_]*)("?)\s*;?\s*$`)

func init() {
	register(&command{
		name:    "sql",
		summary: "run a read-only SELECT on the workspace",
		usage: `Usage: leadline sql [options] "SELECT ..."

Runs one SELECT over the workspace's tables (ledger, files, rejects, loads,
runs, meta) and prints the result. The workspace is opened read-only and the
statement is checked first: anything that would write, attach, copy,
install, change settings or read files outside the workspace is refused.
"DESCRIBE table" lists a table's columns.

Examples:
  leadline sql "SELECT entity, count(*), sum(amount) FROM ledger GROUP BY ALL ORDER BY 1"
  leadline sql "SELECT * FROM rejects ORDER BY file_id, line" --format csv > rejects.csv
  leadline sql "DESCRIBE ledger"`,
		flags: thin(sqlFlags, runSQL),
	})
}

// sqlOptions are what sql's flags and argument ask for.
type sqlOptions struct {
	db     dbFlags
	format string
	limit  int
	query  string
}

// sqlFlags registers sql's flags; the function it returns checks them and
// takes the query from the one argument.
func sqlFlags(fs *pflag.FlagSet) func(args []string) (sqlOptions, error) {
	var o sqlOptions
	var f formatFlag
	o.db.add(fs)
	f.add(fs)
	fs.IntVar(&o.limit, "limit", 1000, "most rows to print in text format (0 = all; csv and json print all)")
	return func(args []string) (sqlOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) != 1 {
			return o, fmt.Errorf("give the query as one argument, in quotes")
		}
		o.query = args[0]
		o.format = f.value
		return o, nil
	}
}

// runSQL checks the query with the guard, runs it read-only and prints
// the result; DESCRIBE lists a table's columns.
func runSQL(ctx context.Context, e *env, o sqlOptions) error {
	q := o.query
	ws, err := e.openWorkspace(ctx, o.db, true)
	if err != nil {
		return err
	}
	defer ws.Close()
	if m := describeRE.FindStringSubmatch(q); m != nil {
		q = queries.Render("describe_table", nil)
		t, err := runQuery(ctx, ws.Conn, q, 0, strings.ToLower(m[3]))
		if err != nil {
			return err
		}
		if len(t.Rows) == 0 {
			return fmt.Errorf("no table %q in the workspace", m[3])
		}
		return writeTable(e.stdout, o.format, t)
	}
	if err := sqlguard.CheckSelect(ctx, ws.Conn, q); err != nil {
		return &exitError{code: 2, err: fmt.Errorf("refused: %w", err)}
	}
	lim := o.limit
	if o.format != "text" {
		lim = 0
	}
	t, err := runQuery(ctx, ws.Conn, q, lim)
	if err != nil {
		return err
	}
	if err := writeTable(e.stdout, o.format, t); err != nil {
		return err
	}
	if o.format == "text" && lim > 0 && len(t.Rows) == lim {
		fmt.Fprintf(e.stderr, "(first %d rows; --limit 0 for all, or --format csv)\n", lim)
	}
	return nil
}

// runQuery runs a checked query and reads at most limit rows (0 = all).
func runQuery(ctx context.Context, conn *sql.Conn, q string, limit int, args ...any) (*tabular.Table, error) {
	rows, err := conn.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("%s", strings.TrimSpace(err.Error()))
	}
	t, _, err := tabular.FromRows(rows, limit)
	return t, err
}
