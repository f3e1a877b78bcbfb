//go:build unix

package countsql

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// ledgerCSVBytes is the ledger as CSV without a header (entity, posted,
// amount), blank entities empty.
func ledgerCSVBytes(t *testing.T, rows []row) []byte {
	t.Helper()
	p := filepath.Join(t.TempDir(), "rows.csv")
	writeLedgerCSV(t, p, rows, false)
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestPostgreSQLCountsEqualLocalScan runs the emitted PostgreSQL query on a
// real server holding the ledger, over the whole table and over two
// half-years as two files, and checks that the merged counts give the
// local DuckDB scan's tables and statistics, bin for bin.
func TestPostgreSQLCountsEqualLocalScan(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a PostgreSQL server")
	}
	pg := startPostgres(t)
	rows := testLedger()
	ws := localWorkspace(t, rows)
	psql := pg.psql
	run(t, nil, nil, psql, pg.args("-c", `CREATE TABLE gl (entity text, posted date, amt numeric(18,2));
CREATE VIEW gl_h1 AS SELECT * FROM gl WHERE posted < '2025-07-01';
CREATE VIEW gl_h2 AS SELECT * FROM gl WHERE posted >= '2025-07-01';`)...)
	run(t, nil, ledgerCSVBytes(t, rows), psql, pg.args("-c", `\copy gl FROM STDIN WITH (FORMAT csv)`)...)
	got := run(t, nil, nil, psql, pg.args("-At", "-c", "SELECT count(*) FROM gl")...)
	if want := []byte(itoa(len(rows)) + "\n"); !bytes.Equal(got, want) {
		t.Fatalf("PostgreSQL holds %q rows, want %q", got, want)
	}
	for _, v := range variants() {
		t.Run(v.name, func(t *testing.T) {
			dir := t.TempDir()
			local := localReport(t, ws, v)
			count := func(table string) (string, string) {
				s := v.spec
				s.Engine, s.Table, s.Amount = "postgresql", table, "amt"
				q, err := Query(s)
				if err != nil {
					t.Fatal(err)
				}
				qp := filepath.Join(dir, table+".sql")
				out := filepath.Join(dir, table+".csv")
				if err := os.WriteFile(qp, []byte(q), 0o644); err != nil {
					t.Fatal(err)
				}
				run(t, nil, nil, psql, pg.args("--csv", "-f", qp, "-o", out)...)
				return q, out
			}
			q, all := count("gl")
			counted := countsReport(t, q, []string{all}, v)
			sameReports(t, local, counted)
			checkDrills(t, "PostgreSQL", binDrills(t, q, counted), func(q string) []byte {
				return run(t, nil, nil, psql, pg.args("-At", "-F", ",", "-c", q)...)
			})
			_, h1 := count("gl_h1")
			_, h2 := count("gl_h2")
			sameReports(t, local, countsReport(t, q, []string{h1, h2}, v))
		})
	}
	// The limit probe's and the range bands' counts, and the drill-down
	// queries run on the server.
	for _, v := range bandVariants() {
		t.Run(v.name, func(t *testing.T) {
			dir := t.TempDir()
			local := bandLocal(t, ws, v)
			count := func(table string) (string, string) {
				s := v.spec
				s.Engine, s.Table, s.Amount, s.Scale = "postgresql", table, "amt", 2
				q, err := Query(s)
				if err != nil {
					t.Fatal(err)
				}
				qp := filepath.Join(dir, table+".sql")
				out := filepath.Join(dir, table+".csv")
				if err := os.WriteFile(qp, []byte(q), 0o644); err != nil {
					t.Fatal(err)
				}
				run(t, nil, nil, psql, pg.args("--csv", "-f", qp, "-o", out)...)
				return q, out
			}
			q, all := count("gl")
			doc, drills := bandCounts(t, q, []string{all}, v)
			sameDocs(t, local, doc)
			checkDrills(t, "PostgreSQL", drills, func(q string) []byte {
				return run(t, nil, nil, psql, pg.args("-At", "-F", ",", "-c", q)...)
			})
			_, h1 := count("gl_h1")
			_, h2 := count("gl_h2")
			doc, _ = bandCounts(t, q, []string{h1, h2}, v)
			sameDocs(t, local, doc)
		})
	}
}

