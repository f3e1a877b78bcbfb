package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"syscall"
	"time"

	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
	"github.com/leadline/leadline/queries"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "bench",
		summary: "measure loads, the battery, segments, duplicates and a drill side by side, with peak memory",
		usage: `Usage: leadline-bench bench [options]

Generates one synthetic ledger as CSV and as Parquet, then runs each step
as a separate process on the same files, in one run, and reports
its wall time and peak resident memory (from the operating system's
accounting of that process):

  bare CSV read       SELECT count(*), sum(amount) FROM read_csv(...)   (DuckDB's floor)
  copy CSV            CREATE TABLE AS SELECT * FROM read_csv(...)     (DuckDB writing every column)
  load CSV            leadline load
  bare Parquet read   SELECT count(*), sum(amount) FROM read_parquet(...)
  copy Parquet        CREATE TABLE AS SELECT * FROM read_parquet(...)
  load Parquet        leadline load
  register in place   leadline load --in-place up to its commit (no copy: hash, footer,
                      one completeness pass), from its LEADLINE_TRACE=1 "trace: commit" line
  load in place, whole  the same process to its end: the journal checks and summary too
  first-two GROUP BY  one hand-written first-two digits query on the workspace (the floor)
  scan                leadline scan of the six tests fed by the one aggregate scan
  scan in place       the same scan over the Parquet file registered in place
  scan by segments    the same --by entity --by account --by month (about 1,000 segments)
  scan, all tests     leadline scan with second-order and number duplication too
  duplicates          leadline dups (all duplicate tests)
  drill               leadline drill of one first-two bin, grouped by counterparty

and the ratios the sizing goals are stated in: load throughput against the
bare read, battery against the single query, segments against the battery.
--memory-limit, --threads and --temp-dir pass on to every step.
--in-place-only generates the Parquet file alone and runs the bare Parquet
read and the in-place load only. Every figure comes with the machine's
mean one-minute load average over the run.

The leadline steps run the leadline program given by --leadline (by
default the one beside this program, else the one on the PATH); the bare
DuckDB steps run this program's bench-step.

Examples:
  go build -o leadline ./cmd/leadline
  go run ./cmd/leadline-bench bench --rows 5000000 --leadline ./leadline
  leadline-bench bench --rows 50000000 --dir /data/bench --keep
  leadline-bench bench --rows 20000000 --in-place-only`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var o benchOptions
			fs.Int64Var(&o.rows, "rows", 5_000_000, "ledger rows to generate")
			fs.StringVar(&o.dir, "dir", "", "work folder (default: a temporary folder, removed afterwards)")
			fs.BoolVar(&o.keep, "keep", false, "keep the work folder and reuse its generated files")
			fs.StringVar(&o.memory, "memory-limit", "", "DuckDB memory limit for every step, e.g. 2GB")
			fs.IntVar(&o.threads, "threads", 0, "DuckDB threads for every step")
			fs.StringVar(&o.tempDir, "temp-dir", "", "DuckDB spill folder for every step")
			fs.StringVar(&o.leadline, "leadline", "", "the leadline program of the load, scan, dups and drill steps (default: beside this program, else on the PATH)")
			fs.BoolVar(&o.inPlaceOnly, "in-place-only", false, "generate the Parquet file alone; run the bare Parquet read and the in-place load only")
			return func(ctx context.Context, args []string, e *env) error {
				return runBench(ctx, e, o)
			}
		},
	})
	register(&command{
		name:    "bench-step",
		summary: "(used by bench) run one bare DuckDB step: gen, gen-parquet, bare-csv, bare-parquet or first-two",
		usage:   "Usage: leadline-bench bench-step STEP ARGS... (see leadline-bench bench)",
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var db stepDB
			db.add(fs)
			var rows int64
			fs.Int64Var(&rows, "rows", 0, "gen: rows")
			return func(ctx context.Context, args []string, e *env) error {
				if len(args) < 2 {
					return fmt.Errorf("usage: bench-step gen|gen-parquet|bare-csv|bare-parquet|first-two PATH")
				}
				return benchOneStep(ctx, e, &db, args[0], args[1], rows)
			}
		},
	})
}

