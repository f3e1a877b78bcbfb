package report

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/ranges"
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
// limit, range and duplicates run stored.
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
	// The scan: digit tests from the generated amounts (positive amounts
	// of 10 or more, digits of the exact cents).
	tests, err := digitResults(cfg)
	if err != nil {
		return nil, err
	}
	d.tests = tests
	scanDoc := map[string]any{"kind": "scan", "population": map[string]any{"signs": "positive", "min": "10"}, "tests": tests}
	if d.scanID, err = saveRun(ctx, d.ws, "scan", scanDoc); err != nil {
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
	rng, err := ranges.Run(ctx, d.ws, ranges.Options{})
	if err != nil {
		return nil, fmt.Errorf("ranges: %w", err)
	}
	if d.runIDs["ranges"], err = saveRun(ctx, d.ws, "ranges", rng); err != nil {
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
	b, err := json.Marshal(doc)
	if err != nil {
		return 0, err
	}
	return ws.SaveRun(ctx, kind, time.Now(), []byte(`{}`), b)
}

// digitResults computes the digit tests of the generated positive amounts
// of 10 or more straight from the generator's exact cents.
func digitResults(cfg fixtures.Config) ([]benford.Result, error) {
	first := make([]int64, 9)
	second := make([]int64, 10)
	firstTwo := make([]int64, 90)
	firstThree := make([]int64, 900)
	lastTwo := make([]int64, 100)
	sums := make([]float64, 90)
	err := fixtures.Generate(cfg, func(r fixtures.Row) error {
		if r.Cents < 1000 {
			return nil
		}
		s := strconv.FormatInt(r.Cents, 10) // at least four digits
		d3, _ := strconv.Atoi(s[:3])
		first[d3/100-1]++
		second[(d3/10)%10]++
		firstTwo[d3/10-10]++
		firstThree[d3-100]++
		lastTwo[(r.Cents/100)%100]++
		sums[d3/10-10] += float64(r.Cents) / 100
		return nil
	})
	if err != nil {
		return nil, err
	}
	var out []benford.Result
	for _, c := range []struct {
		t benford.Test
		n []int64
	}{{benford.FirstDigit, first}, {benford.SecondDigit, second}, {benford.FirstTwo, firstTwo}, {benford.FirstThree, firstThree}, {benford.LastTwo, lastTwo}} {
		r, err := benford.Analyze(c.t, c.n)
		if err != nil {
			return nil, err
		}
		out = append(out, r)
	}
	s, err := benford.AnalyzeSummation(sums, firstTwo)
	if err != nil {
		return nil, err
	}
	return append(out, s), nil
}
