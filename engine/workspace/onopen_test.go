package workspace

import (
	"context"
	"path/filepath"
	"testing"
)

// TestWithOnOpen: every workspace opened under the context is handed to
// the function once, a new file and an existing one alike; without it
// nothing is called.
func TestWithOnOpen(t *testing.T) {
	var seen []*Workspace
	ctx := WithOnOpen(context.Background(), func(ws *Workspace) { seen = append(seen, ws) })
	path := filepath.Join(t.TempDir(), "w.duckdb")
	for i := 0; i < 2; i++ {
		ws, err := Open(ctx, path, Options{})
		if err != nil {
			t.Fatal(err)
		}
		if len(seen) != i+1 || seen[i] != ws {
			t.Fatalf("open %d: hook saw %d workspaces", i+1, len(seen))
		}
		ws.Close()
	}
	ws, err := Open(context.Background(), path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	ws.Close()
	if len(seen) != 2 {
		t.Fatalf("opened without the hook, yet it saw %d", len(seen))
	}
}
