package main

import (
	"context"
	"fmt"
	"os"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/countsql"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

// countSQLOptions are what count-sql's flags ask for.
type countSQLOptions struct {
	spec countsql.Spec
	out  string // the query's file; "" for standard output
}

// countSQLFlags registers count-sql's flags; the function it returns
// checks them and turns them into the spec.
func countSQLFlags(fs *pflag.FlagSet) func(args []string) (countSQLOptions, error) {
	var o countSQLOptions
	var mapping map[string]string
	var by []string
	fs.StringVar(&o.spec.Engine, "engine", "", "engine that runs the query: duckdb, postgresql or clickhouse")
	fs.StringVar(&o.spec.Table, "table", "", "table (or view) holding the records; schema.table for a schema")
	fs.StringToStringVar(&mapping, "map", nil, "amount=COLUMN: the table's amount column")
	fs.IntVar(&o.spec.Scale, "scale", 2, "decimal places of the amount: units = amount * 10^scale")
	fs.StringSliceVar(&by, "by", nil, "segment column: NAME (the column of that name), NAME=COLUMN, or year=, quarter=, month=DATE_COLUMN for YYYY, YYYY-Qn, YYYY-MM (repeatable)")
	fs.StringVar(&o.spec.Where, "where", "", "predicate in the engine's own SQL; rows it drops are counted as filtered")
	fs.StringVar(&o.spec.Signs, "signs", population.DefaultSigns, "amounts tested: positive, negative or both")
	fs.StringVar(&o.spec.Min, "min", population.DefaultMin, "smallest |amount| tested")
	fs.StringVar(&o.spec.LastTwo, "last-two", "scale", "last two digits at the amount's scale (scale) or of its whole-currency part (units)")
	fs.BoolVar(&o.spec.LastTwoAll, "last-two-all", false, "count the last two digits of every tested amount (default: only where they are the fourth significant digit or later, e.g. 100.00 and more at scale 2, as scan does)")
	fs.StringVarP(&o.out, "output", "o", "", "write the query to this file (default: standard output)")
	return func(args []string) (countSQLOptions, error) {
		if len(args) > 0 {
			return o, fmt.Errorf("unexpected argument %q (see --help)", args[0])
		}
		for k, v := range mapping {
			if !strings.EqualFold(k, "amount") {
				return o, fmt.Errorf("--map %s=%s: only amount=COLUMN is read; segments are --by NAME=COLUMN", k, v)
			}
			o.spec.Amount = v
		}
		if o.spec.Engine == "" || o.spec.Table == "" {
			return o, fmt.Errorf("--engine and --table are required (e.g. --engine postgresql --table gl --map amount=amt)")
		}
		if o.spec.Amount == "" {
			return o, fmt.Errorf("--map amount=COLUMN: name the table's amount column")
		}
		for _, b := range by {
			name, col, ok := strings.Cut(b, "=")
			name, col = strings.TrimSpace(name), strings.TrimSpace(col)
			if !ok {
				col = name
			}
			o.spec.By = append(o.spec.By, countsql.Segment{Name: name, Column: col,
				Month:   ok && strings.EqualFold(name, "month"),
				Quarter: ok && strings.EqualFold(name, "quarter"),
				Year:    ok && strings.EqualFold(name, "year")})
		}
		return o, nil
	}
}

// runCountSQL writes the counting query of the spec.
func runCountSQL(ctx context.Context, e *env, o countSQLOptions) error {
	q, err := countsql.Query(o.spec)
	if err != nil {
		return err
	}
	if o.out != "" {
		return os.WriteFile(o.out, []byte(q), 0o644)
	}
	_, err = fmt.Fprint(e.stdout, q)
	return err
}

func init() {
	register(&command{
		name:    "count-sql",
		summary: "print the digit battery's counting query for another engine (DuckDB, PostgreSQL, ClickHouse)",
		usage: `Usage: leadline count-sql --engine ENGINE --table TABLE --map amount=COLUMN [options]

Prints the digit battery's additive counting query in the SQL of the engine
that already holds the records, so that the counting runs where the data
lives and only the counts come back: per segment, first three significant
digits and last two digits, the count and the sum of |amount| in whole
units, and the rows left out by reason (zero, other sign, below --min, NULL
amount, dropped by --where). Integer arithmetic only: the amount becomes a
whole number of units (amount * 10^scale) and its digits come from
comparisons with powers of ten, exactly as a local scan takes them.

Run the query there, write its result as CSV with a header, one file per
partition, shard or month if you like, and bring the files back:

  leadline count-sql --engine postgresql --table gl --map amount=amt -o gl.sql
  psql -At --csv -f gl.sql > gl-counts.csv
  leadline scan --counts gl-counts.csv --count-query gl.sql

ClickHouse: clickhouse client --format CSVWithNames --query "$(cat gl.sql)".
DuckDB: COPY (query) TO 'counts.csv' (HEADER).

The amount column must be an exact decimal (or integer) type with at most
--scale decimal places. --where is the engine's own SQL and is printed as
given (one predicate, no ';' or comments). The query's first line records
these options; scan --counts reads them from it, and stores the query's
SHA-256 and each file's with the run.

Examples:
  leadline count-sql --engine clickhouse --table ledger_all --map amount=amount --by entity
  leadline count-sql --engine postgresql --table gl --map amount=amt --scale 2 --by entity --signs positive --min 10
  leadline count-sql --engine duckdb --table ledger --map amount=amount --by month=posted`,
		flags: thin(countSQLFlags, runCountSQL),
	})
}

// countsFlags are scan's flags for counts made elsewhere.
type countsFlags struct {
	files []string
	query string
}

func (c *countsFlags) add(fs *pflag.FlagSet) {
	fs.StringSliceVar(&c.files, "counts", nil, "run on count files (CSV or Parquet) made by the query of leadline count-sql, instead of the workspace's ledger (repeatable)")
	fs.StringVar(&c.query, "count-query", "", "with --counts: the query file count-sql printed (its first line says what was counted)")
}

func (c *countsFlags) given() bool { return len(c.files) > 0 || c.query != "" }

// countsReport is scan's JSON document for a run on counts: the report and
// where its counts came from.
type countsReport struct {
	*battery.Report
	CountsSource *countsql.Source `json:"counts_source"`
}

// check refuses --counts without --count-query (or the reverse) and the
// population flags beside them: the population is the query's.
func (c *countsFlags) check(fs *pflag.FlagSet) error {
	if len(c.files) == 0 || c.query == "" {
		return fmt.Errorf("--counts and --count-query go together: the count files and the query count-sql printed for them")
	}
	for _, name := range []string{"where", "signs", "min", "last-two", "last-two-all"} {
		if fs.Changed(name) {
			return fmt.Errorf("--%s: with --counts the population is the one the query counted (its first line); print a new query with count-sql --%s", name, name)
		}
	}
	return nil
}

// scanCounts is scan --counts: the battery's statistics on merged count
// files, stored as a scan run with the counts' provenance. The loads'
// input (rep.Input) is not the counts' and is left out.
func scanCounts(ctx context.Context, e *env, o scanOptions) error {
	started := time.Now()
	rep, src, err := countsql.Scan(o.counts.query, o.counts.files, o.battery)
	if err != nil {
		return err
	}
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	doc := &countsReport{Report: rep, CountsSource: src}
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: "scan", Started: started, Params: rep.Params, Result: doc, SetID: func(id int64) { rep.RunID = id }}); err != nil {
		return err
	}
	if o.format == "json" {
		return writeJSON(e.stdout, doc)
	}
	if o.format == "text" {
		fmt.Fprintf(e.stdout, "Counts from %s (table %s, query %s, SHA-256 %s), %d file(s):\n", src.Engine, src.Table, src.Query, src.QuerySHA256, len(src.Files))
		for _, f := range src.Files {
			fmt.Fprintf(e.stdout, "  %s  %s  %d rows\n", f.SHA256, f.Path, f.Rows)
		}
	}
	return printScan(e.stdout, o.format, rep, o.print)
}
