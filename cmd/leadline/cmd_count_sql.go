package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/countsql"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
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
	var by, lims []string
	var width, from, to float64
	var perDecade int
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
	fs.StringVar(&o.spec.Test, "test", "battery", "what to count: battery (scan --counts), limits (limits --counts) or ranges (ranges --counts)")
	fs.StringSliceVar(&lims, "limits", nil, "--test limits: limits to probe, e.g. 1000,5000 (default: the round values, chosen from the amounts when the counts come back)")
	fs.Float64Var(&width, "width", 0, "--test limits: band width as a fraction of the limit (default 0.10); --test ranges: fixed band width in currency units (default: logarithmic bands)")
	fs.IntVar(&perDecade, "per-decade", 0, "--test ranges: logarithmic bands to a decade (default 10)")
	fs.Float64Var(&from, "from", 0, "--test ranges: start of the bands (as leadline ranges)")
	fs.Float64Var(&to, "to", 0, "--test ranges: end of the bands (as leadline ranges)")
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
		var bandFlags []string
		for _, f := range []string{"limits", "width", "per-decade", "from", "to"} {
			if fs.Changed(f) {
				bandFlags = append(bandFlags, f)
			}
		}
		switch strings.ToLower(strings.TrimSpace(o.spec.Test)) {
		case countsql.TestLimits:
			for _, f := range bandFlags {
				if f == "per-decade" || f == "from" || f == "to" {
					return o, fmt.Errorf("--%s lays out range bands: give it with --test ranges", f)
				}
			}
			if len(lims) > 0 {
				l, err := limits.ParseLimits(lims)
				if err != nil {
					return o, err
				}
				o.spec.Limits = l
			}
			o.spec.Width = width
		case countsql.TestRanges:
			if len(lims) > 0 {
				return o, fmt.Errorf("--limits: limits are probed with --test limits")
			}
			o.spec.Layout = &ranges.Layout{Width: width, PerDecade: perDecade, From: from, To: to}
		default:
			if len(bandFlags) > 0 {
				return o, fmt.Errorf("--%s counts bands: give --test limits or --test ranges", bandFlags[0])
			}
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
		summary: "print the counting query of the digit battery, the limit probe or the range bands for another engine (DuckDB, PostgreSQL, ClickHouse)",
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

With --test limits or --test ranges it prints the counting query of the
limit probe's or the range table's bands instead: per segment, the tested
amounts between every band edge the local command could use (the limits
given or every round value; the logarithmic grid, or the fixed-width
grid from --from), with the smallest and largest amount, and the rows left
out by reason; bring the files back to leadline limits --counts or
leadline ranges --counts:

  leadline count-sql --test limits --engine postgresql --table gl --map amount=amt --by entity -o lim.sql
  psql -X --csv -f lim.sql -o lim-counts.csv
  leadline limits --counts lim-counts.csv --count-query lim.sql --by entity

The amount column must be an exact decimal (or integer) type with at most
--scale decimal places. --where is the engine's own SQL and is printed as
given (one predicate, no ';' or comments). The query's first line records
these options; scan --counts reads them from it, and stores the query's
SHA-256 and each file's with the run.

Examples:
  leadline count-sql --engine clickhouse --table ledger_all --map amount=amount --by entity
  leadline count-sql --engine postgresql --table gl --map amount=amt --scale 2 --by entity --signs positive --min 10
  leadline count-sql --engine duckdb --table ledger --map amount=amount --by month=posted
  leadline count-sql --test limits --engine clickhouse --table ledger_all --map amount=amount --limits 1000,5000
  leadline count-sql --test ranges --engine postgresql --table gl --map amount=amt --width 500 --to 20000`,
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
	// Drills are the engine's queries listing the records behind each
	// flag (scan only).
	Drills []countsql.BinDrill `json:"drills,omitempty"`
}

// check refuses --counts without --count-query (or the reverse) and the
// population flags beside them: the population is the query's. fixed
// names the command's other flags the query fixes (limits: --limits and
// --width; ranges: the layout).
func (c *countsFlags) check(fs *pflag.FlagSet, fixed ...string) error {
	if len(c.files) == 0 || c.query == "" {
		return fmt.Errorf("--counts and --count-query go together: the count files and the query count-sql printed for them")
	}
	for _, name := range []string{"where", "signs", "min", "last-two", "last-two-all", "currency"} {
		if fs.Lookup(name) != nil && fs.Changed(name) {
			return fmt.Errorf("--%s: with --counts the population is the one the query counted (its first line); print a new query with count-sql --%s", name, name)
		}
	}
	for _, name := range fixed {
		if fs.Changed(name) {
			return fmt.Errorf("--%s: with --counts the bands are the ones the query counted (its first line); print a new query with count-sql --%s", name, name)
		}
	}
	return nil
}

// printCountsSource says where a run's counts came from.
func printCountsSource(w io.Writer, src *countsql.Source) {
	fmt.Fprintf(w, "Counts from %s (table %s, query %s, SHA-256 %s), %s file(s):\n", src.Engine, src.Table, src.Query, src.QuerySHA256, numfmt.Int(int64(len(src.Files))))
	for _, f := range src.Files {
		fmt.Fprintf(w, "  %s  %s  %s rows\n", f.SHA256, f.Path, numfmt.Int(f.Rows))
	}
	if src.NoAmount+src.Filtered > 0 {
		fmt.Fprintf(w, "  not in the counts below: %s rows without an amount, %s dropped by the query's filter\n", numfmt.Int(src.NoAmount), numfmt.Int(src.Filtered))
	}
}

// scanCounts is scan --counts: the battery's statistics on merged count
// files, stored as a scan run with the counts' provenance. The loads'
// input (rep.Input) is not the counts' and is left out.
func scanCounts(ctx context.Context, e *env, o scanOptions) error {
	started := time.Now()
	rep, src, drills, err := countsql.Scan(o.counts.query, o.counts.files, o.battery)
	if err != nil {
		return err
	}
	doc := &countsReport{Report: rep, CountsSource: src, Drills: drills}
	run := workspace.Run{Kind: "scan", Started: started, Params: rep.Params, Result: doc, SetID: func(id int64) { rep.RunID = id }}
	if done, err := storeCountsRun(ctx, e, o.db, run, src, o.format); done || err != nil {
		return err
	}
	if err := printScan(e.stdout, o.format, rep, o.print); err != nil || o.format != "text" || len(drills) == 0 {
		return err
	}
	// The records behind the flags live on the engine: its own queries,
	// one line each, to paste into its client.
	fmt.Fprintf(e.stdout, "\nRecords behind the flags, as %s queries (one line each, for its client):\n", src.Engine)
	for _, d := range drills {
		where := "whole selection"
		if d.Segment != "" {
			where = d.Segment
		}
		fmt.Fprintf(e.stdout, "-- %s %s %s (%s, %s records)\n%s\n", d.Test, d.Signal, d.Bins, where, numfmt.Int(d.Count), d.Query)
	}
	return nil
}
