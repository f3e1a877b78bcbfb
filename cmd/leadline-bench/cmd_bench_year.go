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
	"github.com/leadline/leadline/fixtures"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "bench-year",
		summary: "a year of ledger rows as Parquet files in place: register them, run the six-test battery, report wall time and peak memory",
		usage: `Usage: leadline-bench bench-year [options]

The billion-row benchmark: generates --rows ledger rows (1,000,000,000 by
default) as several Parquet files of --rows-per-file rows each, written as
a stream (row groups of fixed size, so the generator's memory does not
grow with the rows), then runs, each as its own leadline process:

  register in place   leadline load --in-place DIR/year-*.parquet
  battery             leadline scan --tests first,second,first_two,first_three,last_two,summation

and reports each step's wall time and peak resident memory (the leadline
process's maximum RSS, from the operating system's accounting), with the
battery's goal for a billion rows: under 60 s and under 2 GiB. Below a
billion rows it also prints a linear extrapolation of the battery's time
to a billion rows, labelled as an estimate: a measurement at a billion
rows is the only figure to quote.

Generating a billion rows writes about 9 GB of Parquet files and takes
hours on two cores: give --dir on a disk with the room and --keep to reuse
the files (they are regenerated only when missing). Not part of CI.

Examples:
  go build -o leadline ./cmd/leadline
  go run ./cmd/leadline-bench bench-year --rows 10000000 --leadline ./leadline
  leadline-bench bench-year --dir /data/year --keep      # 1,000,000,000 rows`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var o benchYearOptions
			fs.Int64Var(&o.rows, "rows", 1_000_000_000, "ledger rows to generate")
			fs.Int64Var(&o.perFile, "rows-per-file", 50_000_000, "rows in each Parquet file")
			fs.StringVar(&o.dir, "dir", "", "work folder (default: a temporary folder, removed afterwards)")
			fs.BoolVar(&o.keep, "keep", false, "keep the work folder and reuse its generated files")
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
				return runBenchYear(ctx, e, o, f.value)
			}
		},
	})
}

type benchYearOptions struct {
	rows, perFile         int64
	dir, memory, leadline string
	threads               int
	keep                  bool
}

// yearBatteryTests are the six tests fed by the battery's one aggregate
// scan.
const yearBatteryTests = "first,second,first_two,first_three,last_two,summation"

func runBenchYear(ctx context.Context, e *env, o benchYearOptions, format string) error {
	self, err := os.Executable()
	if err != nil {
		return err
	}
	leadline, err := findLeadline(o.leadline, self)
	if err != nil {
		return err
	}
	dir := o.dir
	if dir == "" {
		if dir, err = os.MkdirTemp("", "leadline-year-"); err != nil {
			return err
		}
		if !o.keep {
			defer os.RemoveAll(dir)
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	fmt.Fprintf(e.stderr, "Benchmark in %s: %d rows in files of %d\n", dir, o.rows, o.perFile)

	// Generate the files (reused with --keep when all are there, each
	// named by its rows and seed).
	t0 := time.Now()
	var files []string
	generated := false
	for i, left := 0, o.rows; left > 0; i++ {
		n := min(left, o.perFile)
		left -= n
		p := filepath.Join(dir, fmt.Sprintf("year-%04d-%d.parquet", i, n))
		files = append(files, p)
		if _, err := os.Stat(p); err == nil && o.keep {
			continue
		}
		generated = true
		tmp := p + ".part"
		if _, err := fixtures.WriteParquet(tmp, fixtures.Config{Rows: n, Seed: 2025 + uint64(i), Plants: n >= 10_000}); err != nil {
			return err
		}
		if err := os.Rename(tmp, p); err != nil {
			return err
		}
		fmt.Fprintf(e.stderr, "  generated %s (%.0f s so far)\n", filepath.Base(p), time.Since(t0).Seconds())
	}
	genSeconds := time.Since(t0).Seconds()
	var bytesOnDisk int64
	for _, p := range files {
		if st, err := os.Stat(p); err == nil {
			bytesOnDisk += st.Size()
		}
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
	reg, err := yearStep(ctx, e, leadline, "register in place", append(append([]string{"load", "--in-place"}, dbArgs...), filepath.Join(dir, "year-*.parquet")))
	if err != nil {
		return err
	}
	bat, err := yearStep(ctx, e, leadline, "battery", append(append([]string{"scan"}, dbArgs...), "--tests", yearBatteryTests, "--format", "json"))
	if err != nil {
		return err
	}

	const billion = 1_000_000_000
	doc := map[string]any{
		"rows": o.rows, "files": len(files), "rows_per_file": o.perFile, "parquet_bytes": bytesOnDisk,
		"generate_seconds": genSeconds, "generated": generated,
		"steps": []map[string]any{reg.json(), bat.json()},
		"goal":  map[string]any{"rows": billion, "battery_seconds": 60, "peak_mib": 2048},
	}
	est := bat.seconds * billion / float64(o.rows)
	if o.rows != billion {
		doc["battery_seconds_at_a_billion_estimate"] = est
	}
	if format == "json" {
		return writeJSON(e.stdout, doc)
	}
	t := &tabular.Table{Name: "bench-year", Columns: []string{"step", "seconds", "peak_mib", "rows_per_s", "command"}}
	for _, r := range []yearResult{reg, bat} {
		t.Add(r.name, fmt.Sprintf("%.2f", r.seconds), fmt.Sprintf("%.0f", r.peakMiB), fmt.Sprintf("%.0f", float64(o.rows)/r.seconds), r.command)
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
	fmt.Fprintf(e.stdout, "\nBattery (six tests, one aggregate scan): %.2f s, peak %.0f MiB of the leadline process.\n", bat.seconds, bat.peakMiB)
	if o.rows == billion {
		fmt.Fprintf(e.stdout, "Goal at a billion rows: under 60 s (%s) and under 2048 MiB (%s).\n", pass(bat.seconds < 60), pass(bat.peakMiB < 2048))
	} else {
		fmt.Fprintf(e.stdout, "ESTIMATE, not a measurement: at 1,000,000,000 rows the battery would take about %.0f s if its time grew in proportion to the rows (goal: under 60 s). Run with --rows 1000000000 to measure it.\n", est)
	}
	return nil
}

func pass(ok bool) string {
	if ok {
		return "met"
	}
	return "NOT met"
}

// yearResult is one leadline process: wall time and peak resident memory.
type yearResult struct {
	name, command    string
	seconds, peakMiB float64
}

func (r yearResult) json() map[string]any {
	return map[string]any{"step": r.name, "command": r.command, "seconds": r.seconds, "peak_mib": r.peakMiB}
}

// yearStep runs leadline with args as its own process and measures it.
func yearStep(ctx context.Context, e *env, leadline, name string, args []string) (yearResult, error) {
	cmd := exec.CommandContext(ctx, leadline, args...)
	cmd.Env = append(os.Environ(), "LEADLINE_NO_PROGRESS=1")
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	t0 := time.Now()
	err := cmd.Run()
	r := yearResult{name: name, command: "leadline " + joinArgs(args), seconds: time.Since(t0).Seconds()}
	if cmd.ProcessState != nil {
		if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
			r.peakMiB = float64(ru.Maxrss) / 1024 // Linux reports KiB
		}
	}
	if err != nil {
		return r, fmt.Errorf("%s: %v\n%s", name, err, errb.String())
	}
	fmt.Fprintf(e.stderr, "  %-18s %8.2fs  peak %7.0f MiB\n", name, r.seconds, r.peakMiB)
	return r, nil
}
