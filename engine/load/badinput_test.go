package load

import (
	"context"
	"database/sql"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load/loadtest"
)

// TestBadInputCorpus loads every case of testdata/badinput/cases.toml into
// a fresh workspace and holds the outcome to the one written beside it: the
// error (naming the file, and the line where there is one), or the rows
// read, loaded and rejected with every rejected row's line, column and
// reason, and the values the case checks. A failed load must leave the
// workspace empty.
func TestBadInputCorpus(t *testing.T) {
	cases, err := loadtest.Cases()
	if err != nil {
		t.Fatal(err)
	}
	if len(cases) < 40 {
		t.Fatalf("the corpus has %d cases; the corpus should hold at least 40", len(cases))
	}
	loadtest.ForEach(t, func(t *testing.T, c loadtest.Case, path string) {
		ctx := context.Background()
		ws := openWS(t, ":memory:")
		rep, err := Load(ctx, ws, []string{path}, caseOptions(c.Options))
		if c.Exit != 0 {
			if err == nil {
				t.Fatalf("%s loaded (read %d, loaded %d, rejected %d); want an error with %q", c.What, rep.RowsRead, rep.RowsLoaded, rep.RowsRejected, c.Error)
			}
			if e := c.ErrorMatches(err.Error()); e != nil {
				t.Fatalf("%v: %q", e, err)
			}
			if n := count(t, ws.Conn, "SELECT count(*) FROM files") + count(t, ws.Conn, "SELECT count(*) FROM rejects") + count(t, ws.Conn, "SELECT count(*) FROM loads") + count(t, ws.Conn, "SELECT count(*) FROM meta"); n != 0 {
				t.Fatalf("a failed load left %d rows in files, rejects, loads and meta", n)
			}
			if has, _ := ws.HasLedger(ctx); has {
				t.Fatal("a failed load left a ledger table")
			}
			return
		}
		if err != nil {
			t.Fatalf("%s: %v", c.What, err)
		}
		f := rep.Files[0]
		if f.RowsRead != f.RowsLoaded+f.RowsRejected {
			t.Fatalf("read %d != loaded %d + rejected %d", f.RowsRead, f.RowsLoaded, f.RowsRejected)
		}
		if f.RowsRead != c.RowsRead || f.RowsLoaded != c.RowsLoaded || f.RowsRejected != c.RowsRejected {
			t.Fatalf("read %d loaded %d rejected %d; want %d, %d, %d (reasons %+v)", f.RowsRead, f.RowsLoaded, f.RowsRejected,
				c.RowsRead, c.RowsLoaded, c.RowsRejected, f.RejectReasons)
		}
		if c.RowsRounded != nil && f.RowsRounded != *c.RowsRounded {
			t.Errorf("%d amounts rounded, want %d", f.RowsRounded, *c.RowsRounded)
		}
		// The workspace agrees with the report.
		if n := count(t, ws.Conn, "SELECT count(*) FROM ledger"); n != f.RowsLoaded {
			t.Errorf("ledger holds %d rows, report says %d loaded", n, f.RowsLoaded)
		}
		if n := count(t, ws.Conn, "SELECT count(*) FROM ledger WHERE amount IS NULL"); n != 0 {
			t.Errorf("%d loaded rows without an amount", n)
		}
		for _, w := range c.Warnings {
			found := false
			for _, got := range f.Warnings {
				found = found || strings.Contains(got, w)
			}
			if !found {
				t.Errorf("no warning holds %q; warnings: %q", w, f.Warnings)
			}
		}
		checkRejects(t, ws.Conn, c.Rejects)
		for _, ch := range c.Checks {
			var got sql.NullString
			if err := ws.Conn.QueryRowContext(ctx, ch.SQL).Scan(&got); err != nil {
				t.Errorf("%s: %v", ch.SQL, err)
				continue
			}
			if got.String != ch.Want {
				t.Errorf("%s\n got %q\nwant %q", ch.SQL, got.String, ch.Want)
			}
		}
	})
}

func checkRejects(t *testing.T, ws interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
}, want []loadtest.Reject) {
	t.Helper()
	rows, err := ws.QueryContext(context.Background(), "SELECT line, coalesce(column_name, ''), reason FROM rejects ORDER BY line")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var got []loadtest.Reject
	for rows.Next() {
		var r loadtest.Reject
		if err := rows.Scan(&r.Line, &r.Column, &r.Reason); err != nil {
			t.Fatal(err)
		}
		got = append(got, r)
	}
	if len(got) != len(want) {
		t.Fatalf("%d rejected rows, want %d: %+v", len(got), len(want), got)
	}
	for i := range got {
		if got[i].Line != want[i].Line || got[i].Column != want[i].Column || !strings.Contains(got[i].Reason, want[i].Reason) {
			t.Errorf("reject %d: line %d column %q reason %q; want line %d column %q reason with %q",
				i+1, got[i].Line, got[i].Column, got[i].Reason, want[i].Line, want[i].Column, want[i].Reason)
		}
	}
}

func caseOptions(o loadtest.Options) Options {
	return Options{Map: o.Map, Debit: o.Debit, Credit: o.Credit, DecimalComma: o.DecimalComma, DecimalPoint: o.DecimalPoint, MaxRejects: o.MaxRejects, Scale: o.Scale,
		Precision: o.Precision, Delimiter: o.Delimiter, Encoding: o.Encoding, DateFormat: o.DateFormat}
}

func count(t *testing.T, ws interface {
	QueryRowContext(context.Context, string, ...any) *sql.Row
}, q string) int64 {
	t.Helper()
	var n int64
	if err := ws.QueryRowContext(context.Background(), q).Scan(&n); err != nil {
		if strings.Contains(err.Error(), "does not exist") {
			return 0
		}
		t.Fatalf("%s: %v", q, err)
	}
	return n
}
