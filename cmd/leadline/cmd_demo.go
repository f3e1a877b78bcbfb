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

func init() {
	register(&command{
		name:    "demo",
		summary: "generate a synthetic group ledger, load it and show what leadline finds",
		usage: `Usage: leadline demo [options]

Generates a synthetic whole-year ledger for an invented group of companies
(see fixtures/README.md for the scenario and the answer key of what was
planted), loads it into a fresh workspace in the output folder and prints
the completeness summary. Everything is deterministic from --seed.

Examples:
  leadline demo
  leadline demo --rows 200000 --out demo-small`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var rows int64
			var seed uint64
			var out string
			var bad float64
			fs.Int64Var(&rows, "rows", 1_000_000, "ledger rows to generate")
			fs.Uint64Var(&seed, "seed", 2025, "random seed of the generated ledger")
			fs.StringVar(&out, "out", "leadline-demo", "output folder (created; its workspace is replaced)")
			fs.Float64Var(&bad, "bad-rate", 0.001, "share of CSV rows written with a malformed amount, to show rejects")
			return func(ctx context.Context, args []string, e *env) error {
				if len(args) > 0 {
					return fmt.Errorf("demo takes no arguments (see --help)")
				}
				return runDemo(ctx, e, demoOptions{rows: rows, seed: seed, out: out, badRate: bad})
			}
		},
	})
}

type demoOptions struct {
	rows    int64
	seed    uint64
	out     string
	badRate float64
}

func runDemo(ctx context.Context, e *env, o demoOptions) error {
	start := time.Now()
	if err := os.MkdirAll(o.out, 0o755); err != nil {
		return err
	}
	csvPath := filepath.Join(o.out, "skerrimoor_ledger_2025.csv")
	dbPath := filepath.Join(o.out, "demo.duckdb")
	for _, p := range []string{dbPath, dbPath + ".wal"} {
		if err := os.Remove(p); err != nil && !os.IsNotExist(err) {
			return err
		}
	}
	fmt.Fprintf(e.stdout, "Generating %d ledger rows (seed %d) into %s ...\n", o.rows, o.seed, csvPath)
	cfg := fixtures.Config{Rows: o.rows, Seed: o.seed, Plants: true, BadAmountRate: o.badRate, MessyAmounts: true}
	sum, err := fixtures.WriteCSV(csvPath, cfg)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "  %d rows written (%d with a deliberately malformed amount) in %.1fs\n\n", sum.Rows, sum.BadRows, time.Since(start).Seconds())
	ws, err := workspace.Open(ctx, dbPath, workspace.Options{})
	if err != nil {
		return err
	}
	defer ws.Close()
	rep, err := load.Load(ctx, ws, []string{csvPath}, load.Options{})
	if err != nil {
		return err
	}
	if err := printLoad(e.stdout, "text", rep); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "\nDemo finished in %.1fs. Workspace: %s\n", time.Since(start).Seconds(), dbPath)
	fmt.Fprintf(e.stdout, "Try: go run ./cmd/leadline sql --db %s \"SELECT entity, count(*) FROM ledger GROUP BY ALL ORDER BY 1\"\n", dbPath)
	return nil
}