// TestClickHouseClusterCountsEqualLocalScan runs the emitted ClickHouse
// query on a two-shard cluster, each shard holding half of the ledger:
// once on the Distributed table (one file) and once on each shard's local
// table (two files merged by leadline); both give the local DuckDB scan's
// tables and statistics, bin for bin.
func TestClickHouseClusterCountsEqualLocalScan(t *testing.T) {
	if testing.Short() {
		t.Skip("starts two ClickHouse servers")
	}
	shards := startClickHouseCluster(t)
	rows := testLedger()
	ws := localWorkspace(t, rows)
	for i, s := range shards {
		s.query(t, nil, "CREATE TABLE ledger_local (entity Nullable(String), posted Date, amount Decimal(18,2)) ENGINE = MergeTree ORDER BY tuple()")
		s.query(t, nil, "CREATE TABLE ledger_all AS ledger_local ENGINE = Distributed(leadline_test, default, ledger_local)")
		var half []row
		for j, r := range rows {
			if j%2 == i {
				half = append(half, r)
			}
		}
		s.query(t, ledgerCSVBytes(t, half), "INSERT INTO ledger_local FORMAT CSV")
	}
	if got := string(shards[0].query(t, nil, "SELECT count(*) FROM ledger_all")); got != itoa(len(rows))+"\n" {
		t.Fatalf("the cluster holds %q rows, want %d", got, len(rows))
	}
	for _, v := range variants() {
		t.Run(v.name, func(t *testing.T) {
			dir := t.TempDir()
			local := localReport(t, ws, v)
			count := func(s *chServer, table, name string) (string, string) {
				spec := v.spec
				spec.Engine, spec.Table = "clickhouse", table
				q, err := Query(spec)
				if err != nil {
					t.Fatal(err)
				}
				out := filepath.Join(dir, name+".csv")
				if err := os.WriteFile(out, s.query(t, nil, q, "--format", "CSVWithNames"), 0o644); err != nil {
					t.Fatal(err)
				}
				return q, out
			}
			q, all := count(shards[0], "ledger_all", "all")
			counted := countsReport(t, q, []string{all}, v)
			sameReports(t, local, counted)
			checkDrills(t, "ClickHouse", binDrills(t, q, counted), func(q string) []byte {
				return shards[0].query(t, nil, q, "--format", "CSV")
			})
			_, s1 := count(shards[0], "ledger_local", "shard1")
			_, s2 := count(shards[1], "ledger_local", "shard2")
			sameReports(t, local, countsReport(t, q, []string{s1, s2}, v))
		})
	}
	// The limit probe's and the range bands' counts, and the drill-down
	// queries run on the Distributed table.
	for _, v := range bandVariants() {
		t.Run(v.name, func(t *testing.T) {
			dir := t.TempDir()
			local := bandLocal(t, ws, v)
			count := func(s *chServer, table, name string) (string, string) {
				spec := v.spec
				spec.Engine, spec.Table, spec.Amount, spec.Scale = "clickhouse", table, "amount", 2
				q, err := Query(spec)
				if err != nil {
					t.Fatal(err)
				}
				out := filepath.Join(dir, name+".csv")
				if err := os.WriteFile(out, s.query(t, nil, q, "--format", "CSVWithNames"), 0o644); err != nil {
					t.Fatal(err)
				}
				return q, out
			}
			q, all := count(shards[0], "ledger_all", "all")
			doc, drills := bandCounts(t, q, []string{all}, v)
			sameDocs(t, local, doc)
			checkDrills(t, "ClickHouse", drills, func(q string) []byte {
				return shards[0].query(t, nil, q, "--format", "CSV")
			})
			_, s1 := count(shards[0], "ledger_local", "shard1")
			_, s2 := count(shards[1], "ledger_local", "shard2")
			doc, _ = bandCounts(t, q, []string{s1, s2}, v)
			sameDocs(t, local, doc)
		})
	}
}

// checkDrills runs every drill-down query on the engine, in one statement
// (a count per query, numbered), and checks that each lists the records
// its band counts.
func checkDrills(t *testing.T, engine string, drills []drillCheck, query func(string) []byte) {
	t.Helper()
	if len(drills) == 0 {
		t.Fatal("no drill-down query to check")
	}
	got := map[int]int64{}
	// Ten queries a statement: a statement is one command-line argument,
	// and the digit bins' queries are some 3 KB each.
	for start := 0; start < len(drills); start += 10 {
		var parts []string
		for i := start; i < min(start+10, len(drills)); i++ {
			parts = append(parts, fmt.Sprintf("SELECT %d AS i, count(*) AS n FROM (%s) AS d%d", i, strings.TrimSuffix(drills[i].query, ";"), i))
		}
		for _, line := range strings.Split(strings.TrimSpace(string(query(strings.Join(parts, " UNION ALL ")))), "\n") {
			a, b, _ := strings.Cut(line, ",")
			i, err1 := strconv.Atoi(a)
			n, err2 := strconv.ParseInt(b, 10, 64)
			if err1 != nil || err2 != nil {
				t.Fatalf("%s: unexpected line %q", engine, line)
			}
			got[i] = n
		}
	}
	for i, d := range drills {
		if n, ok := got[i]; !ok || n != d.want {
			t.Errorf("drill-down query lists %d records on %s (listed: %v), its band counts %d:\n%s", n, engine, ok, d.want, d.query)
		}
	}
}
