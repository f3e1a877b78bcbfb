package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestScanStatesRejectedShare: scan states, beside N, how many rows the
// loads read and rejected, in its text and its JSON.
func TestScanStatesRejectedShare(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "gl.csv")
	var b strings.Builder
	b.WriteString("amount\n")
	for i := 1; i <= 47; i++ {
		b.WriteString("1" + strings.Repeat("2", i%5) + ".00\n")
	}
	b.WriteString("bad\nworse\nworst\n")
	if err := os.WriteFile(csv, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	db := filepath.Join(dir, "w.duckdb")
	cmd := func(args ...string) string {
		t.Helper()
		var out, errOut bytes.Buffer
		if code := run(context.Background(), args, &env{stdout: &out, stderr: &errOut}); code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, errOut.String())
		}
		return out.String()
	}
	cmd("load", "--db", db, "--max-rejects", "6%", csv)
	text := cmd("scan", "--db", db, "--min", "0")
	if !strings.Contains(text, "Input: 50 rows read from 1 file(s) = 47 loaded + 3 rejected at load (6.00% rejected).") {
		t.Errorf("scan text does not state the rejected share:\n%s", text)
	}
	var rep struct {
		Input struct {
			RowsRead      int64   `json:"rows_read"`
			RowsRejected  int64   `json:"rows_rejected"`
			RejectedShare float64 `json:"rejected_share"`
		} `json:"input"`
	}
	if err := json.Unmarshal([]byte(cmd("scan", "--db", db, "--min", "0", "--format", "json")), &rep); err != nil {
		t.Fatal(err)
	}
	if rep.Input.RowsRead != 50 || rep.Input.RowsRejected != 3 || rep.Input.RejectedShare != 0.06 {
		t.Errorf("scan JSON input: %+v", rep.Input)
	}
	// The report states the same beside N.
	html := filepath.Join(dir, "report.html")
	cmd("report", "--db", db, "--out", html)
	page, err := os.ReadFile(html)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"rows rejected at load", "share rejected at load", "6.00%"} {
		if !strings.Contains(string(page), want) {
			t.Errorf("the report does not state %q beside N", want)
		}
	}
}
