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