type benchOptions struct {
	rows                           int64
	dir, memory, tempDir, leadline string
	threads                        int
	keep, inPlaceOnly              bool
}

// stepDB are the workspace flags of bench-step, as leadline's own.
type stepDB struct {
	path, memory, tempDir string
	threads               int
}

func (d *stepDB) add(fs *pflag.FlagSet) {
	fs.StringVar(&d.path, "db", ":memory:", "workspace file")
	// leadline's default limit, so that the bare steps run under the
	// limit the leadline steps run under.
	fs.StringVar(&d.memory, "memory-limit", "1280MB", "DuckDB memory limit")
	fs.IntVar(&d.threads, "threads", 0, "DuckDB worker threads (default: one per core)")
	fs.StringVar(&d.tempDir, "temp-dir", "", "DuckDB spill folder")
}

// findLeadline returns the leadline program: the one given, else the one
// beside this program, else the one on the PATH.
// benchSetup finds the leadline binary to time (given, or beside this
// program) and makes the folder to work in: dir, or a new temporary folder
// (made), which the caller removes unless asked to keep it.
func benchSetup(given, dir, prefix string) (leadline, out string, made bool, err error) {
	self, err := os.Executable()
	if err != nil {
		return "", "", false, err
	}
	if leadline, err = findLeadline(given, self); err != nil {
		return "", "", false, err
	}
	if dir == "" {
		if dir, err = os.MkdirTemp("", prefix); err != nil {
			return "", "", false, err
		}
		made = true
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", "", false, err
	}
	return leadline, dir, made, nil
}

func findLeadline(given, self string) (string, error) {
	if given != "" {
		return exec.LookPath(given)
	}
	beside := filepath.Join(filepath.Dir(self), "leadline")
	if st, err := os.Stat(beside); err == nil && !st.IsDir() {
		return beside, nil
	}
	if p, err := exec.LookPath("leadline"); err == nil {
		return p, nil
	}
	return "", fmt.Errorf("no leadline program beside %s or on the PATH: build it (go build -o leadline ./cmd/leadline) and give --leadline ./leadline", self)
}

type benchResult struct {
	name    string
	command string
	seconds float64
	peakMB  float64
	output  string
}

