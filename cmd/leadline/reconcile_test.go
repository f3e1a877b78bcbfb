package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestLoadControlExitsNonZero: load --control with a control file one cent
// off exits non-zero (the load itself is committed and says so);
// --accept-differences makes it succeed with an "accepted" verdict; and
// leadline reconcile reruns it later. The ledger and the control files are
// written here byte by byte; the difference (-0.01) follows from them.
func TestLoadControlExitsNonZero(t *testing.T) {
	dir := t.TempDir()
	gl := filepath.Join(dir, "gl.csv")
	os.WriteFile(gl, []byte("entity;account;doc_id;line_id;posted;amount\n"+
		"N1;1000;D1;1;2025-03-01;1.234,56\n"+
		"N1;4000;D1;2;2025-03-01;-1.234,56\n"+
		"N2;1000;D2;1;2025-04-01;20,00\n"+
		"N2;4000;D2;2;2025-04-01;-20,00\n"), 0o644)
	// Expected totals per entity: N1 ties; N2's net is 0.01 off.
	off := filepath.Join(dir, "off.csv")
	os.WriteFile(off, []byte("entity,rows,debit,credit,net\nN1,2,1234.56,1234.56,0.00\nN2,2,20.00,20.00,0.01\n"), 0o644)
	ties := filepath.Join(dir, "ties.csv")
	os.WriteFile(ties, []byte("entity,rows,net\nN1,2,0.00\nN2,2,0.00\n"), 0o644)
	db := filepath.Join(dir, "w.duckdb")

	code, stdout, stderr := runCmd("load", "--db", db, "--decimal-comma", "--period", "2025", "--control", off, gl)
	if code == 0 || !strings.Contains(stderr, "is committed") || !strings.Contains(stderr, "--accept-differences") {
		t.Fatalf("a cent off: exit %d, %s", code, stderr)
	}
	if !strings.Contains(stdout, "does not tie") || !strings.Contains(stdout, "-0.01") {
		t.Errorf("the output does not show the difference:\n%s", stdout)
	}
	code, stdout, stderr = runCmd("reconcile", "--db", db, "--control", off, "--accept-differences", "--format", "json")
	if code != 0 {
		t.Fatalf("--accept-differences: exit %d, %s", code, stderr)
	}
	var doc struct {
		Verdict  string `json:"verdict"`
		Accepted bool   `json:"accepted"`
		Ties     bool   `json:"ties"`
		Lines    []struct {
			Key        []string `json:"key"`
			Measure    string   `json:"measure"`
			Difference string   `json:"difference"`
		} `json:"lines"`
	}
	if err := json.Unmarshal([]byte(stdout), &doc); err != nil {
		t.Fatal(err)
	}
	if !doc.Accepted || doc.Ties || !strings.HasPrefix(doc.Verdict, "accepted") {
		t.Errorf("verdict %q", doc.Verdict)
	}
	for _, l := range doc.Lines {
		want := "0.00"
		if l.Measure == "rows" {
			want = "0"
		}
		if l.Key[0] == "N2" && l.Measure == "net" {
			want = "-0.01" // loaded 0.00 - expected 0.01
		}
		if l.Difference != want {
			t.Errorf("%v %s: difference %s, want %s", l.Key, l.Measure, l.Difference, want)
		}
	}
	code, stdout, stderr = runCmd("reconcile", "--db", db, "--control", ties)
	if code != 0 || !strings.Contains(stdout, "Verdict: ties") {
		t.Errorf("ties: exit %d, %s%s", code, stdout, stderr)
	}
	// A bad period or control file is refused before anything is loaded.
	code, _, stderr = runCmd("load", "--db", filepath.Join(dir, "x.duckdb"), "--period", "FY2025", gl)
	if code == 0 || !strings.Contains(stderr, "--period") {
		t.Errorf("--period FY2025: exit %d, %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(dir, "x.duckdb")); err == nil {
		t.Error("a refused period created the workspace")
	}
}
