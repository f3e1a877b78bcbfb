package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func runCmd(args ...string) (code int, stdout, stderr string) {
	var out, errs bytes.Buffer
	code = run(context.Background(), args, &env{stdout: &out, stderr: &errs})
	return code, out.String(), errs.String()
}

// TestReadingCommandsNeverCreateWorkspace: every command but load, given a
// mistyped --db, says there is no workspace there and how to make one, and
// creates nothing.
func TestReadingCommandsNeverCreateWorkspace(t *testing.T) {
	dir := t.TempDir()
	typo := filepath.Join(dir, "typo.duckdb")
	for _, args := range [][]string{
		{"scan"}, {"limits"}, {"ranges"}, {"dups"}, {"report", "--out", filepath.Join(dir, "r.html")},
		{"drill", "--test", "first", "--bin", "1"}, {"sql", "SELECT 1"},
		{"sensitivity", "--kind", "rounded"},
	} {
		code, _, stderr := runCmd(append(args, "--db", typo)...)
		if code == 0 {
			t.Errorf("%s on a missing workspace exited 0", args[0])
		}
		if !strings.Contains(stderr, typo) || !strings.Contains(stderr, "leadline load") {
			t.Errorf("%s: the message does not name the path and `leadline load`: %s", args[0], stderr)
		}
		if entries, _ := os.ReadDir(dir); len(entries) != 0 {
			t.Fatalf("%s created %v", args[0], entries)
		}
	}
}

// TestLoadRefusesNonWorkspaceDB: `load --db notes.csv` where notes.csv is
// a CSV file is refused, and notes.csv stays as it was.
func TestLoadRefusesNonWorkspaceDB(t *testing.T) {
	dir := t.TempDir()
	notes := filepath.Join(dir, "notes.csv")
	gl := filepath.Join(dir, "gl.csv")
	text := "entity,amount\nE1,10.00\nE2,20.00\n"
	os.WriteFile(notes, []byte(text), 0o644)
	os.WriteFile(gl, []byte(text), 0o644)
	code, _, stderr := runCmd("load", "--db", notes, gl)
	if code == 0 || !strings.Contains(stderr, "not a DuckDB database") {
		t.Fatalf("load --db notes.csv: exit %d, %s", code, stderr)
	}
	if b, _ := os.ReadFile(notes); string(b) != text {
		t.Fatal("notes.csv changed")
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 2 {
		t.Errorf("files created beside: %v", entries)
	}
}

// TestOutputsNeverOverwriteInputs: drill --out and report --out naming a
// loaded input (as given, through x/../, or through a link), or the
// workspace, are refused and the input keeps its bytes.
func TestOutputsNeverOverwriteInputs(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ws.duckdb")
	gl := filepath.Join(dir, "gl.csv")
	text := "entity,amount\nE1,10.00\nE2,20.00\nE3,150.00\n"
	os.WriteFile(gl, []byte(text), 0o644)
	if code, _, stderr := runCmd("load", "--db", db, gl); code != 0 {
		t.Fatal(stderr)
	}
	if code, _, stderr := runCmd("scan", "--db", db); code != 0 {
		t.Fatal(stderr)
	}
	link := filepath.Join(dir, "link.csv")
	if err := os.Symlink(gl, link); err != nil {
		t.Fatal(err)
	}
	for _, out := range []string{gl, filepath.Join(dir, "nosuch", "..", "gl.csv"), link, db} {
		for _, args := range [][]string{
			{"drill", "--db", db, "--test", "first", "--bin", "1", "--out", out},
			{"report", "--db", db, "--out", out},
		} {
			code, _, stderr := runCmd(args...)
			if code == 0 || out != db && !strings.Contains(stderr, "refusing to write") {
				t.Errorf("%s --out %s: exit %d, %s", args[0], out, code, stderr)
			}
		}
	}
	if b, _ := os.ReadFile(gl); string(b) != text {
		t.Fatal("the loaded input gl.csv was overwritten")
	}
	if code, _, stderr := runCmd("drill", "--db", db, "--test", "first", "--bin", "1", "--out", filepath.Join(dir, "bin1.csv")); code != 0 {
		t.Errorf("drill to a new file: %s", stderr)
	}
}
