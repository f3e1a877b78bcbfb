package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/leadline/leadline/fixtures"
)

var runRef = regexp.MustCompile(`[0-9]+:(exact|same_amount|same_doc|spread|rsf):`)

// TestInPlaceScanAndDrillMatchCopy: one Parquet file loaded by copy into
// one workspace and registered in place in another gives the same scan
// (every statistic and bin count; only timings and the run id may differ),
// the same limit probe and range bands, and the same
// drill-down, byte for byte. Then the commands refuse the in-place workspace once the file
// changes, and verify names it.
func TestInPlaceScanAndDrillMatchCopy(t *testing.T) {
	dir := t.TempDir()
	pq := filepath.Join(dir, "gl.parquet")
	if _, err := fixtures.WriteParquet(pq, fixtures.Config{Rows: 40_000, Seed: 7, Plants: true}); err != nil {
		t.Fatal(err)
	}
	cdb, pdb := filepath.Join(dir, "c.duckdb"), filepath.Join(dir, "p.duckdb")
	must := func(args ...string) string {
		t.Helper()
		code, out, errs := runCmd(args...)
		if code != 0 {
			t.Fatalf("leadline %s exited %d: %s", strings.Join(args, " "), code, errs)
		}
		return out
	}
	must("load", "--db", cdb, pq)
	out := must("load", "--db", pdb, "--in-place", pq)
	if !strings.Contains(out, "Registered in place") {
		t.Errorf("load --in-place output does not say so:\n%s", out)
	}
	// Volatile fields: the run's id, times and timings; the printed drill
	// commands name each its own workspace.
	strip := func(s string) map[string]any {
		t.Helper()
		s = strings.NewReplacer(cdb, "WS", pdb, "WS").Replace(s)
		s = runRef.ReplaceAllString(s, "RUN:$1:") // a duplicate group's reference starts with its run id
		var m map[string]any
		if err := json.Unmarshal([]byte(s), &m); err != nil {
			t.Fatalf("%v: %s", err, s)
		}
		delete(m, "run_id")
		delete(m, "started_at")
		delete(m, "finished_at")
		dropTimings(m)
		return m
	}
	for _, args := range [][]string{
		{"scan", "--format", "json"},
		{"scan", "--by", "entity", "--format", "json"},
		{"limits", "--format", "json"},
		{"ranges", "--format", "json"},
		{"dups", "--top", "-1", "--format", "json"},
		{"dups", "--signs", "both", "--min", "0", "--window-days", "3", "--format", "json"},
	} {
		c := strip(must(append(args, "--db", cdb)...))
		p := strip(must(append(args, "--db", pdb)...))
		if !reflect.DeepEqual(c, p) {
			cj, _ := json.Marshal(c)
			pj, _ := json.Marshal(p)
			t.Errorf("%s: copy and in place differ:\ncopy     %.600s\nin place %.600s", strings.Join(args, " "), cj, pj)
		}
	}
	var scan struct {
		Tests []struct {
			Test string `json:"test"`
			N    int64  `json:"n"`
		} `json:"tests"`
	}
	if err := json.Unmarshal([]byte(must("scan", "--db", pdb, "--format", "json")), &scan); err != nil || len(scan.Tests) == 0 || scan.Tests[0].N < 10_000 {
		t.Fatalf("in-place scan: %+v, %v", scan, err)
	}
	for _, args := range [][]string{
		{"drill", "--test", "first_two", "--bin", "18", "--format", "csv"},
		{"drill", "--test", "first_two", "--bin", "18", "--group", "counterparty", "--format", "csv"},
	} {
		c := must(append(args, "--db", cdb)...)
		p := must(append(args, "--db", pdb)...)
		if c != p || strings.Count(c, "\n") < 3 {
			t.Errorf("%s: copy and in place differ (or are empty):\ncopy:\n%.400s\nin place:\n%.400s", strings.Join(args, " "), c, p)
		}
	}
	if out := must("sql", "--db", pdb, "SELECT mode FROM files"); !strings.Contains(out, "in place") {
		t.Errorf("files.mode: %s", out)
	}
	report := filepath.Join(dir, "in-place.html")
	must("report", "--db", pdb, "--out", report)
	if html, err := os.ReadFile(report); err != nil || !strings.Contains(string(html), "reads its Parquet files in place") || !strings.Contains(string(html), "parquet, in place") {
		t.Errorf("the report does not say the files are in place (%v)", err)
	}
	if out := must("verify", "--db", pdb); !strings.Contains(out, "unchanged (hash checked)") {
		t.Errorf("verify:\n%s", out)
	}

	// Only the time changes: accepted. Another row: refused by every
	// command, naming the file.
	later := time.Now().Add(2 * time.Hour)
	if err := os.Chtimes(pq, later, later); err != nil {
		t.Fatal(err)
	}
	must("scan", "--db", pdb, "--tests", "first")
	if _, err := fixtures.WriteParquet(pq, fixtures.Config{Rows: 40_001, Seed: 7, Plants: true}); err != nil {
		t.Fatal(err)
	}
	for _, args := range [][]string{{"scan"}, {"drill", "--test", "first", "--bin", "1"}, {"verify"}, {"report", "--out", filepath.Join(dir, "r.html")}} {
		code, _, errs := runCmd(append(args, "--db", pdb)...)
		if code == 0 || !strings.Contains(errs, pq) || !strings.Contains(errs, "changed") {
			t.Errorf("%s on a changed file: exit %d, %s", args[0], code, errs)
		}
	}
	// The copy does not depend on the file.
	must("scan", "--db", cdb, "--tests", "first")
	// --replace registers the new version.
	must("load", "--db", pdb, "--in-place", "--replace", pq)
	if out := must("sql", "--db", pdb, "SELECT count(*) AS n FROM ledger"); !strings.Contains(out, "40001") {
		t.Errorf("after --replace: %s", out)
	}
}

// dropTimings removes every "seconds" field, at any depth (a duplicate
// test reports its own timing inside its entry).
func dropTimings(v any) {
	switch x := v.(type) {
	case map[string]any:
		delete(x, "seconds")
		for _, e := range x {
			dropTimings(e)
		}
	case []any:
		for _, e := range x {
			dropTimings(e)
		}
	}
}
