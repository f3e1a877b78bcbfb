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
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

// countSQLOptions are the flags of count-sql.
type countSQLOptions struct {
	spec    countsql.Spec
	mapping map[string]string
	by      []string
	out     string
	// the band tests: --limits and --width (limits), --width,
	// --per-decade, --from and --to (ranges)
	limits    []string
	width     float64
	perDecade int
	from, to  float64
	bandFlags []string // band flags given
}

func (c *countSQLOptions) add(fs *pflag.FlagSet) {
	fs.StringVar(&c.spec.Engine, "engine", "", "engine that runs the query: duckdb, postgresql or clickhouse")
	fs.StringVar(&c.spec.Table, "table", "", "table (or view) holding the records; schema.table for a schema")
	fs.StringToStringVar(&c.mapping, "map", nil, "amount=COLUMN: the table's amount column")
	fs.IntVar(&c.spec.Scale, "scale", 2, "decimal places of the amount: units = amount * 10^scale")
	fs.StringSliceVar(&c.by, "by", nil, "segment column: NAME (the column of that name), NAME=COLUMN, or month=DATE_COLUMN for YYYY-MM (repeatable)")
	fs.StringVar(&c.spec.Where, "where", "", "predicate in the engine's own SQL; rows it drops are counted as filtered")
	fs.StringVar(&c.spec.Signs, "signs", population.DefaultSigns, "amounts tested: positive, negative or both")
	fs.StringVar(&c.spec.Min, "min", population.DefaultMin, "smallest |amount| tested")
	fs.StringVar(&c.spec.LastTwo, "last-two", "scale", "last two digits at the amount's scale (scale) or of its whole-currency part (units)")
	fs.BoolVar(&c.spec.LastTwoAll, "last-two-all", false, "count the last two digits of every tested amount (default: only where they are the fourth significant digit or later, e.g. 100.00 and more at scale 2, as scan does)")
	fs.StringVarP(&c.out, "output", "o", "", "write the query to this file (default: standard output)")
	fs.StringVar(&c.spec.Test, "test", "battery", "what to count: battery (scan --counts), limits (limits --counts) or ranges (ranges --counts)")
	fs.StringSliceVar(&c.limits, "limits", nil, "--test limits: limits to probe, e.g. 1000,5000 (default: the round values, chosen from the amounts when the counts come back)")
	fs.Float64Var(&c.width, "width", 0, "--test limits: band width as a fraction of the limit (default 0.10); --test ranges: fixed band width in currency units (default: logarithmic bands)")
	fs.IntVar(&c.perDecade, "per-decade", 0, "--test ranges: logarithmic bands to a decade (default 10)")
	fs.Float64Var(&c.from, "from", 0, "--test ranges: start of the bands (as leadline ranges)")
	fs.Float64Var(&c.to, "to", 0, "--test ranges: end of the bands (as leadline ranges)")
}

// build turns the flags into the spec.
func (c *countSQLOptions) build() (countsql.Spec, error) {
	s := c.spec
	for k, v := range c.mapping {
		if !strings.EqualFold(k, "amount") {
			return s, fmt.Errorf("--map %s=%s: only amount=COLUMN is read; segments are --by NAME=COLUMN", k, v)
		}
		s.Amount = v
	}
	if s.Engine == "" || s.Table == "" {
		return s, fmt.Errorf("--engine and --table are required (e.g. --engine postgresql --table gl --map amount=amt)")
	}
	if s.Amount == "" {
		return s, fmt.Errorf("--map amount=COLUMN: name the table's amount column")
	}
	for _, b := range c.by {
		name, col, ok := strings.Cut(b, "=")
		name, col = strings.TrimSpace(name), strings.TrimSpace(col)
		if !ok {
			col = name
		}
		s.By = append(s.By, countsql.Segment{Name: name, Column: col, Month: ok && strings.EqualFold(name, "month")})
	}
	switch strings.ToLower(strings.TrimSpace(s.Test)) {
	case countsql.TestLimits:
		for _, f := range c.bandFlags {
			if f == "per-decade" || f == "from" || f == "to" {
				return s, fmt.Errorf("--%s lays out range bands: give it with --test ranges", f)
			}
		}
		if len(c.limits) > 0 {
			l, err := limits.ParseLimits(c.limits)
			if err != nil {
				return s, err
			}
			s.Limits = l
		}
		s.Width = c.width
	case countsql.TestRanges:
		if len(c.limits) > 0 {
			return s, fmt.Errorf("--limits: limits are probed with --test limits")
		}
		s.Layout = &ranges.Layout{Width: c.width, PerDecade: c.perDecade, From: c.from, To: c.to}
	default:
		if len(c.bandFlags) > 0 {
			return s, fmt.Errorf("--%s counts bands: give --test limits or --test ranges", c.bandFlags[0])
		}
	}
	return s, nil
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
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var c countSQLOptions
			c.add(fs)
			return func(ctx context.Context, args []string, e *env) error {
				if len(args) > 0 {
					return fmt.Errorf("unexpected argument %q (see --help)", args[0])
				}
				for _, f := range []string{"limits", "width", "per-decade", "from", "to"} {
					if fs.Changed(f) {
						c.bandFlags = append(c.bandFlags, f)
					}
				}
				s, err := c.build()
				if err != nil {
					return err
				}
				q, err := countsql.Query(s)
				if err != nil {
					return err
				}
				if c.out != "" {
					return os.WriteFile(c.out, []byte(q), 0o644)
				}
				_, err = fmt.Fprint(e.stdout, q)
				return err
			}
		},
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
	fmt.Fprintf(w, "Counts from %s (table %s, query %s, SHA-256 %s), %d file(s):\n", src.Engine, src.Table, src.Query, src.QuerySHA256, len(src.Files))
	for _, f := range src.Files {
		fmt.Fprintf(w, "  %s  %s  %d rows\n", f.SHA256, f.Path, f.Rows)
	}
	if src.NoAmount+src.Filtered > 0 {
		fmt.Fprintf(w, "  not in the counts below: %d rows without an amount, %d dropped by the query's filter\n", src.NoAmount, src.Filtered)
	}
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
		printCountsSource(e.stdout, src)
	}
	return printScan(e.stdout, o.format, rep, o.print)
}
