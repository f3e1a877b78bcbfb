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
