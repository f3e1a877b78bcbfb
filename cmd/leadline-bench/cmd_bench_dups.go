package main

import (
	"context"
	"fmt"
	"io"
	"os"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/queries"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "bench-dups",
		summary: "time the duplicate tests and a grouped drill on a generated ledger",
		usage: `Usage: leadline-bench bench-dups [options]

Generates a synthetic ledger (the demo's generator, Parquet), loads it into
a fresh workspace and times, on the same workspace:

  1. the five duplicate tests together (leadline dups, default options);
  2. the same with --window-days 7;
  3. a drill of one first-two digits bin grouped by counterparty
     (leadline drill --test first_two --bin 47 --group counterparty);
  4. a drill of the same bin listing 50 records sorted by amount.

Each step runs --repeat times; the table gives the fastest and the slowest.
Generation and loading are timed too but are not the benchmark. Nothing is
held in Go memory beyond the groups and rows printed.

Examples:
  leadline-bench bench-dups                       # 20,000,000 rows in a temporary folder
  leadline-bench bench-dups --rows 2000000 --repeat 3
  leadline-bench bench-dups --dir /data/bench --keep   # keep the Parquet file and workspace`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			o := benchDupsOptions{benchData: benchData{prefix: "leadline-bench-dups-"}}
			var f formatFlag
			o.add(fs, 1)
			fs.IntVar(&o.bin, "bin", 47, "first-two digits bin drilled")
			f.add(fs)
			return func(ctx context.Context, args []string, e *env) error {
				if err := f.check(); err != nil {
					return err
				}
				if len(args) > 0 {
					return fmt.Errorf("unexpected argument %q (see --help)", args[0])
				}
				if err := o.check(); err != nil {
					return err
				}
				return benchDups(ctx, e, o, f.value)
			}
		},
	})
}

type benchDupsOptions struct {
	benchData
	bin int
}

func benchDups(ctx context.Context, e *env, o benchDupsOptions, format string) error {
	ws, dir, steps, done, err := openBenchWorkspace(ctx, e, o.benchData)
	if err != nil {
		return err
	}
	defer done()
	var n int64
	if err := ws.Conn.QueryRowContext(ctx, queries.Get("bench_ledger_rows")).Scan(&n); err != nil {
		return err
	}
	time1 := func(name, cmd string, fn func() (string, error)) error {
		return o.timeStep(e, &steps, name, cmd, fn)
	}
	dupsResult := func(r *duplicates.Result) string {
		s := ""
		for _, t := range r.Tests {
			if s != "" {
				s += ", "
			}
			s += fmt.Sprintf("%s %s (%.1fs)", t.Test, numfmt.Int(t.GroupsTotal), t.Seconds)
		}
		return s + " groups (seconds of the last run)"
	}
	if err := time1("duplicate tests, all five", "leadline dups", func() (string, error) {
		r, err := duplicates.Run(ctx, ws, duplicates.Options{})
		if err != nil {
			return "", err
		}
		return dupsResult(r), nil
	}); err != nil {
		return err
	}
	if err := time1("duplicate tests, all five, 7-day window", "leadline dups --window-days 7", func() (string, error) {
		r, err := duplicates.Run(ctx, ws, duplicates.Options{WindowDays: 7})
		if err != nil {
			return "", err
		}
		return dupsResult(r), nil
	}); err != nil {
		return err
	}
	bin := o.bin
	sel := drill.Selection{Test: "first_two", Bin: &bin}
	if err := time1(fmt.Sprintf("drill first-two bin %d by counterparty", bin), fmt.Sprintf("leadline drill --test first_two --bin %d --group counterparty", bin), func() (string, error) {
		b, err := drill.Build(ctx, ws, sel)
		if err != nil {
			return "", err
		}
		s, err := drill.Summarize(ctx, ws, b)
		if err != nil {
			return "", err
		}
		g, err := drill.Group(ctx, ws, b, drill.GroupOptions{Column: "counterparty"})
		if err != nil {
			return "", err
		}
		return fmt.Sprintf("%s records in %s groups", numfmt.Int(s.Records), numfmt.Int(g.GroupsTotal)), nil
	}); err != nil {
		return err
	}
	if err := time1(fmt.Sprintf("drill first-two bin %d, 50 records by amount", bin), fmt.Sprintf("leadline drill --test first_two --bin %d --sort amount --desc", bin), func() (string, error) {
		b, err := drill.Build(ctx, ws, sel)
		if err != nil {
			return "", err
		}
		s, err := drill.Summarize(ctx, ws, b)
		if err != nil {
			return "", err
		}
		t, _, err := drill.Records(ctx, ws, b, drill.RecordOptions{Sort: "amount", Desc: true})
		if err != nil {
			return "", err
		}
		return fmt.Sprintf("%s records, %d shown", numfmt.Int(s.Records), len(t.Rows)), nil
	}); err != nil {
		return err
	}
	ver, _ := ws.DuckDBVersion(ctx)
	return printBenchDups(e.stdout, format, o, n, ver, steps, dir)
}

func printBenchDups(w io.Writer, format string, o benchDupsOptions, rows int64, duckdbVersion string, steps []benchStep, dir string) error {
	if format == "json" {
		return writeJSON(w, o.describe(rows, duckdbVersion, steps))
	}
	if err := o.printSteps(w, format, "Duplicate tests and drill", rows, duckdbVersion, steps); err != nil || format == "csv" {
		return err
	}
	o.printKept(w, dir)
	return nil
}

func benchFileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}
