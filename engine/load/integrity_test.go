package load

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func sha(t *testing.T, p string) string {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// TestGlobCharactersInNames: a file named data[1].csv or q?.csv is that
// file, not a pattern; the reader gets its exact path, so neither data1.csv
// nor qA.csv is read in its place or beside it, and the SHA-256 recorded is
// that of the rows' own file. A real pattern is expanded once.
func TestGlobCharactersInNames(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	lit := writeFile(t, dir, "data[1].csv", "amount\n1.00\n")
	writeFile(t, dir, "data1.csv", "amount\n2.00\n2.00\n")
	q := writeFile(t, dir, "q?.csv", "amount\n10.00\n")
	writeFile(t, dir, "qA.csv", "amount\n20.00\n20.00\n")
	star := writeFile(t, dir, "s*.csv", "amount\n100.00\n")
	writeFile(t, dir, "sX.csv", "amount\n200.00\n")
	for _, c := range []struct {
		path string
		net  string
	}{{lit, "1.00"}, {q, "10.00"}, {star, "100.00"}} {
		ws := openWS(t, ":memory:")
		rep, err := Load(ctx, ws, []string{c.path}, Options{})
		if err != nil {
			t.Fatalf("%s: %v", c.path, err)
		}
		if len(rep.Files) != 1 || rep.Files[0].Path != c.path || rep.RowsRead != 1 || rep.Files[0].Net != c.net {
			t.Fatalf("%s: loaded %+v (read %d)", c.path, rep.Files, rep.RowsRead)
		}
		if rep.Files[0].SHA256 != sha(t, c.path) {
			t.Errorf("%s: recorded SHA-256 is not the file's", c.path)
		}
	}
	// A pattern: each file once, with its own rows.
	ws := openWS(t, ":memory:")
	rep, err := Load(ctx, ws, []string{filepath.Join(dir, "q*.csv")}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Files) != 2 || rep.RowsRead != 3 || rep.Files[0].RowsRead+rep.Files[1].RowsRead != 3 {
		t.Fatalf("q*.csv: %d files, %d rows read", len(rep.Files), rep.RowsRead)
	}
	for _, f := range rep.Files {
		if f.SHA256 != sha(t, f.Path) {
			t.Errorf("%s: recorded SHA-256 is not the file's", f.Path)
		}
	}
	// Parquet goes through the same exact path.
	pq := filepath.Join(dir, "p[1].parquet")
	other := filepath.Join(dir, "p1.parquet")
	for p, v := range map[string]string{pq: "5.00", other: "7.00"} {
		if _, err := ws.Conn.ExecContext(ctx, "COPY (SELECT CAST('"+v+"' AS DECIMAL(18,2)) AS amount) TO '"+p+"' (FORMAT parquet)"); err != nil {
			t.Fatal(err)
		}
	}
	ws2 := openWS(t, ":memory:")
	rep, err = Load(ctx, ws2, []string{pq}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsRead != 1 || rep.Files[0].Net != "5.00" || rep.Files[0].SHA256 != sha(t, pq) {
		t.Fatalf("p[1].parquet: %+v", rep.Files)
	}
	if !strings.Contains(ExactPath("/a/b[1]/c?*.csv"), "b[[]1]/c[?][*].csv") {
		t.Errorf("ExactPath: %s", ExactPath("/a/b[1]/c?*.csv"))
	}
}

// TestFileChangedWhileLoading: a file rewritten after its rows were read
// and before the load commits is refused, and nothing is loaded: its
// recorded SHA-256 and size would otherwise belong to other bytes than
// its rows.
func TestFileChangedWhileLoading(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	p := writeFile(t, dir, "gl.csv", "amount\n1.00\n2.00\n")
	ws := openWS(t, ":memory:")
	afterRead = func() {
		if err := os.WriteFile(p, []byte("amount\n1.00\n2.00\n3.00\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	defer func() { afterRead = nil }()
	_, err := Load(ctx, ws, []string{p}, Options{})
	if err == nil || !strings.Contains(err.Error(), "changed while it was being loaded") || !strings.Contains(err.Error(), p) {
		t.Fatalf("want a refusal naming the file, got %v", err)
	}
	if n := count(t, ws.Conn, "SELECT count(*) FROM files"); n != 0 {
		t.Fatalf("%d files recorded after a refused load", n)
	}
	// Unchanged, the same file loads, with the hash of what was read.
	afterRead = nil
	rep, err := Load(ctx, ws, []string{p}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsRead != 3 || rep.Files[0].SHA256 != sha(t, p) {
		t.Fatalf("read %d, sha %s", rep.RowsRead, rep.Files[0].SHA256)
	}
}

// TestSamePathOtherContent: a path loaded again with other content is
// refused (its rows would be counted beside the first version's), and
// --replace swaps that file's rows for the new ones in one load.
func TestSamePathOtherContent(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	p := writeFile(t, dir, "gl.csv", "amount\n1.00\n2.00\n")
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	if _, err := Load(ctx, ws, []string{p}, Options{}); err != nil {
		t.Fatal(err)
	}
	writeFile(t, dir, "gl.csv", "amount\n1.00\n2.00\n4.00\n")
	_, err := Load(ctx, ws, []string{p}, Options{})
	if err == nil || !strings.Contains(err.Error(), "loaded before as file 1") || !strings.Contains(err.Error(), "--replace") {
		t.Fatalf("want a refusal offering --replace, got %v", err)
	}
	sum := func() string {
		var s string
		if err := ws.Conn.QueryRowContext(ctx, "SELECT CAST(sum(amount) AS VARCHAR) || ' ' || count(*) || ' ' || (SELECT count(*) FROM files) FROM ledger").Scan(&s); err != nil {
			t.Fatal(err)
		}
		return s
	}
	if got := sum(); got != "3.00 2 1" {
		t.Fatalf("after the refusal: sum, rows, files = %s; want 3.00 2 1", got)
	}
	rep, err := Load(ctx, ws, []string{p}, Options{Replace: true})
	if err != nil {
		t.Fatal(err)
	}
	if got := sum(); got != "7.00 3 1" {
		t.Fatalf("after --replace: sum, rows, files = %s; want 7.00 3 1", got)
	}
	if w := strings.Join(rep.Files[0].Warnings, " "); !strings.Contains(w, "replaced file 1 loaded earlier from the same path with other content") {
		t.Errorf("warnings: %s", w)
	}
}

// TestClientColumnsNamedLikeInternals: a client's columns named rowid,
// ll_rn, ll_fast, ll_parts, file_row_number, or like the reader's own
// positional names, load as any other column, in CSV and Parquet, with
// their values kept and the lines numbered.
func TestClientColumnsNamedLikeInternals(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	names := []string{"rowid", "ll_rn", "ll_fast", "ll_parts", "file_row_number", "ll_c1", "ll_file_row", "ll_parts_d"}
	body := strings.Join(names, ",") + ",amount\n"
	for i := 1; i <= 3; i++ {
		for range names {
			body += "x" + string(rune('0'+i)) + ","
		}
		body += string(rune('0'+i)) + ".25\n"
	}
	csv := writeFile(t, dir, "internal_names.csv", body)
	pq := filepath.Join(dir, "internal_names.parquet")
	ws := openWS(t, ":memory:")
	var sel []string
	for _, n := range names {
		sel = append(sel, "'x' || i AS "+n)
	}
	if _, err := ws.Conn.ExecContext(ctx, "COPY (SELECT "+strings.Join(sel, ", ")+", CAST(i + 0.25 AS DECIMAL(18,2)) AS amount FROM range(1, 4) r(i) ORDER BY i) TO '"+pq+"' (FORMAT parquet)"); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{csv, pq} {
		ws := openWS(t, ":memory:")
		rep, err := Load(ctx, ws, []string{p}, Options{})
		if err != nil {
			t.Fatalf("%s: %v", filepath.Base(p), err)
		}
		if rep.RowsLoaded != 3 || rep.Files[0].Net != "6.75" {
			t.Fatalf("%s: loaded %d, net %s", filepath.Base(p), rep.RowsLoaded, rep.Files[0].Net)
		}
		for _, n := range names {
			var got string
			q := "SELECT string_agg(" + `"` + n + `"` + " || '@' || line, ' ' ORDER BY line) FROM ledger"
			if err := ws.Conn.QueryRowContext(ctx, q).Scan(&got); err != nil {
				t.Fatalf("%s: column %s: %v", filepath.Base(p), n, err)
			}
			want := "x1@2 x2@3 x3@4"
			if strings.HasSuffix(p, ".parquet") {
				want = "x1@1 x2@2 x3@3"
			}
			if got != want {
				t.Errorf("%s: column %s holds %q, want %q", filepath.Base(p), n, got, want)
			}
		}
	}
}

// TestTimestampWithTimeZone: the posting date of a Parquet TIMESTAMP
// WITH TIME ZONE is taken in UTC, whatever DuckDB's TimeZone setting (the
// machine's zone by default), or in the zone the load names.
func TestTimestampWithTimeZone(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	pq := filepath.Join(dir, "tz.parquet")
	ws := openWS(t, ":memory:")
	if _, err := ws.Conn.ExecContext(ctx, "COPY (SELECT TIMESTAMPTZ '2025-12-31 20:00:00+00' AS posted, CAST(1 AS DECIMAL(18,2)) AS amount) TO '"+pq+"' (FORMAT parquet)"); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ session, option, want string }{
		{"UTC", "", "2025-12-31"},
		{"Asia/Tokyo", "", "2025-12-31"},
		{"America/New_York", "", "2025-12-31"},
		{"UTC", "Asia/Tokyo", "2026-01-01"},
		{"Asia/Tokyo", "UTC", "2025-12-31"},
	} {
		ws := openWS(t, ":memory:")
		if _, err := ws.Conn.ExecContext(ctx, "SET TimeZone = '"+c.session+"'"); err != nil {
			t.Fatal(err)
		}
		if _, err := Load(ctx, ws, []string{pq}, Options{TimeZone: c.option}); err != nil {
			t.Fatalf("session %s, option %q: %v", c.session, c.option, err)
		}
		var got string
		if err := ws.Conn.QueryRowContext(ctx, "SELECT CAST(posted AS VARCHAR) FROM ledger").Scan(&got); err != nil {
			t.Fatal(err)
		}
		if got != c.want {
			t.Errorf("session zone %s, --time-zone %q: posted %s, want %s", c.session, c.option, got, c.want)
		}
	}
	if _, err := Load(ctx, openWS(t, ":memory:"), []string{pq}, Options{TimeZone: "Mars/Olympus"}); err == nil || !strings.Contains(err.Error(), "--time-zone") {
		t.Errorf("unknown zone: %v", err)
	}
}
