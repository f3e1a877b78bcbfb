package countsql

import (
	"context"
	"path/filepath"
	"strings"
	"testing"
)

// TestDuckDBBandCountsEqualLocalRuns: the counts of the emitted DuckDB
// band query, over the whole ledger in one file and over two halves in two
// files (one CSV, one Parquet), give leadline limits' and leadline ranges'
// documents of the same rows, band for band, and every drill-down query
// lists exactly the records its band counts.
func TestDuckDBBandCountsEqualLocalRuns(t *testing.T) {
	rows := testLedger()
	ws := localWorkspace(t, rows)
	ctx := context.Background()
	for _, half := range []string{"h0", "h1"} {
		cond := map[string]string{"h0": "row_id % 2 = 0", "h1": "row_id % 2 = 1"}[half]
		if _, err := ws.Conn.ExecContext(ctx, "CREATE TEMP VIEW "+half+" AS SELECT * FROM ledger WHERE "+cond); err != nil {
			t.Fatal(err)
		}
	}
	for _, v := range bandVariants() {
		t.Run(v.name, func(t *testing.T) {
			dir := t.TempDir()
			local := bandLocal(t, ws, v)
			s := v.spec
			s.Engine, s.Table, s.Amount, s.Scale = "duckdb", "ledger", "amount", 2
			q, err := Query(s)
			if err != nil {
				t.Fatal(err)
			}
			one := filepath.Join(dir, "all.csv")
			copyCounts(t, ws, q, one)
			doc, drills := bandCounts(t, q, []string{one}, v)
			sameDocs(t, local, doc)
			if len(drills) == 0 {
				t.Fatal("no drill-down query to check")
			}
			for _, d := range drills {
				var n int64
				if err := ws.Conn.QueryRowContext(ctx, "SELECT count(*) FROM ("+strings.TrimSuffix(d.query, ";")+")").Scan(&n); err != nil {
					t.Fatalf("%v\n%s", err, d.query)
				}
				if n != d.want {
					t.Errorf("drill-down query lists %d records, its band counts %d:\n%s", n, d.want, d.query)
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
			doc, _ = bandCounts(t, q, parts, v)
			sameDocs(t, local, doc)
		})
	}
}
