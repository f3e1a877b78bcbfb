package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// TestRunWithoutFlags runs commands from options structs, with a workspace
// opener of the test's own: no flag is parsed.
func TestRunWithoutFlags(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	path := filepath.Join(dir, "ws.duckdb")
	var b strings.Builder
	b.WriteString("amount,entity\n")
	for i := 1; i <= 300; i++ {
		fmt.Fprintf(&b, "%d.%02d,%s\n", 10+i*7, i%100, []string{"A", "B"}[i%2])
	}
	b.WriteString("-5.00,A\n")
	csvPath := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(csvPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	ws, err := workspace.Open(ctx, path, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := load.Load(ctx, ws, []string{csvPath}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	ws.Close()

	var opened []dbFlags
	var out, errs bytes.Buffer
	e := &env{stdout: &out, stderr: &errs, open: func(ctx context.Context, db dbFlags, readOnly bool) (*workspace.Workspace, error) {
		opened = append(opened, db)
		return workspace.Open(ctx, path, workspace.Options{ReadOnly: readOnly})
	}}
	db := dbFlags{path: "not-a-file.duckdb"}

	err = runScan(ctx, e, scanOptions{db: db, format: "json", battery: battery.Options{
		Spec:  population.Spec{Signs: "both", Min: "0"},
		Tests: []benford.Test{benford.FirstDigit},
	}})
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		RunID  int64 `json:"run_id"`
		Rows   int64 `json:"rows"`
		Tested int64 `json:"tested"`
		Tests  []struct {
			Test string `json:"test"`
			N    int64  `json:"n"`
		} `json:"tests"`
	}
	if err := json.Unmarshal(out.Bytes(), &doc); err != nil {
		t.Fatalf("%v\n%s", err, out.String())
	}
	if doc.Rows != 301 || doc.Tested != 301 || len(doc.Tests) != 1 || doc.Tests[0].Test != "first" || doc.Tests[0].N != 301 || doc.RunID == 0 {
		t.Errorf("scan from options: %+v", doc)
	}
	if len(opened) != 1 || opened[0] != db {
		t.Errorf("the run opened %v, want the options' workspace %v once", opened, db)
	}

	out.Reset()
	if err := runSQL(ctx, e, sqlOptions{db: db, format: "csv", query: "SELECT kind, json_extract(result, '$.tested') AS n FROM runs"}); err != nil {
		t.Fatal(err)
	}
	if got := out.String(); got != "kind,n\nscan,301\n" {
		t.Errorf("stored run: %q", got)
	}

	out.Reset()
	err = runSQL(ctx, e, sqlOptions{db: db, format: "csv", query: "DELETE FROM ledger"})
	if ee, ok := err.(*exitError); !ok || ee.code != 2 || !strings.Contains(err.Error(), "refused") {
		t.Errorf("sql DELETE: %v, want a refusal with exit status 2", err)
	}
}
