package spilltest

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
)

// results runs the battery, the duplicate tests and one drill and returns
// their results as JSON, without the timings.
func results(t *testing.T, ws *workspace.Workspace) (bat, dup, dr []byte) {
	t.Helper()
	ctx := context.Background()
	rep, err := battery.Run(ctx, ws, battery.Options{})
	if err != nil {
		t.Fatal(err)
	}
	rep.Seconds = battery.Timing{}
	rep.RunID = 0
	bat, _ = json.Marshal(rep)
	res, err := duplicates.Run(ctx, ws, duplicates.Options{WindowDays: 8})
	if err != nil {
		t.Fatal(err)
	}
	for i := range res.Tests {
		res.Tests[i].Seconds = 0
	}
	dup, _ = json.Marshal(res.Tests)
	bin := 18
	b, err := drill.Build(ctx, ws, drill.Selection{Test: "first_two", Bin: &bin})
	if err != nil {
		t.Fatal(err)
	}
	g, err := drill.Group(ctx, ws, b, drill.GroupOptions{Column: "counterparty"})
	if err != nil {
		t.Fatal(err)
	}
	dr, _ = json.Marshal(g)
	return bat, dup, dr
}

// TestSameResultsUnderMemoryLimit: 5,000,000 rows (LEADLINE_SPILL_ROWS to
// change), first with DuckDB's default memory limit, then with 256 MB.
func TestSameResultsUnderMemoryLimit(t *testing.T) {
	if testing.Short() {
		t.Skip("loads millions of rows")
	}
	rows := int64(5_000_000)
	if s := os.Getenv("LEADLINE_SPILL_ROWS"); s != "" {
		n, err := strconv.ParseInt(s, 10, 64)
		if err != nil {
			t.Fatal(err)
		}
		rows = n
	}
	ctx := context.Background()
	dir := t.TempDir()
	pq := filepath.Join(dir, "ledger.parquet")
	if _, err := fixtures.WriteParquet(pq, fixtures.Config{Rows: rows, Seed: 9, Plants: true}); err != nil {
		t.Fatal(err)
	}
	db := filepath.Join(dir, "w.duckdb")
	ws, err := workspace.Open(ctx, db, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := load.Load(ctx, ws, []string{pq}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	b1, d1, r1 := results(t, ws)
	ws.Close()

	spill := filepath.Join(dir, "spill")
	small, err := workspace.Open(ctx, db, workspace.Options{MemoryLimit: "256MB", TempDir: spill, Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	defer small.Close()
	var limit string
	small.Conn.QueryRowContext(ctx, "SELECT current_setting('memory_limit')").Scan(&limit)
	t.Logf("memory limit in force: %s", limit)
	b2, d2, r2 := results(t, small)
	for _, c := range []struct {
		name string
		a, b []byte
	}{{"battery", b1, b2}, {"duplicates", d1, d2}, {"drill", r1, r2}} {
		if string(c.a) != string(c.b) {
			t.Errorf("%s differs under a 256 MB memory limit", c.name)
		}
		if len(c.a) < 100 {
			t.Errorf("%s result suspiciously small: %s", c.name, c.a)
		}
	}
}