func runBench(ctx context.Context, e *env, o benchOptions) error {
	leadline, dir, made, err := benchSetup(o.leadline, o.dir, "leadline-bench-")
	if err != nil {
		return err
	}
	self, err := os.Executable() // bench-step runs in this program
	if err != nil {
		return err
	}
	if made && !o.keep {
		defer os.RemoveAll(dir)
	}
	csvPath := filepath.Join(dir, "ledger.csv")
	pqPath := filepath.Join(dir, "ledger.parquet")
	csvDB := filepath.Join(dir, "csv.duckdb")
	pqDB := filepath.Join(dir, "parquet.duckdb")
	placeDB := filepath.Join(dir, "inplace.duckdb")
	dbArgs := func(db string) []string {
		a := []string{"--db", db}
		if o.memory != "" {
			a = append(a, "--memory-limit", o.memory)
		}
		if o.threads > 0 {
			a = append(a, "--threads", strconv.Itoa(o.threads))
		}
		if o.tempDir != "" {
			a = append(a, "--temp-dir", o.tempDir)
		}
		return a
	}
	// step runs leadline with args, or this program's bench-step when
	// args start with it.
	step := func(name string, args ...string) (benchResult, error) {
		prog, label := leadline, "leadline "
		if args[0] == "bench-step" {
			prog, label = self, "leadline-bench "
		}
		cmd := exec.CommandContext(ctx, prog, args...)
		cmd.Env = append(os.Environ(), "LEADLINE_NO_PROGRESS=1")
		var out, errb bytes.Buffer
		cmd.Stdout, cmd.Stderr = &out, &errb
		t0 := time.Now()
		err := cmd.Run()
		r := benchResult{name: name, command: label + joinArgs(args), seconds: time.Since(t0).Seconds(), output: out.String()}
		if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
			r.peakMB = float64(ru.Maxrss) / 1024 // Linux reports kilobytes
		}
		if err != nil {
			return r, fmt.Errorf("%s: %v\n%s", name, err, errb.String())
		}
		fmt.Fprintf(e.stderr, "  %-20s %8.2fs  peak %7.0f MB\n", name, r.seconds, r.peakMB)
		return r, nil
	}
	fmt.Fprintf(e.stderr, "Benchmark in %s: %d rows\n", dir, o.rows)
	var results []benchResult
	add := func(r benchResult, err error) error {
		if err != nil {
			return err
		}
		results = append(results, r)
		return nil
	}
	sampler := startLoadSampler()
	if _, err := os.Stat(pqPath); err != nil || !o.keep {
		for _, p := range []string{csvDB, pqDB, placeDB, csvDB + ".wal", pqDB + ".wal", placeDB + ".wal"} {
			os.Remove(p)
		}
		gen := "gen"
		if o.inPlaceOnly {
			gen = "gen-parquet"
		}
		if err := add(step("generate files", "bench-step", gen, dir, "--rows", strconv.FormatInt(o.rows, 10))); err != nil {
			return err
		}
	}
	for _, p := range []string{csvDB, pqDB, placeDB, csvDB + ".wal", pqDB + ".wal", placeDB + ".wal"} {
		os.Remove(p)
	}
	if err := add(step("bare Parquet read", append([]string{"bench-step", "bare-parquet", pqPath}, dbArgs(":memory:")...)...)); err != nil {
		return err
	}
	// The in-place load, timed to its commit (registration, hash and the
	// completeness pass) and as a whole (the journal checks follow).
	placeArgs := append(append([]string{"load", "--in-place"}, dbArgs(placeDB)...), pqPath)
	lr, err := runTraced(ctx, leadline, placeArgs, commitMark, 0)
	if err != nil {
		return fmt.Errorf("register in place: %w", err)
	}
	if lr.markSeconds < 0 {
		return fmt.Errorf("register in place: no %q line on its standard error; is %s a leadline with LEADLINE_TRACE?", commitMark, leadline)
	}
	placeCmd := "LEADLINE_TRACE=1 leadline " + joinArgs(placeArgs)
	results = append(results,
		benchResult{name: "register in place", command: placeCmd + " (to " + commitMark + ")", seconds: lr.markSeconds, peakMB: lr.markPeakMiB},
		benchResult{name: "load in place, whole", command: placeCmd, seconds: lr.seconds, peakMB: lr.peakMiB})
	fmt.Fprintf(e.stderr, "  %-20s %8.2fs  peak %7s MB\n  %-20s %8.2fs  peak %7.0f MB\n", "register in place", lr.markSeconds, mib(lr.markPeakMiB), "load in place, whole", lr.seconds, lr.peakMiB)
	if o.inPlaceOnly {
		return printInPlaceOnly(e, o, dir, results, sampler.stop())
	}
	if err := add(step("bare CSV read", append([]string{"bench-step", "bare-csv", csvPath}, dbArgs(":memory:")...)...)); err != nil {
		return err
	}
	copyDB := filepath.Join(dir, "copy.duckdb")
	os.Remove(copyDB)
	if err := add(step("copy CSV", append([]string{"bench-step", "copy-csv", csvPath}, dbArgs(copyDB)...)...)); err != nil {
		return err
	}
	os.Remove(copyDB)
	if err := add(step("load CSV", append(append([]string{"load"}, dbArgs(csvDB)...), csvPath)...)); err != nil {
		return err
	}
	if err := add(step("copy Parquet", append([]string{"bench-step", "copy-parquet", pqPath}, dbArgs(copyDB)...)...)); err != nil {
		return err
	}
	os.Remove(copyDB)
	if err := add(step("load Parquet", append(append([]string{"load"}, dbArgs(pqDB)...), pqPath)...)); err != nil {
		return err
	}
	if err := add(step("first-two GROUP BY", append([]string{"bench-step", "first-two", pqDB}, dbArgs(pqDB)[2:]...)...)); err != nil {
		return err
	}
	// The one-scan battery: the six tests that come from the one aggregate
	// scan. Second-order and number duplication are separate queries (a
	// sort and a GROUP BY amount), timed with the full default scan.
	const oneScan = "first,second,first_two,first_three,last_two,summation"
	if err := add(step("scan", append(append([]string{"scan"}, dbArgs(pqDB)...), "--tests", oneScan, "--format", "json")...)); err != nil {
		return err
	}
	if err := add(step("scan in place", append(append([]string{"scan"}, dbArgs(placeDB)...), "--tests", oneScan, "--format", "json")...)); err != nil {
		return err
	}
	if err := add(step("scan by segments", append(append([]string{"scan"}, dbArgs(pqDB)...), "--tests", oneScan, "--by", "entity", "--by", "account", "--by", "month", "--format", "json")...)); err != nil {
		return err
	}
	if err := add(step("scan, all tests", append(append([]string{"scan"}, dbArgs(pqDB)...), "--format", "json")...)); err != nil {
		return err
	}
	if err := add(step("duplicates", append(append([]string{"dups"}, dbArgs(pqDB)...), "--format", "json")...)); err != nil {
		return err
	}
	if err := add(step("drill", append(append([]string{"drill"}, dbArgs(pqDB)...), "--test", "first_two", "--bin", "18", "--group", "counterparty", "--format", "csv")...)); err != nil {
		return err
	}
	t := &tabular.Table{Columns: []string{"step", "seconds", "peak_mb", "rows_per_s", "command"}}
	by := map[string]benchResult{}
	for _, r := range results {
		by[r.name] = r
		rate := ""
		if r.name != "generate files" {
			rate = fmt.Sprintf("%.0f", float64(o.rows)/r.seconds)
		}
		t.Add(r.name, fmt.Sprintf("%.2f", r.seconds), fmt.Sprintf("%.0f", r.peakMB), rate, r.command)
	}
	fmt.Fprintf(e.stdout, "leadline bench: %d rows, %s\n\n", o.rows, dir)
	t.WriteText(e.stdout, 0)
	ratio := func(a, b string) float64 { return by[a].seconds / by[b].seconds }
	fmt.Fprintf(e.stdout, "\nRatios (and the sizing goals):\n")
	fmt.Fprintf(e.stdout, "  load CSV throughput / bare CSV read:         %.2f   (goal at least 0.8)\n", 1/ratio("load CSV", "bare CSV read"))
	fmt.Fprintf(e.stdout, "  load Parquet throughput / bare Parquet read: %.2f   (goal at least 0.8)\n", 1/ratio("load Parquet", "bare Parquet read"))
	fmt.Fprintf(e.stdout, "  register in place throughput / bare Parquet read: %.2f   (goal at least 0.5)\n", 1/ratio("register in place", "bare Parquet read"))
	fmt.Fprintf(e.stdout, "  register in place throughput / load Parquet: %.2f\n", 1/ratio("register in place", "load Parquet"))
	fmt.Fprintf(e.stdout, "  scan in place / scan:                        %.2f   (goal at most 1.5)\n", ratio("scan in place", "scan"))
	fmt.Fprintf(e.stdout, "  load CSV throughput / DuckDB's own copy:     %.2f   (the floor of any load: every column written)\n", 1/ratio("load CSV", "copy CSV"))
	fmt.Fprintf(e.stdout, "  load Parquet throughput / DuckDB's own copy: %.2f\n", 1/ratio("load Parquet", "copy Parquet"))
	fmt.Fprintf(e.stdout, "  scan / first-two GROUP BY:                   %.2f   (goal at most 1.3)\n", ratio("scan", "first-two GROUP BY"))
	fmt.Fprintf(e.stdout, "  scan by segments / scan:                     %.2f   (goal at most 1.5)\n", ratio("scan by segments", "scan"))
	peak := 0.0
	for _, r := range results {
		if r.peakMB > peak && r.name != "generate files" {
			peak = r.peakMB
		}
	}
	fmt.Fprintf(e.stdout, "  peak resident memory of any step:            %.0f MB (goal at most 2048 MB at 50,000,000 rows)\n", peak)
	fmt.Fprintln(e.stdout, "\nEach step is a whole process: its time includes starting and opening the workspace (about 0.1 s).")
	fmt.Fprintln(e.stdout, "register in place: the in-place load up to its commit, with its peak memory up to then; the journal checks and summary follow in the same process (load in place, whole).")
	fmt.Fprintf(e.stdout, "Mean one-minute load average of the machine over the run: %.1f (other work on the machine slows every step).\n", sampler.stop())
	return nil
}

