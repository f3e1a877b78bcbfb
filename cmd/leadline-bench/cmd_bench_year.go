package main

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/fixtures"
	"github.com/leadline/leadline/queries"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "bench-year",
		summary: "a year of ledger rows as Parquet files in place: register them, run the six-test battery, report wall time and peak memory",
		usage: `Usage: leadline-bench bench-year [options]

The billion-row benchmark: generates --rows ledger rows (1,000,000,000 by
default) as Parquet files of --rows-per-file rows each, written by DuckDB
itself from range() (each value a hash of the row number: amounts
10^(5u) rounded to cents, so their leading digits follow Benford's law,
in documents of four lines that balance; a file is the same on every
run, and the first files of a billion rows are those of fewer), then
runs, each as its own leadline process:

  register in place   LEADLINE_TRACE=1 leadline load --in-place DIR/year-*.parquet,
                      up to its "trace: commit" line: registration, SHA-256
                      and the completeness pass
  journal checks      the same process after its commit: the load's journal
                      checks and summary (--checks-limit stops them)
  battery             leadline scan --tests first,second,first_two,first_three,last_two,summation

and reports each step's wall time, peak resident memory (the leadline
process's maximum RSS; up to the commit for the registration), CPU time
and the machine's mean load average while it ran, with the battery's
goal for a billion rows: under 60 s and under 2 GiB. Below a billion
rows it also prints a linear extrapolation of the battery's time to a
billion rows, labelled as an estimate: a measurement at a billion rows is
the only figure to quote.

A billion rows make about 6.7 GB of Parquet files; generating them took
an hour (1,024 CPU seconds) on two busy cores. Give --dir on a disk with the room
and --keep to reuse the files (they are regenerated only when missing);
--generate-only writes them and stops. Not part of CI.

Examples:
  go build -o leadline ./cmd/leadline
  go run ./cmd/leadline-bench bench-year --rows 10000000 --leadline ./leadline
  leadline-bench bench-year --dir /data/year --keep --checks-limit 10m   # 1,000,000,000 rows`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var o benchYearOptions
			fs.Int64Var(&o.rows, "rows", 1_000_000_000, "ledger rows to generate")
			fs.Int64Var(&o.perFile, "rows-per-file", 50_000_000, "rows in each Parquet file")
			fs.StringVar(&o.dir, "dir", "", "work folder (default: a temporary folder, removed afterwards)")
			fs.BoolVar(&o.keep, "keep", false, "keep the work folder and reuse its generated files")
			fs.BoolVar(&o.generateOnly, "generate-only", false, "generate the files (kept) and stop")
			fs.DurationVar(&o.checksLimit, "checks-limit", 0, "stop the load this long after its commit if its journal checks are still running, e.g. 20m (reported as not finished; default: no limit)")
			fs.StringVar(&o.memory, "memory-limit", "", "DuckDB memory limit of the leadline steps, e.g. 1GB (default: leadline's)")
			fs.IntVar(&o.threads, "threads", 0, "DuckDB threads of the leadline steps")
			fs.StringVar(&o.leadline, "leadline", "", "the leadline program (default: beside this program, else on the PATH)")
			var f formatFlag
			f.add(fs)
			return func(ctx context.Context, args []string, e *env) error {
				if err := f.check(); err != nil {
					return err
				}
				if len(args) > 0 {
					return fmt.Errorf("unexpected argument %q (see --help)", args[0])
				}
				if o.rows < 1 || o.perFile < 1 {
					return fmt.Errorf("--rows and --rows-per-file: give 1 or more")
				}
				if o.checksLimit < 0 {
					return fmt.Errorf("--checks-limit %s: give a duration of 0 (no limit) or more, e.g. 10m", o.checksLimit)
				}
				return runBenchYear(ctx, e, o, f.value)
			}
		},
	})
}

type benchYearOptions struct {
	rows, perFile         int64
	dir, memory, leadline string
	threads               int
	keep, generateOnly    bool
	checksLimit           time.Duration
}

// yearBatteryTests are the six tests fed by the battery's one aggregate
// scan.
const yearBatteryTests = "first,second,first_two,first_three,last_two,summation"

