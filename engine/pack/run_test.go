package pack

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
)

// Running the same pack twice on the same inputs gives byte-identical CSV
// (and Parquet) tables and an identical results.json; the manifests differ
// only in their run section (times, run ids, loaded or reused) and in the
// hash of the workbook, whose summary sheet shows the times.
func TestRunTwiceGivesIdenticalOutputs(t *testing.T) {
	path, out1, r1 := exampleRun(t)
	out2 := filepath.Join(filepath.Dir(path), "out2")
	r2 := mustRun(t, mustRead(t, path), out2, false)

	if a, b := r1.Run.Manifest.Run.WorkspaceAction, r2.Run.Manifest.Run.WorkspaceAction; a != "loaded" || b != "reused" {
		t.Errorf("workspace actions %q, %q; want loaded, reused", a, b)
	}
	csvs, _ := filepath.Glob(filepath.Join(out1, "tables", "*.csv"))
	if len(csvs) < 15 {
		t.Fatalf("only %d CSV tables: %v", len(csvs), csvs)
	}
	for _, pat := range []string{"tables/*.csv", "tables/*.parquet", "results.json"} {
		files, _ := filepath.Glob(filepath.Join(out1, pat))
		for _, f := range files {
			rel, _ := filepath.Rel(out1, f)
			a, _ := os.ReadFile(f)
			b, err := os.ReadFile(filepath.Join(out2, rel))
			if err != nil {
				t.Fatalf("%s missing from the second run", rel)
			}
			if !bytes.Equal(a, b) {
				t.Errorf("%s differs between two runs", rel)
			}
		}
	}
	m1, m2 := readManifest(t, out1), readManifest(t, out2)
	for _, m := range []map[string]any{m1, m2} {
		delete(m, "run")
		outs := m["outputs"].([]any)
		kept := outs[:0]
		for _, o := range outs {
			if o.(map[string]any)["path"] != output.WorkbookFile {
				kept = append(kept, o)
			}
		}
		m["outputs"] = kept
	}
	j1, _ := json.Marshal(m1)
	j2, _ := json.Marshal(m2)
	if !bytes.Equal(j1, j2) {
		t.Errorf("manifests differ beyond their run section:\n%s\n%s", j1, j2)
	}
}

func readManifest(t *testing.T, dir string) map[string]any {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, output.ManifestFile))
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m
}

// The manifest records the tool and DuckDB versions, the pack file and its
// SHA-256, every input with its size, SHA-256 and row counts, every
// parameter, the start and end times, and every output with its hash.
func TestManifest(t *testing.T) {
	path, out, res := exampleRun(t)
	m := res.Run.Manifest
	if m.ToolVersion != workspace.Version || !strings.HasPrefix(m.DuckDBVersion, "v1.") {
		t.Errorf("versions: tool %q, DuckDB %q", m.ToolVersion, m.DuckDBVersion)
	}
	data, _ := os.ReadFile(path)
	sum := sha256.Sum256(data)
	if m.Pack.SHA256 != hex.EncodeToString(sum[:]) || m.Pack.File != path {
		t.Errorf("pack: %+v", m.Pack)
	}
	if len(m.Inputs) != 1 {
		t.Fatalf("inputs: %+v", m.Inputs)
	}
	in := m.Inputs[0]
	size, hash, _ := hashOf(filepath.Join(filepath.Dir(path), genCSV))
	if in.Path != genCSV || in.SizeBytes != size || in.SHA256 != hash || in.RowsRead != genCfg.Rows || in.RowsLoaded != genCfg.Rows || in.RowsRejected != 0 {
		t.Errorf("input: %+v (want size %d, sha %s, %d rows)", in, size, hash, genCfg.Rows)
	}
	if m.Run.StartedAt.IsZero() || m.Run.FinishedAt.Before(m.Run.StartedAt) {
		t.Errorf("times: %v to %v", m.Run.StartedAt, m.Run.FinishedAt)
	}
	params, _ := json.Marshal(m.Parameters)
	for _, want := range []string{`"limits":[1000,5000,10000,25000]`, `"width":0.1`, `"per_decade":20`, `"window_days":8`,
		`"round_to":1000`, `"max_share":0.01`, `"decimal_comma":false`, `"amount_type":"DECIMAL(18,2)"`} {
		if !strings.Contains(string(params), want) {
			t.Errorf("parameters lack %s: %s", want, params)
		}
	}
	// Every output is listed with its size and hash.
	var listed []string
	for _, o := range m.Outputs {
		size, hash, err := hashOf(filepath.Join(out, o.Path))
		if err != nil || size != o.SizeBytes || hash != o.SHA256 {
			t.Errorf("output %s: listed %d %s, on disk %d %s (%v)", o.Path, o.SizeBytes, o.SHA256, size, hash, err)
		}
		listed = append(listed, o.Path)
	}
	var onDisk []string
	filepath.Walk(out, func(p string, info os.FileInfo, err error) error {
		if err == nil && !info.IsDir() && info.Name() != output.ManifestFile {
			rel, _ := filepath.Rel(out, p)
			onDisk = append(onDisk, filepath.ToSlash(rel))
		}
		return nil
	})
	sort.Strings(onDisk)
	if strings.Join(listed, ",") != strings.Join(onDisk, ",") {
		t.Errorf("listed outputs %v, on disk %v", listed, onDisk)
	}
	// The run is stored in the workspace.
	ws, err := workspace.Open(context.Background(), filepath.Join(filepath.Dir(path), "skerrimoor-fy2025.duckdb"), workspace.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	var kind string
	if err := ws.Conn.QueryRowContext(context.Background(), "SELECT kind FROM runs WHERE run_id = ?", m.Run.RunID).Scan(&kind); err != nil || kind != "pack" {
		t.Errorf("stored run %d: %q %v", m.Run.RunID, kind, err)
	}
}

func hashOf(path string) (int64, string, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return 0, "", err
	}
	s := sha256.Sum256(b)
	return int64(len(b)), hex.EncodeToString(s[:]), nil
}

