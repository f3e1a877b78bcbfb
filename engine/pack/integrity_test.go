package pack

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
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
