package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"time"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
	"github.com/spf13/pflag"
)

// benchData says where bench-battery and bench-dups keep their generated
// ledger and workspace.
type benchData struct {
	dir, prefix, memory string
	keep                bool
	rows                int64
	seed                uint64
	threads, repeat     int
}

// add registers the flags of the generated data, the workspace and the
// number of runs of each timed step.
func (d *benchData) add(fs *pflag.FlagSet, repeat int) {
	fs.IntVar(&d.repeat, "repeat", repeat, "runs of each timed step")
	fs.Int64Var(&d.rows, "rows", 20_000_000, "rows to generate")
	fs.Uint64Var(&d.seed, "seed", 2025, "random seed of the generated ledger")
	fs.StringVar(&d.dir, "dir", "", "work folder (default: a temporary folder, removed afterwards)")
	fs.BoolVar(&d.keep, "keep", false, "keep the work folder's Parquet file and workspace, and reuse them when present")
	fs.IntVar(&d.threads, "threads", 0, "DuckDB worker threads (default: one per core)")
	fs.StringVar(&d.memory, "memory-limit", "", "DuckDB memory limit, e.g. 4GB")
}

func (d *benchData) check() error {
	if d.rows < 10_000 || d.repeat < 1 {
		return fmt.Errorf("give --rows 10000 or more and --repeat 1 or more")
	}
	return nil
}

// openBenchWorkspace generates the Parquet ledger and loads it into a
// workspace (or reuses both with keep), and returns the workspace, the
// folder, the timed preparation steps (not the benchmark) and a cleanup to
// defer.
func openBenchWorkspace(ctx context.Context, e *env, d benchData) (*workspace.Workspace, string, []benchStep, func(), error) {
	dir := d.dir
	cleanup := func() {}
	if dir == "" {
		t, err := os.MkdirTemp("", d.prefix)
		if err != nil {
			return nil, "", nil, nil, err
		}
		dir = t
		if !d.keep {
			cleanup = func() { os.RemoveAll(t) }
		}
	} else if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, "", nil, nil, err
	}
	pq := filepath.Join(dir, fmt.Sprintf("ledger_%d_%d.parquet", d.rows, d.seed))
	dbPath := filepath.Join(dir, fmt.Sprintf("bench_%d_%d.duckdb", d.rows, d.seed))
	var steps []benchStep
	reuse := d.keep && benchFileExists(pq) && benchFileExists(dbPath)
	if !reuse {
		os.Remove(dbPath)
		fmt.Fprintf(e.stderr, "generating %d rows to %s ...\n", d.rows, pq)
		t0 := time.Now()
		if _, err := fixtures.WriteParquet(pq, fixtures.Config{Rows: d.rows, Seed: d.seed, Plants: true}); err != nil {
			cleanup()
			return nil, "", nil, nil, err
		}
		steps = append(steps, benchStep{Step: "generate (not the benchmark)", Command: "fixtures.WriteParquet", Runs: []float64{time.Since(t0).Seconds()}})
	}
	ws, err := workspace.Open(ctx, dbPath, workspace.Options{Threads: d.threads, MemoryLimit: d.memory})
	if err != nil {
		cleanup()
		return nil, "", nil, nil, err
	}
	done := func() { ws.Close(); cleanup() }
	if !reuse {
		fmt.Fprintf(e.stderr, "loading ...\n")
		t0 := time.Now()
		rep, err := load.Load(ctx, ws, []string{pq}, load.Options{})
		if err != nil {
			done()
			return nil, "", nil, nil, err
		}
		steps = append(steps, benchStep{Step: "load (not the benchmark)", Command: "leadline load " + filepath.Base(pq),
			Runs: []float64{time.Since(t0).Seconds()}, Result: fmt.Sprintf("%s rows loaded", numfmt.Int(rep.RowsLoaded))})
	}
	return ws, dir, steps, done, nil
}

// benchStep is one timed step: every run's wall time and the last run's
// result in words.
type benchStep struct {
	Step    string    `json:"step"`
	Command string    `json:"command"`
	Runs    []float64 `json:"seconds"`
	Result  string    `json:"result"`
}

// fastest is the step's shortest run, the figure ratios are taken from.
func (s benchStep) fastest() float64 { return slices.Min(s.Runs) }

// timeStep runs fn d.repeat times, telling e.stderr, and appends the step.
func (d benchData) timeStep(e *env, steps *[]benchStep, name, cmd string, fn func() (string, error)) error {
	st := benchStep{Step: name, Command: cmd}
	for i := 0; i < d.repeat; i++ {
		fmt.Fprintf(e.stderr, "%s (run %d of %d) ...\n", name, i+1, d.repeat)
		t0 := time.Now()
		res, err := fn()
		if err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		st.Runs = append(st.Runs, time.Since(t0).Seconds())
		st.Result = res
	}
	*steps = append(*steps, st)
	return nil
}

// threadsUsed is the DuckDB thread count of the run (by default one per core).
func (d benchData) threadsUsed() int {
	if d.threads == 0 {
		return runtime.NumCPU()
	}
	return d.threads
}

// describe is the JSON document's common part; the caller adds its own keys.
func (d benchData) describe(rows int64, duckdbVersion string, steps []benchStep) map[string]any {
	return map[string]any{"rows": rows, "seed": d.seed, "repeat": d.repeat, "threads": d.threadsUsed(), "cpus": runtime.NumCPU(),
		"duckdb": duckdbVersion, "leadline": version(), "steps": steps}
}

// printSteps writes the steps as CSV, or as a text table under a line that
// says what ran on how many rows and threads; after returns nil for CSV.
func (d benchData) printSteps(w io.Writer, format, what string, rows int64, duckdbVersion string, steps []benchStep) error {
	t := &tabular.Table{Columns: []string{"step", "fastest_s", "slowest_s", "result", "command"}}
	for _, s := range steps {
		t.Add(s.Step, fmt.Sprintf("%.2f", s.fastest()), fmt.Sprintf("%.2f", slices.Max(s.Runs)), s.Result, s.Command)
	}
	if format == "csv" {
		return t.WriteCSV(w)
	}
	fmt.Fprintf(w, "%s on %s generated rows (seed %d), %d run(s) each, %d DuckDB threads on %d CPUs, DuckDB %s\n\n",
		what, numfmt.Int(rows), d.seed, d.repeat, d.threadsUsed(), runtime.NumCPU(), duckdbVersion)
	return t.WriteText(w, 0)
}

// printKept says where the kept files are.
func (d benchData) printKept(w io.Writer, dir string) {
	if d.keep {
		fmt.Fprintf(w, "\nKept in %s (rerun with the same --dir --keep to skip generating and loading)\n", dir)
	}
}
