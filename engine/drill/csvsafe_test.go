package drill_test

import (
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// A CSV export neutralises text a spreadsheet would run as a formula
// (OWASP "CSV Injection"); the amount, a number, keeps its sign; Parquet
// keeps the text as it is.
func TestExportCSVNeutralisesFormulas(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	src := filepath.Join(dir, "f.csv")
	data := "entity,posted,amount,counterparty\n" +
		"E1,2025-01-02,-12.50,\"=HYPERLINK(\"\"http://x.example\"\",\"\"open\"\")\"\n" +
		"E1,2025-01-03,1500.00,@SUM(A1:A2)\n" +
		"E1,2025-01-04,1600.00,Plain Supplier Ltd\n"
	if err := os.WriteFile(src, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	if _, err := load.Load(ctx, ws, []string{src}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	b, err := drill.Build(ctx, ws, drill.Selection{Range: "0:100000", Spec: population.Spec{Signs: "both"}})
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out.csv")
	if err := drill.Export(ctx, ws, b, drill.RecordOptions{}, out); err != nil {
		t.Fatal(err)
	}
	fh, _ := os.Open(out)
	recs, err := csv.NewReader(fh).ReadAll()
	fh.Close()
	if err != nil || len(recs) != 4 {
		t.Fatalf("%d records: %v", len(recs), err)
	}
	col := map[string]int{}
	for i, c := range recs[0] {
		col[c] = i
	}
	want := []struct{ cp, amount string }{
		{`'=HYPERLINK("http://x.example","open")`, "-12.50"}, {"'@SUM(A1:A2)", "1500.00"}, {"Plain Supplier Ltd", "1600.00"},
	}
	for i, w := range want {
		if got := recs[i+1][col["counterparty"]]; got != w.cp {
			t.Errorf("row %d: counterparty %q, want %q", i+1, got, w.cp)
		}
		if got := recs[i+1][col["amount"]]; got != w.amount {
			t.Errorf("row %d: amount %q, want %q", i+1, got, w.amount)
		}
	}
	pq := filepath.Join(dir, "out.parquet")
	if err := drill.Export(ctx, ws, b, drill.RecordOptions{}, pq); err != nil {
		t.Fatal(err)
	}
	var cp string
	if err := ws.Conn.QueryRowContext(ctx, "SELECT counterparty FROM read_parquet('"+pq+"') WHERE amount < 0").Scan(&cp); err != nil || !strings.HasPrefix(cp, "=HYPERLINK") {
		t.Errorf("Parquet counterparty %q (%v)", cp, err)
	}
	gout := filepath.Join(dir, "groups.csv")
	if err := drill.ExportGroups(ctx, ws, b, drill.GroupOptions{Column: "counterparty"}, gout); err != nil {
		t.Fatal(err)
	}
	g, _ := os.ReadFile(gout)
	if !strings.Contains(string(g), "'@SUM(A1:A2)") || strings.Contains(string(g), "\n@SUM") {
		t.Errorf("grouped export:\n%s", g)
	}
}
