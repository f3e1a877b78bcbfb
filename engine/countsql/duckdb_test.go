package countsql

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// copyCounts runs the emitted DuckDB query on the workspace and writes its
// result as DuckDB writes CSV (or Parquet, by the path's extension).
func copyCounts(t *testing.T, ws *workspace.Workspace, q, path string) {
	t.Helper()
	opts := "HEADER"
	if strings.HasSuffix(path, ".parquet") {
		opts = "FORMAT parquet"
	}
	stmt := fmt.Sprintf("COPY (%s) TO %s (%s)", stripQuery(q), queries.QuoteString(path), opts)
	if _, err := ws.Conn.ExecContext(context.Background(), stmt); err != nil {
		t.Fatalf("%v\n%s", err, stmt)
	}
}

// TestDuckDBCountsEqualLocalScan: the counts of the emitted DuckDB query,
// over the whole ledger in one file and over two halves in two files,
// give the local scan's tables and statistics, bin for bin. One half is
// written as Parquet, which the reader takes too.
func TestDuckDBCountsEqualLocalScan(t *testing.T) {
	rows := testLedger()
	ws := localWorkspace(t, rows)
	ctx := context.Background()
	for _, half := range []string{"h0", "h1"} {
		cond := map[string]string{"h0": "row_id % 2 = 0", "h1": "row_id % 2 = 1"}[half]
		if _, err := ws.Conn.ExecContext(ctx, "CREATE TEMP VIEW "+half+" AS SELECT * FROM ledger WHERE "+cond); err != nil {
			t.Fatal(err)
		}
	}
	for _, v := range variants() {
		t.Run(v.name, func(t *testing.T) {
			dir := t.TempDir()
			local := localReport(t, ws, v)
			s := v.spec
			s.Engine, s.Table = "duckdb", "ledger"
			q, err := Query(s)
			if err != nil {
				t.Fatal(err)
			}
			one := filepath.Join(dir, "all.csv")
			copyCounts(t, ws, q, one)
			counted := countsReport(t, q, []string{one}, v)
			sameReports(t, local, counted)
			// The digit bins' drill-down queries list exactly the records
			// the counts put in the bins.
			for _, d := range binDrills(t, q, counted) {
				var n int64
				if err := ws.Conn.QueryRowContext(ctx, "SELECT count(*) FROM ("+strings.TrimSuffix(d.query, ";")+")").Scan(&n); err != nil {
					t.Fatalf("%v\n%s", err, d.query)
				}
				if n != d.want {
					t.Errorf("bin drill-down lists %d records, the counts put %d there:\n%s", n, d.want, d.query)
				}
			}

			var parts []string
			for _, half := range []string{"h0", "h1"} {
				s.Table = half
				qh, err := Query(s)
				if err != nil {
					t.Fatal(err)
				}
				p := filepath.Join(dir, half+map[string]string{"h0": ".csv", "h1": ".parquet"}[half])
				copyCounts(t, ws, qh, p)
				parts = append(parts, p)
			}
			sameReports(t, local, countsReport(t, q, parts, v))
		})
	}
}
