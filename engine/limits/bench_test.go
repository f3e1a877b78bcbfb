package limits

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// benchWorkspace builds a ledger of LEADLINE_BENCH_ROWS rows (default
// 2,000,000) straight in DuckDB: amounts log-uniform over [10, 10^6) as
// DECIMAL(18,2), 1,000 entities.
func benchWorkspace(b *testing.B) *workspace.Workspace {
	b.Helper()
	n := 2000000
	if s := os.Getenv("LEADLINE_BENCH_ROWS"); s != "" {
		v, err := strconv.Atoi(s)
		if err != nil {
			b.Fatal(err)
		}
		n = v
	}
	ctx := context.Background()
	ws, err := workspace.Open(ctx, filepath.Join(b.TempDir(), "bench.duckdb"), workspace.Options{})
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { ws.Close() })
	if _, err := ws.Conn.ExecContext(ctx, queries.Render("create_ledger", map[string]string{"amount_type": "DECIMAL(18,2)"})); err != nil {
		b.Fatal(err)
	}
	_, err = ws.Conn.ExecContext(ctx, `INSERT INTO ledger (row_id, file_id, line, amount, entity)
		SELECT i, 1, i + 2, CAST(exp(ln(10) * (1 + 5 * random())) AS DECIMAL(18,2)), 'E' || (i % 1000)
		FROM range(?) t(i)`, n)
	if err != nil {
		b.Fatal(err)
	}
	return ws
}

// BenchmarkScans times, on the same ledger in one run, a hand-written
// first-two digit GROUP BY (a reference for one aggregate scan), the limit
// probe over the round limits on the whole ledger and by entity (1,000
// segments), and the logarithmic range table. Each probe and range run is
// two scans: the amounts' range, then the counts.
//
//	LEADLINE_BENCH_ROWS=20000000 go test ./engine/limits -run - -bench Scans -benchtime 3x
func BenchmarkScans(b *testing.B) {
	ws := benchWorkspace(b)
	ctx := context.Background()
	b.Run("first_two_groupby", func(b *testing.B) {
		for range b.N {
			rows, err := ws.Conn.QueryContext(ctx, `SELECT CAST(floor(amount / pow(10, floor(log10(amount)) - 1)) AS INTEGER) AS d, count(*)
				FROM ledger WHERE amount >= 10 GROUP BY d`)
			if err != nil {
				b.Fatal(err)
			}
			for rows.Next() {
			}
			rows.Close()
		}
	})
	b.Run("limits_whole", func(b *testing.B) {
		for range b.N {
			if _, err := Run(ctx, ws, Options{}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("limits_by_entity", func(b *testing.B) {
		for range b.N {
			if _, err := Run(ctx, ws, Options{By: []string{"entity"}}); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("ranges_log", func(b *testing.B) {
		for range b.N {
			if _, err := ranges.Run(ctx, ws, ranges.Options{}); err != nil {
				b.Fatal(err)
			}
		}
	})
}
