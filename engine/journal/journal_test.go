package journal_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
)

func loadText(t *testing.T, text string) *workspace.Workspace {
	t.Helper()
	dir := t.TempDir()
	gl := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(gl, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	ws, err := workspace.Open(ctx, filepath.Join(dir, "w.duckdb"), workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	if _, err := load.Load(ctx, ws, []string{gl}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	return ws
}

func byName(t *testing.T, s *journal.Summary, name string) journal.Check {
	t.Helper()
	for _, c := range s.Checks {
		if c.Name == name {
			return c
		}
	}
	t.Fatalf("no check %s", name)
	return journal.Check{}
}

// TestJournalChecksCountExactly: a ledger written here with a known number
// of unbalanced documents, postings outside 2025 and repeated line keys;
// the counts are those the test planted, not leadline's own output.
func TestJournalChecksCountExactly(t *testing.T) {
	var b strings.Builder
	b.WriteString("entity,doc_id,line_id,posted,amount\n")
	const docs = 40
	unbalanced, outside, dupKeys, dupRows := 0, 0, 0, 0
	for d := 1; d <= docs; d++ {
		ent := []string{"E1", "E2"}[d%2]
		date := fmt.Sprintf("2025-%02d-15", 1+d%12)
		if d%9 == 0 { // posted in the next year: two lines each
			date = "2026-01-03"
			outside += 2
		}
		if d == 1 { // the day before the period starts
			date = "2024-12-31"
			outside += 2
		}
		amt := 100 + d
		credit := -amt
		if d%7 == 0 { // one cent short
			credit++
			unbalanced++
		}
		fmt.Fprintf(&b, "%s,DOC%d,1,%s,%d.00\n", ent, d, date, amt)
		fmt.Fprintf(&b, "%s,DOC%d,2,%s,%d.00\n", ent, d, date, credit)
		if d%10 == 0 { // the debit line repeated: its document no longer balances
			fmt.Fprintf(&b, "%s,DOC%d,1,%s,%d.00\n", ent, d, date, amt)
			dupKeys++
			dupRows += 2
			if d%7 != 0 {
				unbalanced++
			}
			if date[:4] != "2025" {
				outside++
			}
		}
	}
	// The same document number in another entity is another document.
	b.WriteString("E3,DOC5,1,2025-06-30,7.00\nE3,DOC5,2,2025-06-30,-7.00\n")
	ws := loadText(t, b.String())
	p, err := journal.ParsePeriod("1 January to 31 December 2025")
	if err != nil {
		t.Fatal(err)
	}
	s, err := journal.Run(context.Background(), ws, journal.Options{Period: &p})
	if err != nil {
		t.Fatal(err)
	}
	u := byName(t, s, journal.Unbalanced)
	if u.Status != journal.StatusFound || u.Count != int64(unbalanced) {
		t.Errorf("unbalanced documents %d (%s), the test planted %d", u.Count, u.Status, unbalanced)
	}
	o := byName(t, s, journal.OutOfPeriod)
	if o.Count != int64(outside) || o.Rows != int64(outside) {
		t.Errorf("out of period %d, the test planted %d", o.Count, outside)
	}
	k := byName(t, s, journal.DuplicateKeys)
	if k.Count != int64(dupKeys) || k.Rows != int64(dupRows) {
		t.Errorf("duplicate line keys %d (%d rows), the test planted %d (%d rows)", k.Count, k.Rows, dupKeys, dupRows)
	}
	for _, c := range []journal.Check{u, o, k} {
		if len(c.First) != min(int(c.Count), journal.DefaultListed) || !strings.HasPrefix(c.Command, "leadline sql --db ") {
			t.Errorf("%s: %d listed, command %q", c.Name, len(c.First), c.Command)
		}
	}
	// The command lists them all: its SQL, run as it stands, gives Count rows.
	for _, c := range []journal.Check{u, o, k} {
		q := c.Command[strings.Index(c.Command, "\"")+1 : len(c.Command)-1]
		var n int64
		if err := ws.Conn.QueryRowContext(context.Background(), "SELECT count(*) FROM ("+q+")").Scan(&n); err != nil || n != c.Count {
			t.Errorf("%s: the command's query gives %d rows (%v), want %d", c.Name, n, err, c.Count)
		}
	}
}

// TestJournalChecksNotPossible: without doc_id, line_id or posted the
// checks say they could not run and why; without a period likewise.
func TestJournalChecksNotPossible(t *testing.T) {
	ws := loadText(t, "entity,amount\nE1,10.00\nE1,-5.00\n")
	s, err := journal.Run(context.Background(), ws, journal.Options{})
	if err != nil {
		t.Fatal(err)
	}
	for name, want := range map[string]string{
		journal.Unbalanced:    "--map doc_id=COLUMN",
		journal.OutOfPeriod:   "--map posted=COLUMN",
		journal.DuplicateKeys: "--map doc_id=COLUMN",
	} {
		c := byName(t, s, name)
		if c.Status != journal.StatusNotRun || !strings.Contains(c.Reason, want) {
			t.Errorf("%s: %s, %q; want not possible naming %s", name, c.Status, c.Reason, want)
		}
	}
	ws = loadText(t, "doc_id,posted,amount\nD1,2025-01-01,10.00\nD1,2025-01-01,-10.00\n")
	s, err = journal.Run(context.Background(), ws, journal.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if c := byName(t, s, journal.OutOfPeriod); c.Status != journal.StatusNotRun || !strings.Contains(c.Reason, "--period") {
		t.Errorf("no period: %+v", c)
	}
	if c := byName(t, s, journal.DuplicateKeys); c.Status != journal.StatusNotRun || !strings.Contains(c.Reason, "line_id") {
		t.Errorf("no line_id: %+v", c)
	}
	if c := byName(t, s, journal.Unbalanced); c.Status != journal.StatusOK || c.Count != 0 {
		t.Errorf("balanced document: %+v", c)
	}
}

func TestParsePeriod(t *testing.T) {
	for in, want := range map[string]string{
		"2025-01-01..2025-12-31":          "2025-01-01..2025-12-31",
		"2025-04-01 to 2026-03-31":        "2025-04-01..2026-03-31",
		"2025":                            "2025-01-01..2025-12-31",
		"1 January to 31 December 2025":   "2025-01-01..2025-12-31",
		"1 July 2024 to 30 June 2025":     "2024-07-01..2025-06-30",
		"1 July to 30 June 2025":          "2024-07-01..2025-06-30",
		"1 Feb to 29 Feb 2024":            "2024-02-01..2024-02-29",
		" 2025-01-01 .. 2025-06-30 ":      "2025-01-01..2025-06-30",
		"1 january to 31 december 2025  ": "2025-01-01..2025-12-31",
	} {
		p, err := journal.ParsePeriod(in)
		if err != nil || p.String() != want {
			t.Errorf("%q: %v, %v; want %s", in, p, err, want)
		}
	}
	for _, in := range []string{"FY2025", "2025-13-01..2025-12-31", "2025-12-31..2025-01-01", "31 June to 1 July 2025", "", "2025-02-30..2025-03-01"} {
		if _, err := journal.ParsePeriod(in); err == nil || !strings.Contains(err.Error(), "2025-01-01..2025-12-31") {
			t.Errorf("%q: %v; want an error showing the forms understood", in, err)
		}
	}
}

// TestUnbalancedPerCurrency: with a currency column a document balances
// per currency: 100 EUR against 100 USD does not, counted once per
// currency; a document balanced within each currency does.
func TestUnbalancedPerCurrency(t *testing.T) {
	ws := loadText(t, "entity,doc_id,line_id,currency,amount\n"+
		"E1,D1,1,EUR,100.00\nE1,D1,2,USD,-100.00\n"+
		"E1,D2,1,EUR,50.00\nE1,D2,2,EUR,-50.00\nE1,D2,3,USD,7.00\nE1,D2,4,USD,-7.00\n")
	s, err := journal.Run(context.Background(), ws, journal.Options{})
	if err != nil {
		t.Fatal(err)
	}
	u := byName(t, s, journal.Unbalanced)
	if u.Count != 2 || u.Rows != 2 || !strings.Contains(u.Title, "currency") || !strings.Contains(u.Command, "currency") {
		t.Errorf("per currency: %d (%d rows), title %q", u.Count, u.Rows, u.Title)
	}
}