func runBenchYear(ctx context.Context, e *env, o benchYearOptions, format string) error {
	leadline, dir, made, err := benchSetup(o.leadline, o.dir, "leadline-year-")
	if err != nil {
		return err
	}
	if made && !o.keep && !o.generateOnly {
		defer os.RemoveAll(dir)
	}
	fmt.Fprintf(e.stderr, "Benchmark in %s: %d rows in files of %d\n", dir, o.rows, o.perFile)

	// Generate the files (reused with --keep when all are there, each
	// named by its first row and rows). DuckDB writes them itself from
	// range(): a hash of the row number gives each amount, so the files
	// are the same on every run, and no row passes through Go.
	t0 := time.Now()
	var files []string
	generated := false
	var gen *sql.DB
	defer func() {
		if gen != nil {
			gen.Close()
		}
	}()
	for i, first := 0, int64(0); first < o.rows; i++ {
		n := min(o.rows-first, o.perFile)
		p := filepath.Join(dir, fmt.Sprintf("year-%04d-%d.parquet", i, n))
		files = append(files, p)
		if _, err := os.Stat(p); err == nil && (o.keep || o.generateOnly) {
			first += n
			continue
		}
		if gen == nil {
			if gen, err = openYearGenerator(ctx, o); err != nil {
				return err
			}
		}
		generated = true
		tmp := p + ".part"
		if err := generateYearFile(ctx, gen, tmp, first, n); err != nil {
			os.Remove(tmp)
			return err
		}
		if err := os.Rename(tmp, p); err != nil {
			return err
		}
		first += n
		fmt.Fprintf(e.stderr, "  generated %s (%.0f s so far)\n", filepath.Base(p), time.Since(t0).Seconds())
	}
	genSeconds := time.Since(t0).Seconds()
	var bytesOnDisk int64
	for _, p := range files {
		if st, err := os.Stat(p); err == nil {
			bytesOnDisk += st.Size()
		}
	}

	if o.generateOnly {
		fmt.Fprintf(e.stdout, "Generated %d rows in %d Parquet file(s), %d bytes, in %s, in %.1f s\n", o.rows, len(files), bytesOnDisk, dir, genSeconds)
		return nil
	}
	db := filepath.Join(dir, "year.duckdb")
	for _, p := range []string{db, db + ".wal"} {
		os.Remove(p)
	}
	dbArgs := []string{"--db", db}
	if o.memory != "" {
		dbArgs = append(dbArgs, "--memory-limit", o.memory)
	}
	if o.threads > 0 {
		dbArgs = append(dbArgs, "--threads", strconv.Itoa(o.threads))
	}
	// The load, timed to its commit (registration and the completeness
	// pass) and as a whole (the journal checks and the printed summary
	// follow the commit in the same process).
	loadArgs := append(append([]string{"load", "--in-place"}, dbArgs...), filepath.Join(dir, "year-*.parquet"))
	fmt.Fprintf(e.stderr, "  leadline %s\n", joinArgs(loadArgs))
	lr, err := runTraced(ctx, leadline, loadArgs, commitMark, o.checksLimit)
	if lr.markSeconds < 0 {
		if err != nil {
			return fmt.Errorf("load --in-place: %w", err)
		}
		return fmt.Errorf("load --in-place: no %q line on its standard error; is %s a leadline with LEADLINE_TRACE?", commitMark, leadline)
	}
	// A load that fails after its commit (in the journal checks) leaves
	// the files registered: the battery still runs, and the failure is
	// reported with the checks.
	checksFailed := ""
	if err != nil {
		checksFailed = oneLineOf(lr.failure)
		fmt.Fprintf(e.stderr, "  the load failed after its commit:\n%s\n", lastLines(lr.failure, 6))
	}
	loadCmd := "LEADLINE_TRACE=1 leadline " + joinArgs(loadArgs)
	reg := yearResult{name: "register in place", command: loadCmd + " (to " + commitMark + ")",
		seconds: lr.markSeconds, peakMiB: lr.markPeakMiB, cpuSeconds: -1, load1: lr.load1,
		note: "registration, SHA-256 and the completeness pass, committed; peak memory up to then"}
	checks := yearResult{name: "journal checks", command: loadCmd + " (after " + commitMark + ")",
		seconds: lr.seconds - lr.markSeconds, peakMiB: lr.peakMiB, cpuSeconds: -1, load1: lr.load1,
		note: "the load's journal checks and summary after the commit; peak memory of the whole load process"}
	if lr.stopped {
		checks.note = fmt.Sprintf("NOT FINISHED: stopped %s after the commit (--checks-limit); peak memory of the load process up to then", o.checksLimit)
	}
	if checksFailed != "" {
		checks.note = "FAILED after the commit: " + checksFailed
	}
	whole := yearResult{name: "load, whole process", command: loadCmd, seconds: lr.seconds, peakMiB: lr.peakMiB, cpuSeconds: lr.cpuSeconds, load1: lr.load1}
	if lr.stopped {
		whole.note = "stopped during the journal checks"
	}
	if checksFailed != "" {
		whole.note = "failed in the journal checks"
	}
	fmt.Fprintf(e.stderr, "  %-20s %8.2fs  peak %7s MiB\n  %-20s %8.2fs  peak %7s MiB%s\n", reg.name, reg.seconds, mib(reg.peakMiB), checks.name, checks.seconds, mib(checks.peakMiB), map[bool]string{true: " (stopped)"}[lr.stopped])

	scanArgs := append(append([]string{"scan"}, dbArgs...), "--tests", yearBatteryTests, "--format", "json")
	fmt.Fprintf(e.stderr, "  leadline %s\n", joinArgs(scanArgs))
	sr, err := runTraced(ctx, leadline, scanArgs, "", 0)
	if err != nil {
		return fmt.Errorf("scan: %w", err)
	}
	bat := yearResult{name: "battery", command: "leadline " + joinArgs(scanArgs), seconds: sr.seconds, peakMiB: sr.peakMiB, cpuSeconds: sr.cpuSeconds, load1: sr.load1,
		note: "the six tests of the one aggregate scan, a process of its own"}
	fmt.Fprintf(e.stderr, "  %-20s %8.2fs  peak %7s MiB\n", bat.name, bat.seconds, mib(bat.peakMiB))
	steps := []yearResult{reg, checks, whole, bat}

	const billion = 1_000_000_000
	var stepsJSON []map[string]any
	for _, r := range steps {
		stepsJSON = append(stepsJSON, r.json())
	}
	doc := map[string]any{
		"rows": o.rows, "files": len(files), "rows_per_file": o.perFile, "parquet_bytes": bytesOnDisk,
		"generate_seconds": genSeconds, "generated": generated,
		"steps": stepsJSON,
		"goal":  map[string]any{"rows": billion, "battery_seconds": 60, "peak_mib": 2048},
	}
	est := bat.seconds * billion / float64(o.rows)
	if o.rows != billion && o.rows >= minRowsForEstimate {
		doc["battery_seconds_at_a_billion_estimate"] = est
	}
	if format == "json" {
		return writeJSON(e.stdout, doc)
	}
	t := &tabular.Table{Name: "bench-year", Columns: []string{"step", "seconds", "peak_mib", "rows_per_s", "cpu_s", "load_avg", "command"}}
	for _, r := range steps {
		cpu := ""
		if r.cpuSeconds >= 0 {
			cpu = fmt.Sprintf("%.1f", r.cpuSeconds)
		}
		t.Add(r.name, fmt.Sprintf("%.2f", r.seconds), mib(r.peakMiB), fmt.Sprintf("%.0f", float64(o.rows)/r.seconds), cpu, fmt.Sprintf("%.1f", r.load1), r.command)
	}
	if format == "csv" {
		return t.WriteCSV(e.stdout)
	}
	fmt.Fprintf(e.stdout, "leadline bench-year: %d rows in %d Parquet file(s), %.1f MB, in %s\n", o.rows, len(files), float64(bytesOnDisk)/1e6, dir)
	if generated {
		fmt.Fprintf(e.stdout, "Generated in %.1f s (not part of the figures below).\n", genSeconds)
	}
	fmt.Fprintln(e.stdout)
	if err := t.WriteText(e.stdout, 0); err != nil {
		return err
	}
	fmt.Fprintln(e.stdout)
	for _, r := range steps {
		if r.note != "" {
			fmt.Fprintf(e.stdout, "%s: %s.\n", r.name, r.note)
		}
	}
	fmt.Fprintln(e.stdout, "load_avg: the machine's mean one-minute load average while the step's process ran (other work on the machine slows every step).")
	fmt.Fprintf(e.stdout, "\nBattery (six tests, one aggregate scan): %.2f s, peak %s MiB of the leadline process.\n", bat.seconds, mib(bat.peakMiB))
	if o.rows == billion {
		fmt.Fprintf(e.stdout, "Goal at a billion rows: under 60 s (%s) and under 2048 MiB (%s).\n", pass(bat.seconds < 60), pass(bat.peakMiB < 2048))
	} else if o.rows >= minRowsForEstimate {
		fmt.Fprintf(e.stdout, "ESTIMATE, not a measurement: at 1,000,000,000 rows the battery would take about %.0f s if its time grew in proportion to the rows (goal: under 60 s). Run with --rows 1000000000 to measure it.\n", est)
	} else {
		fmt.Fprintf(e.stdout, "No estimate for a billion rows from %d rows: a process's fixed costs (start, opening the workspace, checking the files) dominate below %d rows.\n", o.rows, minRowsForEstimate)
	}
	return nil
}