// printInPlaceOnly prints the steps of bench --in-place-only and the
// in-place load's ratio to the bare read.
func printInPlaceOnly(e *env, o benchOptions, dir string, results []benchResult, load1 float64) error {
	t := &tabular.Table{Columns: []string{"step", "seconds", "peak_mb", "rows_per_s", "command"}}
	by := map[string]benchResult{}
	for _, r := range results {
		by[r.name] = r
		rate := ""
		if r.name != "generate files" {
			rate = fmt.Sprintf("%.0f", float64(o.rows)/r.seconds)
		}
		t.Add(r.name, fmt.Sprintf("%.2f", r.seconds), mib(r.peakMB), rate, r.command)
	}
	fmt.Fprintf(e.stdout, "leadline bench --in-place-only: %d rows, %s\n\n", o.rows, dir)
	t.WriteText(e.stdout, 0)
	bare := by["bare Parquet read"].seconds
	fmt.Fprintf(e.stdout, "\nRatios:\n")
	fmt.Fprintf(e.stdout, "  register in place throughput / bare Parquet read: %.2f   (goal at least 0.5)\n", bare/by["register in place"].seconds)
	fmt.Fprintf(e.stdout, "  load in place, whole (journal checks too) / bare Parquet read: %.2f\n", bare/by["load in place, whole"].seconds)
	fmt.Fprintln(e.stdout, "\nregister in place: the in-place load up to its commit, with its peak memory up to then; the journal checks and summary follow in the same process (load in place, whole).")
	fmt.Fprintf(e.stdout, "Mean one-minute load average of the machine over the run: %.1f (other work on the machine slows every step).\n", load1)
	return nil
}

