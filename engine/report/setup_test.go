package report

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/sensitivity"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
)

// demo is a workspace loaded from a generated ledger with every kind of
// run stored, shared by the tests of this package.
type demo struct {
	dir    string
	ws     *workspace.Workspace
	load   *load.Report
	scanID int64
	runIDs map[string]int64
	tests  []benford.Result // what the scan run stores, in order
}

var (
	demoOnce sync.Once
	demoWS   *demo
	demoErr  error
)

func TestMain(m *testing.M) {
	code := m.Run()
	if demoWS != nil {
		demoWS.ws.Close()
		os.RemoveAll(demoWS.dir)
	}
	os.Exit(code)
}

// sharedDemo builds the shared workspace once: 50,000 generated rows with
// the planted anomalies and 0.2% malformed amounts, loaded, then a scan,
// limit, range (by entity) and duplicates run stored.
func sharedDemo(t *testing.T) *demo {
	t.Helper()
	demoOnce.Do(func() { demoWS, demoErr = buildDemo() })
	if demoErr != nil {
		t.Fatal(demoErr)
	}
	return demoWS
}

func buildDemo() (*demo, error) {
	ctx := context.Background()
	dir, err := os.MkdirTemp("", "leadline-report-test-")
	if err != nil {
		return nil, err
	}
	d := &demo{dir: dir, runIDs: map[string]int64{}}
	cfg := fixtures.Config{Rows: 50_000, Seed: 1, Plants: true, BadAmountRate: 0.002, MessyAmounts: true}
	csvPath := filepath.Join(dir, "ledger.csv")
	if _, err := fixtures.WriteCSV(csvPath, cfg); err != nil {
		return nil, err
	}
	d.ws, err = workspace.Open(ctx, filepath.Join(dir, "ws.duckdb"), workspace.Options{Threads: 2})
	if err != nil {
		return nil, err
	}
	if d.load, err = load.Load(ctx, d.ws, []string{csvPath}, load.Options{}); err != nil {
		return nil, err
	}
	// The scan: the digit battery over the whole population and per
	// entity, stored as the scan command stores it.
	bat, err := battery.Run(ctx, d.ws, battery.Options{By: []string{"entity"}, MinSegmentRows: 1000})
	if err != nil {
		return nil, fmt.Errorf("battery: %w", err)
	}
	d.tests = bat.Tests
	if d.scanID, err = saveRun(ctx, d.ws, "scan", bat); err != nil {
		return nil, err
	}
	d.runIDs["scan"] = d.scanID
	lim, err := limits.Run(ctx, d.ws, limits.Options{})
	if err != nil {
		return nil, fmt.Errorf("limits: %w", err)
	}
	if d.runIDs["limits"], err = saveRun(ctx, d.ws, "limits", lim); err != nil {
		return nil, err
	}
	rng, err := ranges.Run(ctx, d.ws, ranges.Options{By: []string{"entity"}})
	if err != nil {
		return nil, fmt.Errorf("ranges: %w", err)
	}
	if d.runIDs["ranges"], err = saveRun(ctx, d.ws, "ranges", rng); err != nil {
		return nil, err
	}
	so := sensitivity.Options{Kind: sensitivity.BelowLimit, Limit: 5000, Seeds: 5, Rates: []float64{0, 0.01, 0.05}}
	if err := so.Validate(); err != nil {
		return nil, err
	}
	pop, err := sensitivity.FromWorkspace(ctx, d.ws, population.Spec{}.WithDefaults(), so)
	if err != nil {
		return nil, fmt.Errorf("sensitivity: %w", err)
	}
	sens, err := sensitivity.Run(pop, so)
	if err != nil {
		return nil, fmt.Errorf("sensitivity: %w", err)
	}
	if d.runIDs["sensitivity"], err = saveRun(ctx, d.ws, "sensitivity", sens); err != nil {
		return nil, err
	}
	dup, err := duplicates.Run(ctx, d.ws, duplicates.Options{})
	if err != nil {
		return nil, fmt.Errorf("duplicates: %w", err)
	}
	if err := duplicates.Save(ctx, d.ws, dup); err != nil {
		return nil, err
	}
	d.runIDs["duplicates"] = dup.RunID
	return d, nil
}

func saveRun(ctx context.Context, ws *workspace.Workspace, kind string, doc any) (int64, error) {
	return ws.SaveRun(ctx, workspace.Run{Kind: kind, Started: time.Now(), Params: struct{}{}, Result: doc})
}