// minRowsForEstimate is the fewest rows from which bench-year scales the
// battery's time to a billion rows (common practice, no source: below it
// the process's fixed costs are most of the time).
const minRowsForEstimate = 10_000_000

// yearSeed seeds the amounts' hash: the same seed, the same files.
const yearSeed = 2025

// openYearGenerator opens the in-memory DuckDB that writes the files: one
// connection, which holds the amount macro.
func openYearGenerator(ctx context.Context, o benchYearOptions) (*sql.DB, error) {
	db, err := sql.Open("duckdb", "")
	if err != nil {
		return nil, err
	}
	db.SetMaxOpenConns(1)
	setup := []string{queries.Get("bench_year_amount"), queries.Get("bench_year_types")}
	if o.threads > 0 {
		setup = append(setup, fmt.Sprintf("SET threads = %d", o.threads))
	}
	for _, q := range setup {
		if _, err := db.ExecContext(ctx, q); err != nil {
			db.Close()
			return nil, fmt.Errorf("preparing the generator: %w", err)
		}
	}
	return db, nil
}

// generateYearFile writes rows first to first+n of a ledger of
// documents of four lines as one Parquet file.
func generateYearFile(ctx context.Context, db *sql.DB, path string, first, n int64) error {
	q := queries.Render("bench_year_generate", map[string]string{
		"first": strconv.FormatInt(first, 10),
		"last":  strconv.FormatInt(first+n, 10),
		"seed":  strconv.Itoa(yearSeed),
		"path":  queries.QuoteString(path),
		"n":     strconv.Itoa(fixtures.ParquetRowGroupRows),
	})
	if _, err := db.ExecContext(ctx, q); err != nil {
		return fmt.Errorf("generating %s: %w", path, err)
	}
	return nil
}

// oneLineOf is the line of a failure's text that says what failed (the
// one naming the load), else its first line.
func oneLineOf(s string) string {
	for _, l := range strings.Split(s, "\n") {
		if strings.HasPrefix(l, "leadline load:") {
			return strings.TrimSpace(strings.TrimPrefix(l, "leadline load:"))
		}
	}
	l, _, _ := strings.Cut(strings.TrimSpace(s), "\n")
	return l
}

func pass(ok bool) string {
	if ok {
		return "met"
	}
	return "NOT met"
}

// yearResult is one measured step.
type yearResult struct {
	name, command, note          string
	seconds, peakMiB, cpuSeconds float64 // peakMiB, cpuSeconds: -1 when not measured
	load1                        float64
}

func (r yearResult) json() map[string]any {
	m := map[string]any{"step": r.name, "command": r.command, "seconds": r.seconds, "load_average_1min": r.load1}
	if r.peakMiB >= 0 {
		m["peak_mib"] = r.peakMiB
	}
	if r.cpuSeconds >= 0 {
		m["cpu_seconds"] = r.cpuSeconds
	}
	if r.note != "" {
		m["note"] = r.note
	}
	return m
}
