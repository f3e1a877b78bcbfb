package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/leadline/leadline/engine/load"
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
	threads             int
}

// add registers the flags of the generated data and the workspace.
func (d *benchData) add(fs *pflag.FlagSet) {
	fs.Int64Var(&d.rows, "rows", 20_000_000, "rows to generate")
	fs.Uint64Var(&d.seed, "seed", 2025, "random seed of the generated ledger")
	fs.StringVar(&d.dir, "dir", "", "work folder (default: a temporary folder, removed afterwards)")
	fs.BoolVar(&d.keep, "keep", false, "keep the work folder's Parquet file and workspace, and reuse them when present")
	fs.IntVar(&d.threads, "threads", 0, "DuckDB worker threads (default: one per core)")
	fs.StringVar(&d.memory, "memory-limit", "", "DuckDB memory limit, e.g. 4GB")
}

func (d *benchData) check(repeat int) error {
	if d.rows < 10_000 || repeat < 1 {
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
			Runs: []float64{time.Since(t0).Seconds()}, Result: fmt.Sprintf("%s rows loaded", drillCount(rep.RowsLoaded))})
	}
	return ws, dir, steps, done, nil
}
