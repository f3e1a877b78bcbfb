package battery

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/parquet-go/parquet-go"
)

// openWS opens a throwaway workspace.
func openWS(t *testing.T) *workspace.Workspace {
	t.Helper()
	ws, err := workspace.Open(context.Background(), ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	return ws
}

// loadCSV writes the lines (header first) to a CSV file in a temporary
// folder and loads it through the real loader.
func loadCSV(t *testing.T, ws *workspace.Workspace, name string, lines []string, o load.Options) *load.Report {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, []byte(strings.Join(lines, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	rep, err := load.Load(context.Background(), ws, []string{path}, o)
	if err != nil {
		t.Fatalf("loading %s: %v", name, err)
	}
	return rep
}

// centsRow is a Parquet record with an exact DECIMAL(18,2) amount and a
// segment column.
type centsRow struct {
	Entity string `parquet:"entity,dict"`
	Amount int64  `parquet:"amount,decimal(2:18)"`
}

// loadCents writes (entity, cents) rows to Parquet and loads them.
func loadCents(t *testing.T, ws *workspace.Workspace, entities []string, cents []int64) {
	t.Helper()
	if len(entities) != len(cents) {
		t.Fatal("loadCents: length mismatch")
	}
	path := filepath.Join(t.TempDir(), "amounts.parquet")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := parquet.NewGenericWriter[centsRow](f)
	rows := make([]centsRow, len(cents))
	for i := range cents {
		rows[i] = centsRow{Entity: entities[i], Amount: cents[i]}
	}
	if _, err := w.Write(rows); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	rep, err := load.Load(context.Background(), ws, []string{path}, load.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsLoaded != int64(len(cents)) {
		t.Fatalf("loaded %d rows of %d", rep.RowsLoaded, len(cents))
	}
}

// centsText writes cents as a decimal amount with two places.
func centsText(c int64) string {
	neg := c < 0
	if neg {
		c = -c
	}
	s := fmt.Sprintf("%d.%02d", c/100, c%100)
	if neg {
		s = "-" + s
	}
	return s
}

func run(t *testing.T, ws *workspace.Workspace, o Options) *Report {
	t.Helper()
	rep, err := Run(context.Background(), ws, o)
	if err != nil {
		t.Fatal(err)
	}
	return rep
}
