package pack

import (
	"context"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
)

// A source with in_place = true registers its Parquet file in place: the
// manifest says so for the input, the workspace's ledger is a view, and a
// second run reuses it. in_place on a CSV file is refused by the check.
func TestPackInPlace(t *testing.T) {
	text := strings.Replace(ownerText("fy2025", "Client A"), "files = [\"skerrimoor_ledger_2025.parquet\"]", "files = [\"skerrimoor_ledger_2025.parquet\"]\nin_place = true", 1)
	path := packDir(t, text)
	dir := filepath.Dir(path)
	res := mustRun(t, mustRead(t, path), filepath.Join(dir, "out1"), false)
	m := res.Run.Manifest
	if len(m.Inputs) != 1 || m.Inputs[0].Mode != load.ModeInPlace || m.Inputs[0].RowsRead != genCfg.Rows || m.Inputs[0].RowsLoaded != genCfg.Rows {
		t.Fatalf("manifest inputs: %+v", m.Inputs)
	}
	ctx := context.Background()
	ws, err := workspace.Open(ctx, filepath.Join(dir, "shared.duckdb"), workspace.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	mode, err := load.Mode(ctx, ws)
	ws.Close()
	if err != nil || mode != load.ModeInPlace {
		t.Fatalf("workspace mode %q, %v", mode, err)
	}
	res = mustRun(t, mustRead(t, path), filepath.Join(dir, "out2"), false)
	if res.Run.Manifest.Run.WorkspaceAction != "reused" {
		t.Errorf("second run: %s (%s)", res.Run.Manifest.Run.WorkspaceAction, res.Run.Manifest.Run.WorkspaceReason)
	}

	bad := packDir(t, strings.NewReplacer("skerrimoor_ledger_2025.parquet\"]", genCSV+"\"]\nin_place = true").Replace(ownerText("fy2025", "Client A")))
	_, err = Run(ctx, mustRead(t, bad), RunOptions{Out: filepath.Join(filepath.Dir(bad), "out")})
	if err == nil || !strings.Contains(err.Error(), "in_place registers Parquet files only") {
		t.Errorf("in_place on a CSV source: %v", err)
	}
}