// A changed input makes the run reload the workspace (keeping the previous
// one); --fresh reloads unchanged inputs.
func TestReloadWhenInputsChange(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "gl.csv")
	cfg := fixtures.Config{Rows: 3_000, Seed: 5}
	if _, err := fixtures.WriteCSV(csv, cfg); err != nil {
		t.Fatal(err)
	}
	text := `
[pack]
name = "reload"
client = "Client A"
period = "2025"
[[source]]
files = ["*.csv"]
[limits]
values = [5000]
`
	path := filepath.Join(dir, "reload.toml")
	os.WriteFile(path, []byte(text), 0o644)
	r1 := mustRun(t, mustRead(t, path), filepath.Join(dir, "o1"), false)
	r2 := mustRun(t, mustRead(t, path), filepath.Join(dir, "o1"), true)
	if r1.Run.Manifest.Run.WorkspaceAction != "loaded" || r2.Run.Manifest.Run.WorkspaceAction != "reloaded" {
		t.Errorf("actions %q, %q", r1.Run.Manifest.Run.WorkspaceAction, r2.Run.Manifest.Run.WorkspaceAction)
	}
	// A second file appears: the glob picks it up, the workspace reloads.
	if _, err := fixtures.WriteCSV(filepath.Join(dir, "gl2.csv"), fixtures.Config{Rows: 2_000, Seed: 6}); err != nil {
		t.Fatal(err)
	}
	r3 := mustRun(t, mustRead(t, path), filepath.Join(dir, "o1"), false)
	m := r3.Run.Manifest
	if m.Run.WorkspaceAction != "reloaded" || !strings.Contains(m.Run.WorkspaceReason, "gl2.csv is new or changed") {
		t.Errorf("after a new file: %q (%s)", m.Run.WorkspaceAction, m.Run.WorkspaceReason)
	}
	if r3.Run.Summary.Completeness.RowsLoaded != 5_000 || len(m.Inputs) != 2 {
		t.Errorf("after reload: %+v", r3.Run.Summary.Completeness)
	}
	if _, err := os.Stat(filepath.Join(dir, "reload.duckdb.previous")); err != nil {
		t.Errorf("previous workspace not kept: %v", err)
	}
	// A changed mapping rule reloads too.
	os.WriteFile(path, []byte(strings.Replace(text, `files = ["*.csv"]`, "files = [\"*.csv\"]\ndate_format = \"%Y-%m-%d\"", 1)), 0o644)
	r4 := mustRun(t, mustRead(t, path), filepath.Join(dir, "o1"), false)
	if r4.Run.Manifest.Run.WorkspaceAction != "reloaded" || !strings.Contains(r4.Run.Manifest.Run.WorkspaceReason, "parsing rules") {
		t.Errorf("after a new rule: %q (%s)", r4.Run.Manifest.Run.WorkspaceAction, r4.Run.Manifest.Run.WorkspaceReason)
	}
}
