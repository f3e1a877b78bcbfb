package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
	"github.com/leadline/leadline/queries/packs"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "demo",
		summary: "generate a synthetic group ledger, run the demo pack on it and write the results and report",
		usage: `Usage: leadline demo [options]

Generates a whole-year ledger for an invented group of five companies (the
Skerrimoor Kelp Group; fixtures/README.md has the scenario and the answer key
of what was planted) and the group's trial balance, writes the demo pack
beside them, and runs that pack: load with completeness checks (the journal
checks and the reconciliation with the trial balance among them), the digit
battery per entity, source and user, the limit probe, the range table, the
duplicate tests, drill-down extracts and three journal-entry checks. The output folder gets the
workbook, CSV and Parquet tables, results.json, manifest.json and
report.html. Everything is deterministic from --seed.

--scenario threshold instead writes the worked example of the limit probe:
500,000 amounts from a scale-invariant population (log-uniform from 10 to
1,000,000) over 50 cost centres, plus 10% more amounts uniform in
[2,000, 5,000) in cost centre CC07, as if entries were kept under a 5,000
approval limit; it loads them into a workspace and prints the commands
that find the injection.

Examples:
  leadline demo                                # 1,000,000 rows into ./leadline-demo
  leadline demo --rows 200000 --out demo-small
  leadline demo --scenario threshold --out threshold`,
		flags: thin(demoFlags, runDemoCmd),
	})
}

// demoFlags registers demo's flags; the function it returns checks them.
func demoFlags(fs *pflag.FlagSet) func(args []string) (demoOptions, error) {
	var o demoOptions
	fs.Int64Var(&o.rows, "rows", 1_000_000, "ledger rows to generate")
	fs.Uint64Var(&o.seed, "seed", 2025, "random seed of the generated ledger")
	fs.StringVar(&o.out, "out", "leadline-demo", "output folder (created; an earlier demo there is replaced)")
	fs.Float64Var(&o.badRate, "bad-rate", 0.001, "share of CSV rows written with a malformed amount, to show rejects")
	fs.StringVar(&o.scenario, "scenario", "", "threshold: the limit probe's worked example instead of the group ledger")
	return func(args []string) (demoOptions, error) {
		if len(args) > 0 {
			return o, fmt.Errorf("demo takes no arguments (see --help)")
		}
		if o.scenario != "" && o.scenario != "threshold" {
			return o, fmt.Errorf("--scenario %q: the only scenario is threshold", o.scenario)
		}
		return o, nil
	}
}

// runDemoCmd runs the scenario the options name.
func runDemoCmd(ctx context.Context, e *env, o demoOptions) error {
	if o.scenario == "threshold" {
		return runThresholdDemo(ctx, e, o)
	}
	return runDemo(ctx, e, o)
}

// demoOptions are what demo's flags ask for.
type demoOptions struct {
	rows     int64
	seed     uint64
	out      string
	badRate  float64
	scenario string
}

// demoXLSXRows is the size of the demo's workbook extract: a spreadsheet
// export of a few thousand journal lines, as clients send them.
const demoXLSXRows = 5_000

// centsText writes cents as a decimal with two places (-123456 -> -1234.56).
func centsText(c int64) string {
	sign := ""
	if c < 0 {
		sign, c = "-", -c
	}
	return fmt.Sprintf("%s%d.%02d", sign, c/100, c%100)
}

// The demo pack names this file and this workspace (queries/packs/demo.toml).
const (
	demoLedger        = "skerrimoor_ledger_2025.csv"
	demoLedgerParquet = "skerrimoor_ledger_2025.parquet"
	demoPack          = "skerrimoor-fy2025.toml"
)

