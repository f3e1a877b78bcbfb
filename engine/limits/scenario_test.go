package limits

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
)

// The worked limit-clustering scenario (fixtures.ThresholdScenario), built here from a seed (invented test
// data): 500,000 amounts log-uniform over [10, 10^6) (five whole decades:
// a scale-invariant population), then 10% more amounts (50,000) uniform in
// [2000, 5000): entries kept under a 5,000 limit.
const (
	scenarioBase     = 500000
	scenarioInjected = 50000
	scenarioSeed     = 4
)

// ledgerRow is one generated row: a segment and an amount in cents.
type ledgerRow struct {
	entity string
	cents  int64
}

// injectCents returns n amounts in cents uniform in [lo, hi) currency units.
func injectCents(rng *rand.Rand, n int, lo, hi float64) []int64 {
	out := make([]int64, n)
	span := int64((hi - lo) * 100)
	for i := range out {
		out[i] = int64(lo*100) + rng.Int64N(span)
	}
	return out
}

// writeLedger writes rows as a CSV file (entity, amount) and loads it
// into a new workspace with engine/load.
func writeLedger(t testing.TB, rows []ledgerRow) *workspace.Workspace {
	t.Helper()
	dir := t.TempDir()
	path := filepath.Join(dir, "ledger.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(f)
	fmt.Fprintln(w, "entity,amount")
	for _, r := range rows {
		fmt.Fprintf(w, "%s,%d.%02d\n", r.entity, r.cents/100, r.cents%100)
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	ctx := context.Background()
	ws, err := workspace.Open(ctx, filepath.Join(dir, "ws.duckdb"), workspace.Options{Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	rep, err := load.Load(ctx, ws, []string{path}, load.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsLoaded != int64(len(rows)) || rep.RowsRejected != 0 {
		t.Fatalf("loaded %d of %d rows, %d rejected", rep.RowsLoaded, len(rows), rep.RowsRejected)
	}
	return ws
}

// scenarioRows builds the worked scenario (with or without the injection),
// the entity column spread over five entities.
func scenarioRows(seed uint64, inject bool) []ledgerRow {
	base := fixtures.LogUniformAmounts(scenarioBase, 10, 1e6, seed)
	rows := make([]ledgerRow, 0, scenarioBase+scenarioInjected)
	for i, c := range base {
		rows = append(rows, ledgerRow{fmt.Sprintf("E%d", i%5), c})
	}
	if inject {
		rng := rand.New(rand.NewPCG(seed, 0x1e4d))
		for i, c := range injectCents(rng, scenarioInjected, 2000, 5000) {
			rows = append(rows, ledgerRow{fmt.Sprintf("E%d", i%5), c})
		}
	}
	return rows
}
