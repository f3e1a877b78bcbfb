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

	"github.com/leadline/leadline/engine/countsql"
	"github.com/leadline/leadline/fixtures"
)

// TestBandCounts runs count-sql --test limits and --test ranges, the
// printed queries (DuckDB, over the workspace's own ledger, in two
// halves) and limits --counts and ranges --counts as a user would, and
// checks that each JSON document equals the local run's (drill-downs
// apart: locally a leadline command, on counts the engine's query), and
// that the stored runs name the query's SHA-256.
func TestBandCounts(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ws.duckdb")
	var b strings.Builder
	b.WriteString("amount,entity\n")
	for i, c := range fixtures.LogUniformAmounts(6000, 10, 1e5, 7) {
		fmt.Fprintf(&b, "%d.%02d,%s\n", c/100, c%100, []string{"A", "B", "C"}[i%3])
	}
	// a pile just below 5,000 in entity B
	for i := range 120 {
		fmt.Fprintf(&b, "%d.%02d,B\n", 4700+i*2, i%100)
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
	counts := func(name string, args ...string) (string, []string, []byte) {
		qPath := filepath.Join(dir, name+".sql")
		cmd(0, append([]string{"count-sql", "--engine", "duckdb", "--table", "ledger", "--map", "amount=amount", "-o", qPath}, args...)...)
		q, err := os.ReadFile(qPath)
		if err != nil {
			t.Fatal(err)
		}
		conn, err := sql.Open("duckdb", db)
		if err != nil {
			t.Fatal(err)
		}
		defer conn.Close()
		var files []string
		for i := range 2 {
			_, body, _ := strings.Cut(string(q), "\n")
			body = strings.Replace(strings.TrimSuffix(strings.TrimSpace(body), ";"), `FROM "ledger"`, fmt.Sprintf(`FROM (SELECT * FROM "ledger" WHERE row_id %% 2 = %d)`, i), 1)
			p := filepath.Join(dir, fmt.Sprintf("%s%d.csv", name, i))
			if _, err := conn.Exec(fmt.Sprintf("COPY (%s) TO '%s' (HEADER)", body, p)); err != nil {
				t.Fatal(err)
			}
			files = append(files, p)
		}
		return qPath, files, q
	}
	norm := func(doc string) (string, map[string]any) {
		var m map[string]any
		if err := json.Unmarshal([]byte(doc), &m); err != nil {
			t.Fatal(err)
		}
		src, _ := m["counts_source"].(map[string]any)
		for _, k := range []string{"run_id", "amount_type", "counts_source"} {
			delete(m, k)
		}
		for _, list := range []string{"rows", "bands", "stretches"} {
			rows, _ := m[list].([]any)
			for _, r := range rows {
				delete(r.(map[string]any), "drill")
			}
		}
		out, _ := json.Marshal(m)
		return string(out), src
	}

	lq, lfiles, lText := counts("lim", "--test", "limits", "--by", "entity")
	counted, _ := cmd(0, "limits", "--db", db, "--counts", strings.Join(lfiles, ","), "--count-query", lq, "--by", "entity", "--format", "json")
	local, _ := cmd(0, "limits", "--db", db, "--by", "entity", "--format", "json")
	a, src := norm(counted)
	l, _ := norm(local)
	if a != l {
		t.Errorf("limits --counts and the local probe differ:\n%.800s\n%.800s", a, l)
	}
	if !strings.Contains(local, `"flagged": true`) || !strings.Contains(counted, "SELECT * FROM") {
		t.Errorf("the pile below 5,000 is not flagged, or its drill-down is not the engine's query:\n%.1500s", counted)
	}
	if src["engine"] != "duckdb" || src["query_sha256"] != countsql.SHA256(lText) {
		t.Errorf("counts_source %v does not name the engine and the query's SHA-256", src)
	}

	rq, rfiles, rText := counts("rng", "--test", "ranges", "--width", "1000", "--to", "30000")
	counted, _ = cmd(0, "ranges", "--db", db, "--counts", rfiles[0], "--counts", rfiles[1], "--count-query", rq, "--format", "json")
	local, _ = cmd(0, "ranges", "--db", db, "--width", "1000", "--to", "30000", "--format", "json")
	a, src = norm(counted)
	l, _ = norm(local)
	if a != l {
		t.Errorf("ranges --counts and the local range table differ:\n%.800s\n%.800s", a, l)
	}
	if src["query_sha256"] != countsql.SHA256(rText) {
		t.Errorf("counts_source %v does not name the query's SHA-256", src)
	}

	// The stored runs carry the provenance; text output states it.
	out, _ := cmd(0, "sql", "--db", db, "--format", "csv", "SELECT kind, result FROM runs WHERE kind IN ('limits', 'ranges') ORDER BY run_id")
	if !strings.Contains(out, countsql.SHA256(lText)) || !strings.Contains(out, countsql.SHA256(rText)) {
		t.Errorf("the stored runs do not hold the queries' SHA-256")
	}
	text, _ := cmd(0, "ranges", "--db", db, "--counts", strings.Join(rfiles, ","), "--count-query", rq)
	if !strings.Contains(text, "Counts from duckdb (table ledger") {
		t.Errorf("text output does not say where the counts came from:\n%.300s", text)
	}
	// What the query fixes is refused beside --counts, naming the flag;
	// counts of another test are refused.
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"limits", "--counts", lfiles[0], "--count-query", lq, "--limits", "5000"}, "--limits"},
		{[]string{"limits", "--counts", lfiles[0], "--count-query", lq, "--width", "0.2"}, "--width"},
		{[]string{"ranges", "--counts", rfiles[0], "--count-query", rq, "--per-decade", "20"}, "--per-decade"},
		{[]string{"ranges", "--counts", lfiles[0], "--count-query", lq}, "count-sql --test ranges"},
		{[]string{"scan", "--counts", lfiles[0], "--count-query", lq}, "leadline limits --counts"},
		{[]string{"count-sql", "--engine", "duckdb", "--table", "t", "--map", "amount=a", "--limits", "5000"}, "--test limits"},
		{[]string{"count-sql", "--engine", "duckdb", "--table", "t", "--map", "amount=a", "--test", "ranges", "--width", "0.005"}, "whole units"},
	} {
		args := c.args
		if args[0] != "count-sql" {
			args = append([]string{args[0], "--db", db}, args[1:]...)
		}
		_, errs := cmd(1, args...)
		if !strings.Contains(errs, c.want) {
			t.Errorf("%v: %q does not name %s", c.args, errs, c.want)
		}
	}
}