func runDemo(ctx context.Context, e *env, o demoOptions) error {
	start := time.Now()
	if o.rows < 10_000 {
		return fmt.Errorf("--rows %d: the demo needs at least 10,000 rows to plant its anomalies", o.rows)
	}
	if err := os.MkdirAll(o.out, 0o755); err != nil {
		return err
	}
	csvPath := filepath.Join(o.out, demoLedger)
	fmt.Fprintf(e.stdout, "Generating %d ledger rows of the Skerrimoor Kelp Group, 2025 (seed %d) ...\n", o.rows, o.seed)
	cfg := fixtures.Config{Rows: o.rows, Seed: o.seed, Plants: true, BadAmountRate: o.badRate, MessyAmounts: true}
	sum, err := fixtures.WriteCSV(csvPath, cfg)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "  %s: %d rows, %d of them with a deliberately malformed amount (%.1fs)\n", csvPath, sum.Rows, sum.BadRows, time.Since(start).Seconds())
	// The same rows as Parquet, typed (no malformed amounts), for the
	// in-place and count-elsewhere flows: not part of the pack.
	pqPath := filepath.Join(o.out, demoLedgerParquet)
	if _, err := fixtures.WriteParquet(pqPath, fixtures.Config{Rows: o.rows, Seed: o.seed, Plants: true}); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "  the same rows as Parquet, amounts typed: %s (not part of the pack: for leadline load --in-place)\n", pqPath)
	tbPath := filepath.Join(o.out, fixtures.TrialBalanceFile)
	if err := fixtures.WriteTrialBalance(tbPath, o.seed, sum); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "  the group's trial balance: %s (%d entity/account lines)\n", tbPath, len(sum.NetPerAccount))
	xlsxPath := filepath.Join(o.out, fixtures.XLSXFile)
	xlsxRows, xlsxCents, xlsxPositive, err := fixtures.WriteXLSX(xlsxPath, fixtures.Config{Rows: demoXLSXRows, Seed: o.seed})
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "  a workbook extract as a client might send one: %s (%d rows; not part of the pack: try leadline inspect on it)\n",
		xlsxPath, xlsxRows)
	packPath := filepath.Join(o.out, demoPack)
	if err := os.WriteFile(packPath, packs.Demo(), 0o644); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "  demo pack: %s\n\n", packPath)
	results := filepath.Join(o.out, "results")
	if err := os.RemoveAll(results); err != nil {
		return err
	}
	if err := runPack(ctx, e, runCmdOptions{pack: packPath, out: results, fresh: true, format: "text"}); err != nil {
		return err
	}
	abs, _ := filepath.Abs(results)
	fmt.Fprintf(e.stdout, `
What was planted, and where leadline shows it (answer key: fixtures/README.md):
  - user wtennick in HAUL posts supplier invoices just under a 5,000 limit:
      limit probe by entity (HAUL at 5,000) and the first-two digits test by user_id (wtennick, bins 45-49)
  - Varrowick Net Mending is invoiced 1,847.23 again and again:
      duplicates, same amount and counterparty (the top group), and number duplication
  - gwrenby refunds 250.00 to many different customers:
      duplicates, one amount spread across many counterparties
  - the ALGN payment run pays some suppliers twice within days:
      duplicates, same amount and counterparty within the day window
  - line 1 of a few SHOR supplier invoices appears twice:
      the journal checks of the completeness section (repeated line keys, documents that do not balance)
  - GILD's fee billing (source FEE) charges five fixed prices:
      the digit battery by source: FEE is nonconforming with more than ten flagged bins,
      a population that should not follow Benford's law at all
Not planted, but built into the generated ranges: GILD's invoices, receipts and payments
stop below 10,000, SHOR's receipts and all expense claims below 1,000; the limit probe
shows those edges (GILD at 10,000, SHOR at 1,000), as it would a client's price cap.

Data where it lives: leadline load --in-place --db %s %s
registers the Parquet copy without copying its rows (then scan, limits, ranges and drill
as on any workspace, and leadline verify hashes it again); leadline count-sql prints the
battery's counting query for DuckDB, PostgreSQL or ClickHouse (README, Beyond one machine).

Intake of a workbook: leadline inspect %s
prints the load command for it (the sheet, its header row under the title, date cells);
loaded whole, its positive amounts sum to %s and its net to %s.

Open %s in a browser for the report, or %s for the workbook.
Demo finished in %.1fs. Results are signals for follow-up, never proof.
`, filepath.Join(o.out, "in-place.duckdb"), pqPath, xlsxPath, numfmt.Money(centsText(xlsxPositive)), numfmt.Money(centsText(xlsxCents)), filepath.Join(abs, "report.html"), filepath.Join(abs, "results.xlsx"), time.Since(start).Seconds())
	return nil
}

// runThresholdDemo writes and loads the limit probe's worked example.
func runThresholdDemo(ctx context.Context, e *env, o demoOptions) error {
	if err := os.MkdirAll(o.out, 0o755); err != nil {
		return err
	}
	csvPath := filepath.Join(o.out, "threshold.csv")
	injected, err := fixtures.WriteThresholdCSV(csvPath, fixtures.ThresholdScenario{Base: 500_000, Share: 0.10, Seed: o.seed, Segments: 50})
	if err != nil {
		return err
	}
	db := filepath.Join(o.out, "threshold.duckdb")
	for _, p := range []string{db, db + ".wal"} {
		os.Remove(p)
	}
	fmt.Fprintf(e.stdout, "Wrote %s: 500,000 log-uniform amounts over 50 cost centres, plus %d uniform in [2000, 5000) in %s.\n\n", csvPath, injected, fixtures.InjectedSegment)
	ws, err := workspace.Open(ctx, db, workspace.Options{})
	if err != nil {
		return err
	}
	defer ws.Close()
	rep, err := load.Load(ctx, ws, []string{csvPath}, load.Options{})
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "Loaded %d rows into %s. Now try:\n", rep.RowsLoaded, db)
	for _, c := range []string{
		"scan --tests first_two",
		"limits",
		"ranges --width 500 --from 0 --to 20000",
		"scan --tests first_two --by cost_centre",
		"limits --by cost_centre",
		"drill --range 2000:5000 --group cost_centre",
	} {
		fmt.Fprintf(e.stdout, "  leadline %s --db %s\n", c, db)
	}
	return nil
}
