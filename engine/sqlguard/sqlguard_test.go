package sqlguard

import (
	"context"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/workspace"
)

func TestCheckSelect(t *testing.T) {
	ctx := context.Background()
	ws := ledgerWorkspace(t)
	ok := []string{
		"SELECT * FROM ledger",
		"select count(*) from ledger where entity = 'x;DROP TABLE ledger'",
		"WITH t AS (SELECT * FROM ledger) SELECT * FROM t",
		"WITH a AS (SELECT 1 AS x), b AS (SELECT * FROM a) SELECT * FROM b",
		"WITH RECURSIVE r(n) AS (SELECT 1 UNION ALL SELECT n + 1 FROM r WHERE n < 3) SELECT * FROM r",
		"SELECT * FROM range(10)",
		"SELECT * FROM files JOIN rejects USING (file_id)",
		"SELECT 1 -- DROP TABLE ledger",
	}
	for _, q := range ok {
		if err := CheckSelect(ctx, ws.Conn, q); err != nil {
			t.Errorf("%q refused: %v", q, err)
		}
	}
	bad := map[string]string{
		"DROP TABLE ledger":                        "read-only SELECT",
		"SELECT 1; DROP TABLE ledger":              "read-only SELECT",
		"DELETE FROM ledger":                       "read-only SELECT",
		"ATTACH '/tmp/x.duckdb' AS x":              "read-only SELECT",
		"COPY ledger TO '/tmp/x.csv'":              "read-only SELECT",
		"INSTALL httpfs":                           "read-only SELECT",
		"SET threads = 1":                          "read-only SELECT",
		"SELECT * FROM read_csv('/etc/passwd')":    "table function",
		"SELECT * FROM '/etc/passwd'":              "not a table of this workspace",
		"SELECT read_text('/etc/passwd')":          "not allowed",
		"SELECT getenv('HOME')":                    "not allowed",
		"SELECT * FROM other.main.ledger":          "only the workspace",
		"SELECT * FROM query('DROP TABLE ledger')": "table function",
		// A CTE is visible only in the query that declares it: the second
		// "/etc/passwd" is a file to DuckDB, not the CTE.
		`SELECT * FROM (WITH "/etc/passwd" AS (SELECT 1) SELECT * FROM "/etc/passwd") a, "/etc/passwd" b`: "not a table of this workspace",
		// Nor inside its own (non-recursive) definition.
		`WITH "/etc/passwd" AS (SELECT * FROM "/etc/passwd") SELECT * FROM "/etc/passwd"`: "not a table of this workspace",
		"SELECT * FROM ledger WHERE amount > (SELECT 1 FROM glob('/etc/*'))":              "table function",
	}
	for q, want := range bad {
		err := CheckSelect(ctx, ws.Conn, q)
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%q: got %v, want an error containing %q", q, err, want)
		}
	}
	var n int
	if err := ws.Conn.QueryRowContext(ctx, "SELECT count(*) FROM ledger").Scan(&n); err != nil {
		t.Fatalf("ledger gone after the checks: %v", err)
	}
}

func TestFilter(t *testing.T) {
	ctx := context.Background()
	ws := ledgerWorkspace(t)
	if w, err := Filter(ctx, ws.Conn, "entity = 'E1' -- comment"); err != nil || !strings.HasPrefix(w, "(") {
		t.Errorf("good filter refused: %q %v", w, err)
	}
	for _, p := range []string{"1=1; DROP TABLE ledger", "nosuchcolumn = 1", "entity IN (SELECT * FROM read_csv('/etc/passwd'))", "1=1) UNION SELECT 1 FROM range(1) WHERE (1=1", "1=1) OR (1=1", "entity = 'E1') OR (TRUE"} {
		if _, err := Filter(ctx, ws.Conn, p); err == nil {
			t.Errorf("filter %q accepted", p)
		}
	}
	if _, err := Column(ctx, ws.Conn, "entity"); err != nil {
		t.Error(err)
	}
	if _, err := Column(ctx, ws.Conn, `entity"; DROP TABLE ledger; --`); err == nil {
		t.Error("bad column accepted")
	}
}

func TestFilterKeepsConjunctions(t *testing.T) {
	ctx := context.Background()
	ws := ledgerWorkspace(t)
	for _, p := range []string{"entity = 'E1' AND amount > 5", "(entity = 'E1' OR entity = 'E2') AND amount > 5", "entity = 'E1' OR amount > 5", "NOT (entity = 'x')"} {
		if _, err := Filter(ctx, ws.Conn, p); err != nil {
			t.Errorf("filter %q refused: %v", p, err)
		}
	}
}

// ledgerWorkspace is an in-memory workspace with a small ledger table.
func ledgerWorkspace(t *testing.T) *workspace.Workspace {
	t.Helper()
	ws, err := workspace.Open(context.Background(), ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	if _, err := ws.Conn.ExecContext(context.Background(), "CREATE TABLE ledger (amount DECIMAL(18,2), entity VARCHAR)"); err != nil {
		t.Fatal(err)
	}
	return ws
}
