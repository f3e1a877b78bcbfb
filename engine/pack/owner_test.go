package pack

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
)

const ownerPack = `[pack]
name = "%NAME%"
client = "%CLIENT%"
period = "2025"
workspace = "shared.duckdb"
[[source]]
files = ["skerrimoor_ledger_2025.parquet"]
[[check]]
name = "count"
sql = "SELECT count(*) AS n FROM ledger ORDER BY 1"
`

func ownerText(name, client string) string {
	return strings.NewReplacer("%NAME%", name, "%CLIENT%", client).Replace(ownerPack)
}

// Two clients' packs never share a workspace or an output folder.
func TestWorkspaceAndOutputBelongToOnePack(t *testing.T) {
	pathA := packDir(t, ownerText("fy2025", "Client A"))
	dir := filepath.Dir(pathA)
	pathB := filepath.Join(dir, "b.toml")
	os.WriteFile(pathB, []byte(ownerText("fy2025", "Client B")), 0o644)

	mustRun(t, mustRead(t, pathA), filepath.Join(dir, "out-a"), false)
	_, err := Run(context.Background(), mustRead(t, pathB), RunOptions{Out: filepath.Join(dir, "out-b")})
	if err == nil || !strings.Contains(err.Error(), `belongs to pack "fy2025" of client "Client A"`) {
		t.Errorf("pack B on pack A's workspace: %v", err)
	}
	// B with its own workspace, writing into A's output folder.
	os.WriteFile(pathB, []byte(strings.Replace(ownerText("fy2025", "Client B"), "shared.duckdb", "b.duckdb", 1)), 0o644)
	_, err = Run(context.Background(), mustRead(t, pathB), RunOptions{Out: filepath.Join(dir, "out-a")})
	if err == nil || !strings.Contains(err.Error(), `holds the results of pack "fy2025" (client "Client A")`) {
		t.Errorf("pack B into pack A's output folder: %v", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "b.duckdb")); err == nil {
		t.Error("pack B loaded before refusing the output folder")
	}
	// A workspace loaded outside a pack is refused too.
	ctx := context.Background()
	ws, err := workspace.Open(ctx, filepath.Join(dir, "loose.duckdb"), workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := load.Load(ctx, ws, []string{filepath.Join(dir, genParquet)}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	ws.Close()
	os.WriteFile(pathB, []byte(strings.Replace(ownerText("fy2025", "Client B"), "shared.duckdb", "loose.duckdb", 1)), 0o644)
	_, err = Run(ctx, mustRead(t, pathB), RunOptions{Out: filepath.Join(dir, "out-c")})
	if err == nil || !strings.Contains(err.Error(), "loaded outside a pack") {
		t.Errorf("a workspace loaded by leadline load: %v", err)
	}
}