func joinArgs(a []string) string {
	var b bytes.Buffer
	for i, s := range a {
		if i > 0 {
			b.WriteByte(' ')
		}
		b.WriteString(s)
	}
	return b.String()
}

func benchOneStep(ctx context.Context, e *env, db *stepDB, stepName, path string, rows int64) error {
	if stepName == "gen" || stepName == "gen-parquet" {
		cfg := fixtures.Config{Rows: rows, Seed: 2025, Plants: rows >= 10_000}
		if stepName == "gen" {
			if _, err := fixtures.WriteCSV(filepath.Join(path, "ledger.csv"), cfg); err != nil {
				return err
			}
		}
		_, err := fixtures.WriteParquet(filepath.Join(path, "ledger.parquet"), cfg)
		return err
	}
	if stepName == "first-two" {
		db.path = path
	}
	ws, err := workspace.Open(ctx, db.path, workspace.Options{ReadOnly: stepName == "first-two", MemoryLimit: db.memory, Threads: db.threads, TempDir: db.tempDir})
	if err != nil {
		return err
	}
	defer ws.Close()
	var q string
	switch stepName {
	case "bare-csv":
		q = queries.Render("bench_read_csv", map[string]string{"path": queries.QuoteString(path)})
	case "bare-parquet":
		q = queries.Render("bench_read_parquet", map[string]string{"path": queries.QuoteString(path)})
	case "copy-csv", "copy-parquet":
		// DuckDB's own copy of every column into the workspace file: the
		// floor of any load, which must write every column.
		reader := "read_parquet(" + queries.QuoteString(path) + ")"
		if stepName == "copy-csv" {
			reader = "read_csv(" + queries.QuoteString(path) + ", all_varchar = true)"
		}
		if _, err := ws.Conn.ExecContext(ctx, queries.Render("bench_copy_table", map[string]string{"reader": reader})); err != nil {
			return err
		}
		q = queries.Get("bench_copy_totals")
	case "first-two":
		q = queries.Get("bench_first_two")
	default:
		return fmt.Errorf("unknown step %q", stepName)
	}
	var n int64
	var s any
	if err := ws.Conn.QueryRowContext(ctx, q).Scan(&n, &s); err != nil {
		return err
	}
	fmt.Fprintln(e.stdout, n, s)
	return nil
}
