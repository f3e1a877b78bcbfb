package main

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	_ "github.com/duckdb/duckdb-go/v2"

	"github.com/leadline/leadline/engine/countsql"
	"github.com/leadline/leadline/fixtures"
)

// TestScanCounts runs count-sql, the printed query (DuckDB, over the
// workspace's own ledger, in two halves) and scan --counts as a user
// would, and checks that the JSON document equals the local scan's, and
// that the stored run names the engine, the query's SHA-256 and the files.
func TestScanCounts(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ws.duckdb")
	var b strings.Builder
	b.WriteString("amount,entity\n")
	for i, c := range fixtures.LogUniformAmounts(4000, 10, 1e5, 5) {
		fmt.Fprintf(&b, "%d.%02d,%s\n", c/100, c%100, []string{"A", "B", "C"}[i%3])
	}
	b.WriteString("-12.50,A\n0,B\n0.29,C\n99.99,A\n")
	csvPath := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(csvPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := func(wantCode int, args ...string) (string, string) {
		t.Helper()
		var out, errs bytes.Buffer
		if code := run(context.Background(), args, &env{stdout: &out, stderr: &errs}); code != wantCode {
			t.Fatalf("leadline %s exited %d, want %d: %s", strings.Join(args, " "), code, wantCode, errs.String())
		}
		return out.String(), errs.String()
	}
	cmd(0, "load", "--db", db, csvPath)
	qPath := filepath.Join(dir, "q.sql")
	cmd(0, "count-sql", "--engine", "duckdb", "--table", "ledger", "--map", "amount=amount", "--by", "entity", "-o", qPath)
	q, err := os.ReadFile(qPath)
	if err != nil {
		t.Fatal(err)
	}
	// Count in two halves, as two partitions would.
	conn, err := sql.Open("duckdb", db)
	if err != nil {
		t.Fatal(err)
	}
	var files []string
	for i := range 2 {
		_, body, _ := strings.Cut(string(q), "\n")
		body = strings.Replace(strings.TrimSuffix(strings.TrimSpace(body), ";"), `FROM "ledger"`, fmt.Sprintf(`FROM (SELECT * FROM "ledger" WHERE row_id %% 2 = %d)`, i), 1)
		p := filepath.Join(dir, fmt.Sprintf("part%d.csv", i))
		if _, err := conn.Exec(fmt.Sprintf("COPY (%s) TO '%s' (HEADER)", body, p)); err != nil {
			t.Fatal(err)
		}
		files = append(files, p)
	}
	conn.Close()

	counted, _ := cmd(0, "scan", "--db", db, "--counts", strings.Join(files, ","), "--count-query", qPath, "--by", "entity", "--min-segment", "100", "--min-excess", "0.05", "--format", "json")
	local, _ := cmd(0, "scan", "--db", db, "--tests", "first,second,first_two,first_three,last_two,summation", "--by", "entity", "--min-segment", "100", "--min-excess", "0.05", "--format", "json")
	norm := func(doc string) (string, map[string]any) {
		var m map[string]any
		if err := json.Unmarshal([]byte(doc), &m); err != nil {
			t.Fatal(err)
		}
		src, _ := m["counts_source"].(map[string]any)
		// input is what the workspace's loads read: a run on counts
		// made elsewhere leaves it out.
		if _, ok := m["input"]; ok && src != nil {
			t.Errorf("scan --counts reports the workspace's loads as its input")
		}
		for _, k := range []string{"run_id", "seconds", "amount_type", "counts_source", "input"} {
			delete(m, k)
		}
		out, _ := json.Marshal(m)
		return string(out), src
	}
	a, src := norm(counted)
	l, _ := norm(local)
	if a != l {
		t.Errorf("scan --counts and the local scan differ:\n%.600s\n%.600s", a, l)
	}
	if src["engine"] != "duckdb" || src["query_sha256"] != countsql.SHA256(q) {
		t.Errorf("counts_source %v does not name the engine and the query's SHA-256", src)
	}
	if fs, _ := src["files"].([]any); len(fs) != 2 {
		t.Errorf("counts_source lists %v, want the two files", src["files"])
	}
	// The stored run carries the same provenance.
	out, _ := cmd(0, "sql", "--db", db, "--format", "csv", "SELECT result FROM runs WHERE kind = 'scan' ORDER BY run_id LIMIT 1")
	if !strings.Contains(out, countsql.SHA256(q)) {
		t.Errorf("the stored run does not hold the query's SHA-256")
	}
	// Text output says where the counts came from.
	text, _ := cmd(0, "scan", "--db", db, "--counts", files[0], "--counts", files[1], "--count-query", qPath)
	if !strings.Contains(text, "Counts from duckdb (table ledger") {
		t.Errorf("text output does not say where the counts came from:\n%.300s", text)
	}
	// What cannot be done on counts is refused with the flag.
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--counts", files[0]}, "--count-query"},
		{[]string{"--counts", files[0], "--count-query", qPath, "--min", "100"}, "--min"},
		{[]string{"--counts", files[0], "--count-query", qPath, "--tests", "second_order"}, "second-order"},
		{[]string{"--counts", files[0], "--count-query", qPath, "--by", "account"}, "--by account"},
		{[]string{"--counts", files[0], "--count-query", csvPath}, "count-sql"},
	} {
		_, errs := cmd(1, append([]string{"scan", "--db", db}, c.args...)...)
		if !strings.Contains(errs, c.want) {
			t.Errorf("scan %v: %q does not name %s", c.args, errs, c.want)
		}
	}
}
