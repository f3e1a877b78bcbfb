package pack

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/output"
)

// TestPackWorkspaceNamingAnInput: a pack whose workspace names an existing
// file that is not a leadline workspace (here its own input CSV) is
// refused by `pack check` and by a run, and the file stays as it was,
// with nothing created beside it.
func TestPackWorkspaceNamingAnInput(t *testing.T) {
	dir, packPath, _ := miniPack(t)
	text, _ := os.ReadFile(packPath)
	if err := os.WriteFile(packPath, []byte(strings.Replace(string(text), "period = \"2025\"\n", "period = \"2025\"\nworkspace = \"gl.csv\"\n", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	gl := filepath.Join(dir, "gl.csv")
	before, _ := os.ReadFile(gl)
	p := mustRead(t, packPath)
	_, probs := Check(context.Background(), p)
	found := false
	for _, e := range probs.Errors() {
		if e.Key == "pack.workspace" && strings.Contains(e.String(), "not a DuckDB database") {
			found = true
		}
	}
	if !found {
		t.Errorf("pack check does not refuse the workspace gl.csv: %v", probs.Errors())
	}
	if _, err := Run(context.Background(), p, RunOptions{Out: filepath.Join(dir, "out")}); err == nil {
		t.Fatal("the run used gl.csv as its workspace")
	}
	if after, _ := os.ReadFile(gl); string(after) != string(before) {
		t.Fatal("gl.csv changed")
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if n := e.Name(); n != "gl.csv" && n != "mini.toml" {
			t.Errorf("%s was created", n)
		}
	}
}

// miniPack writes a small ledger and a pack over it; edit changes the
// ledger (so that the next run must reload).
func miniPack(t *testing.T) (dir, packPath string, edit func(n int)) {
	t.Helper()
	dir = t.TempDir()
	edit = func(n int) {
		var b strings.Builder
		b.WriteString("entity,amount\n")
		for i := 0; i < 3000+n; i++ {
			fmt.Fprintf(&b, "E%d,%d.%02d\n", i%3, 10+(i*7919)%90000, i%100)
		}
		if err := os.WriteFile(filepath.Join(dir, "gl.csv"), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	edit(0)
	packPath = filepath.Join(dir, "mini.toml")
	text := `[pack]
name = "mini"
client = "Client A"
period = "2025"
[[source]]
name = "gl"
files = ["gl.csv"]
[source.columns]
amount = "amount"
entity = "entity"
[battery]
tests = ["first"]
`
	if err := os.WriteFile(packPath, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir, packPath, edit
}

// folderState is every file under dir with its bytes (links as their
// targets), for comparing a folder before and after.
func folderState(t *testing.T, dir string) map[string]string {
	t.Helper()
	state := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		switch {
		case d.Type()&os.ModeSymlink != 0:
			target, _ := os.Readlink(p)
			state[rel] = "link:" + target
		case d.Type().IsRegular():
			b, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			state[rel] = string(b)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return state
}

func sameState(t *testing.T, what string, a, b map[string]string) {
	t.Helper()
	for k, v := range a {
		if w, ok := b[k]; !ok {
			t.Errorf("%s: %s is gone", what, k)
		} else if w != v {
			t.Errorf("%s: %s changed", what, k)
		}
	}
	for k := range b {
		if _, ok := a[k]; !ok {
			t.Errorf("%s: %s appeared", what, k)
		}
	}
}

// noLeftovers fails when anything but the output folder, the pack's own
// files and the lock files is beside out.
func noLeftovers(t *testing.T, dir string) {
	t.Helper()
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		n := e.Name()
		if strings.HasSuffix(n, ".lock") || n == "gl.csv" || n == "mini.toml" || n == "mini.duckdb" || n == "mini.duckdb.previous" || strings.HasPrefix(n, "out") {
			continue
		}
		t.Errorf("left beside the output folder: %s", n)
	}
}

// TestOutputFolderSurvivesLateFailure: a run that fails while writing its
// output folder (here a writer that fails after the tables and the
// workbook are written) leaves the earlier results exactly as they were,
// and the next run writes the folder as usual, keeping a file the team
// put there.
func TestOutputFolderSurvivesLateFailure(t *testing.T) {
	dir, packPath, _ := miniPack(t)
	out := filepath.Join(dir, "out")
	mustRun(t, mustRead(t, packPath), out, false)
	if err := os.WriteFile(filepath.Join(out, "review-notes.txt"), []byte("team notes"), 0o644); err != nil {
		t.Fatal(err)
	}
	before := folderState(t, out)
	failing := output.WriterFunc{Label: "failing", Fn: func(context.Context, string, *output.Run) ([]string, error) {
		return nil, fmt.Errorf("no space left on device (simulated)")
	}}
	_, err := Run(context.Background(), mustRead(t, packPath), RunOptions{Out: out, Output: output.Options{Extra: []output.Writer{failing}}})
	if err == nil {
		t.Fatal("the failing writer did not fail the run")
	}
	sameState(t, "after a late failure", before, folderState(t, out))
	noLeftovers(t, dir)
	mustRun(t, mustRead(t, packPath), out, false)
	if b, err := os.ReadFile(filepath.Join(out, "review-notes.txt")); err != nil || string(b) != "team notes" {
		t.Errorf("the team's file in the output folder was lost: %v", err)
	}
	noLeftovers(t, dir)
}

// TestOutputFolderSurvivesKill: a run killed (SIGKILL) while writing its
// output folder leaves the earlier results as they were; the next run
// tidies what the killed one left and writes the folder.
func TestOutputFolderSurvivesKill(t *testing.T) {
	if testing.Short() {
		t.Skip("kills a helper process; skipped with -short")
	}
	dir, packPath, _ := miniPack(t)
	out := filepath.Join(dir, "out")
	mustRun(t, mustRead(t, packPath), out, false)
	before := folderState(t, out)
	killWhenPaused(t, helper(packPath, out, "LEADLINE_PACK_BLOCK_WRITER=1"))
	sameState(t, "after a kill", before, folderState(t, out))
	res := mustRun(t, mustRead(t, packPath), out, false)
	if len(res.Outputs) == 0 {
		t.Fatal("no outputs")
	}
	noLeftovers(t, dir)
}

// TestPackCheckTableNameClash: two parts of a pack whose names map to one
// result table are refused by `pack check`, before anything runs.
func TestPackCheckTableNameClash(t *testing.T) {
	_, packPath, _ := miniPack(t)
	text, _ := os.ReadFile(packPath)
	extra := `
[[check]]
name = "weekend-postings"
sql = "SELECT entity, amount FROM ledger ORDER BY entity, amount"

[[check]]
name = "weekend_postings"
sql = "SELECT entity, amount FROM ledger ORDER BY entity, amount"
`
	if err := os.WriteFile(packPath, append(text, extra...), 0o644); err != nil {
		t.Fatal(err)
	}
	_, probs := Check(context.Background(), mustRead(t, packPath))
	found := false
	for _, e := range probs.Errors() {
		if e.Key == "check[2].name" && strings.Contains(e.Message, "check_weekend_postings") {
			found = true
		}
	}
	if !found {
		t.Errorf("pack check accepts two checks writing one table: %v", probs.Errors())
	}
}

// TestPackReloadKeepsForeignPrevious: a file of the team's own named like
// the workspace's kept copy (NAME.previous) is refused before a reload
// starts, not deleted, and nothing is left beside the workspace.
func TestPackReloadKeepsForeignPrevious(t *testing.T) {
	dir, packPath, edit := miniPack(t)
	mustRun(t, mustRead(t, packPath), filepath.Join(dir, "out"), false)
	prev := filepath.Join(dir, "mini.duckdb.previous")
	if err := os.WriteFile(prev, []byte("client memo"), 0o644); err != nil {
		t.Fatal(err)
	}
	edit(1)
	if _, err := Run(context.Background(), mustRead(t, packPath), RunOptions{Out: filepath.Join(dir, "out")}); err == nil || !strings.Contains(err.Error(), prev) {
		t.Fatalf("reload beside a foreign %s: %v", prev, err)
	}
	if b, _ := os.ReadFile(prev); string(b) != "client memo" {
		t.Fatal("the team's file was removed or changed")
	}
	noLeftovers(t, dir)
}
