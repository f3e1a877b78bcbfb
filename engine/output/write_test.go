package output

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func runOf(p PackInfo, title string) *Run {
	t := sampleTable()
	t.Title = title
	return &Run{Pack: p, Manifest: &Manifest{Pack: p}, Tables: []*Table{t}}
}

func writeDir(t *testing.T, dir string, p PackInfo, run *Run) {
	t.Helper()
	if err := RecoverDir(dir, p, nil); err != nil {
		t.Fatal(err)
	}
	if _, err := WriteDir(context.Background(), dir, p, run, Options{NoRegistered: true, NoParquet: true}); err != nil {
		t.Fatal(err)
	}
}

// TestWriteDir: a new folder is written; an earlier run's files of the
// same pack go (no stale table survives) while a file the team put there
// stays; another pack's folder and a folder of other files are refused.
func TestWriteDir(t *testing.T) {
	dir := t.TempDir()
	a := PackInfo{Name: "a", Client: "Client A"}
	out := filepath.Join(dir, "out")
	writeDir(t, out, a, runOf(a, "first"))
	os.WriteFile(filepath.Join(out, "tables", "stale.csv"), []byte("x"), 0o644)
	os.WriteFile(filepath.Join(out, "notes.txt"), []byte("team"), 0o644)
	writeDir(t, out, a, runOf(a, "second"))
	if _, err := os.Stat(filepath.Join(out, "tables", "stale.csv")); err == nil {
		t.Error("a stale table survived")
	}
	if b, _ := os.ReadFile(filepath.Join(out, "notes.txt")); string(b) != "team" {
		t.Error("the team's notes.txt was lost")
	}
	if b, _ := os.ReadFile(filepath.Join(out, ResultsFile)); !strings.Contains(string(b), `"second"`) {
		t.Error("results.json is not the second run's")
	}
	_, err := WriteDir(context.Background(), out, PackInfo{Name: "a", Client: "Client B"}, runOf(a, "x"), Options{NoRegistered: true})
	if err == nil || !strings.Contains(err.Error(), `holds the results of pack "a" (client "Client A")`) {
		t.Errorf("another client's folder: %v", err)
	}
	other := filepath.Join(dir, "other")
	os.MkdirAll(other, 0o755)
	os.WriteFile(filepath.Join(other, "notes.txt"), []byte("x"), 0o644)
	if _, err := WriteDir(context.Background(), other, a, runOf(a, "x"), Options{NoRegistered: true}); err == nil || !strings.Contains(err.Error(), "not empty") {
		t.Errorf("foreign folder: %v", err)
	}
	leftovers(t, dir, "out", "other")
}

func leftovers(t *testing.T, dir string, want ...string) {
	t.Helper()
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		ok := false
		for _, w := range want {
			ok = ok || e.Name() == w
		}
		if !ok {
			t.Errorf("left beside the output folder: %s", e.Name())
		}
	}
}

// TestWriteDirKilledAtEachStep stops WriteDir at every step of its swap,
// as a killed process would, then tidies as the next run does: the folder
// holds the first run's results or the second's, whole, and the team's
// file, and nothing is left beside it.
func TestWriteDirKilledAtEachStep(t *testing.T) {
	a := PackInfo{Name: "a", Client: "Client A"}
	defer func() { swapStep = nil }()
	for _, at := range []string{"written", "complete", "old moved", "new moved"} {
		dir := t.TempDir()
		out := filepath.Join(dir, "out")
		swapStep = nil
		writeDir(t, out, a, runOf(a, "first"))
		os.WriteFile(filepath.Join(out, "notes.txt"), []byte("team"), 0o644)
		killed := errors.New("killed")
		swapStep = func(s string) error {
			if s == at {
				return killed
			}
			return nil
		}
		if _, err := WriteDir(context.Background(), out, a, runOf(a, "second"), Options{NoRegistered: true, NoParquet: true}); !errors.Is(err, killed) {
			t.Fatalf("%s: %v", at, err)
		}
		swapStep = nil
		if err := RecoverDir(out, a, nil); err != nil {
			t.Fatalf("%s: recovering: %v", at, err)
		}
		b, err := os.ReadFile(filepath.Join(out, ResultsFile))
		if err != nil {
			t.Fatalf("%s: no results after recovery: %v", at, err)
		}
		m, err := readManifest(out)
		if err != nil || m == nil {
			t.Fatalf("%s: no manifest after recovery: %v", at, err)
		}
		for _, o := range m.Outputs {
			size, sum, err := hashFile(filepath.Join(out, o.Path))
			if err != nil || size != o.SizeBytes || sum != o.SHA256 {
				t.Errorf("%s: %s does not match the manifest (a mix of two runs)", at, o.Path)
			}
		}
		if !strings.Contains(string(b), `"first"`) && !strings.Contains(string(b), `"second"`) {
			t.Errorf("%s: results of neither run", at)
		}
		if notes, _ := os.ReadFile(filepath.Join(out, "notes.txt")); string(notes) != "team" {
			t.Errorf("%s: the team's notes.txt was lost", at)
		}
		leftovers(t, dir, "out")
		writeDir(t, out, a, runOf(a, "second"))
		leftovers(t, dir, "out")
	}
}

// TestWriteDirRefusesLinks: a `tables` link inside an output folder, or an
// output folder that is itself a link, is refused, and the files the link
// points at are left alone.
func TestWriteDirRefusesLinks(t *testing.T) {
	a := PackInfo{Name: "a", Client: "Client A"}
	dir := t.TempDir()
	out := filepath.Join(dir, "out")
	writeDir(t, out, a, runOf(a, "first"))
	target := filepath.Join(dir, "evidence")
	os.MkdirAll(target, 0o755)
	os.WriteFile(filepath.Join(target, "sample_table.csv"), []byte("client's file"), 0o644)
	os.RemoveAll(filepath.Join(out, TablesDir))
	if err := os.Symlink(target, filepath.Join(out, TablesDir)); err != nil {
		t.Fatal(err)
	}
	_, err := WriteDir(context.Background(), out, a, runOf(a, "second"), Options{NoRegistered: true})
	if err == nil || !strings.Contains(err.Error(), "symbolic link") {
		t.Errorf("tables link: %v", err)
	}
	if b, _ := os.ReadFile(filepath.Join(target, "sample_table.csv")); string(b) != "client's file" {
		t.Error("a file behind the link was changed or removed")
	}
	link := filepath.Join(dir, "linked")
	os.Symlink(target, link)
	if _, err := WriteDir(context.Background(), link, a, runOf(a, "x"), Options{NoRegistered: true}); err == nil || !strings.Contains(err.Error(), "symbolic link") {
		t.Errorf("linked output folder: %v", err)
	}
	if b, _ := os.ReadFile(filepath.Join(target, "sample_table.csv")); string(b) != "client's file" {
		t.Error("a file behind the linked folder was changed or removed")
	}
}
