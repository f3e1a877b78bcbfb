package pack

import (
	"fmt"
	"github.com/leadline/leadline/engine/numfmt"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/fixtures"
)

// Three extra SQL checks in the style of a journal-entry test plan, run by
// a pack on the generated ledger (Parquet), against answers computed here
// in Go from the generator's own rows: entries posted on a weekend, entries
// of round amounts of 1,000 or more, and entries by users who posted few
// documents. Parameters are bound from the pack.
const jePack = `[pack]
name = "je-tests"
client = "Skerrimoor Kelp Group"
period = "FY2025"

[[source]]
files = ["skerrimoor_ledger_2025.parquet"]

[[check]]
name = "weekend"
title = "Entries posted on a Saturday or Sunday"
sql = """
SELECT doc_id, line_id, user_id, posted, amount
FROM ledger
WHERE dayofweek(posted) IN (0, 6)
ORDER BY posted, doc_id, line_id, row_id
"""

[[check]]
name = "round"
title = "Round amounts of 1,000 or more"
sql = """
SELECT doc_id, line_id, user_id, amount
FROM ledger
WHERE abs(amount) >= $min_amount AND abs(amount) % $round_to = 0
ORDER BY abs(amount) DESC, doc_id, line_id, row_id
"""
[check.params]
min_amount = 1000
round_to = 50

[[check]]
name = "rare_users"
title = "Entries by users who posted few documents"
sql = """
WITH per_user AS (
    SELECT user_id, count(DISTINCT doc_id) AS documents FROM ledger GROUP BY user_id
)
SELECT l.user_id, p.documents, l.doc_id, l.line_id, l.amount
FROM ledger l JOIN per_user p USING (user_id)
WHERE p.documents < $max_documents
ORDER BY l.user_id, l.doc_id, l.line_id, l.row_id
"""
[check.params]
max_documents = 120
`

func TestJournalEntryChecks(t *testing.T) {
	path := packDir(t, jePack)
	res := mustRun(t, mustRead(t, path), filepath.Join(filepath.Dir(path), "out"), false)

	// The answers, from the generator's rows.
	type key struct {
		doc  string
		line int32
	}
	weekend := map[string]int{}
	round := map[string]int{}
	var weekendCents, roundCents int64
	docs := map[string]map[string]bool{}
	var rows []fixtures.Row
	err := fixtures.Generate(genCfg, func(r fixtures.Row) error {
		rows = append(rows, r)
		k := fmt.Sprintf("%s/%d", r.DocID, r.LineID)
		if wd := r.Posted.Weekday(); wd == 0 || wd == 6 {
			weekend[k]++
			weekendCents += r.Cents
		}
		abs := r.Cents
		if abs < 0 {
			abs = -abs
		}
		if abs >= 1000_00 && abs%50_00 == 0 {
			round[k]++
			roundCents += r.Cents
		}
		if docs[r.UserID] == nil {
			docs[r.UserID] = map[string]bool{}
		}
		docs[r.UserID][r.DocID] = true
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	rare := map[string]int{}
	var rareCents int64
	rareUsers := map[string]int{}
	for _, r := range rows {
		if n := len(docs[r.UserID]); n < 120 {
			rare[fmt.Sprintf("%s/%s/%d/%d", r.UserID, r.DocID, r.LineID, n)]++
			rareCents += r.Cents
			rareUsers[r.UserID] = n
		}
	}
	// The generated ledger gives each check something to find.
	if len(weekend) < 50 || len(round) < 10 || len(rareUsers) < 2 {
		t.Fatalf("weak test data: %d weekend, %d round, %d rare users", len(weekend), len(round), len(rareUsers))
	}
	t.Logf("answers: %d weekend entries, %d round entries, %d entries by %d rare users %v", sum(weekend), sum(round), sum(rare), len(rareUsers), rareUsers)

	got := func(name string, keyOf func(row []any, col map[string]int) string) (map[string]int, int64) {
		tb := res.Run.Table("check_" + name)
		if tb == nil {
			t.Fatalf("no table check_%s", name)
		}
		col := map[string]int{}
		for i, c := range tb.Columns {
			col[c.Name] = i
		}
		if tb.Columns[col["amount"]].Kind != output.Money {
			t.Errorf("%s: amount is %s, want money", name, tb.Columns[col["amount"]].Kind)
		}
		m := map[string]int{}
		var cents int64
		for _, row := range tb.Rows {
			m[keyOf(row, col)]++
			d := row[col["amount"]].(output.Decimal)
			c, err := strconv.ParseInt(strings.Replace(d.Text, ".", "", 1), 10, 64)
			if err != nil {
				t.Fatal(err)
			}
			cents += c
		}
		return m, cents
	}
	docLine := func(row []any, col map[string]int) string {
		return fmt.Sprintf("%v/%v", row[col["doc_id"]], row[col["line_id"]])
	}
	compare := func(name string, want map[string]int, wantCents int64, have map[string]int, haveCents int64) {
		if !equalCounts(want, have) || wantCents != haveCents {
			t.Errorf("%s: %d entries (sum %d cents), want %d (sum %d cents)", name, sum(have), haveCents, sum(want), wantCents)
		}
	}
	w, wc := got("weekend", docLine)
	compare("weekend", weekend, weekendCents, w, wc)
	r, rc := got("round", docLine)
	compare("round", round, roundCents, r, rc)
	u, uc := got("rare_users", func(row []any, col map[string]int) string {
		return fmt.Sprintf("%v/%v/%v/%v", row[col["user_id"]], row[col["doc_id"]], row[col["line_id"]], row[col["documents"]])
	})
	compare("rare_users", rare, rareCents, u, uc)
	// The findings name each check's row count.
	var text []string
	for _, f := range res.Run.Summary.Findings {
		text = append(text, f.Text)
	}
	// The completeness finding states the share rejected at load beside the
	// rows read (it goes to the report and the workbook's summary).
	comp, _ := res.Run.Results["completeness"].(map[string]any)
	read, _ := comp["rows_read"].(int64)
	rejected, _ := comp["rows_rejected"].(int64)
	if read == 0 {
		t.Fatalf("completeness results: %v", comp)
	}
	share := fmt.Sprintf("rows read = %s loaded + %s rejected (%.2f%% rejected)", numfmt.Int(read-rejected), numfmt.Int(rejected), 100*float64(rejected)/float64(read))
	for _, want := range []string{share, fmt.Sprintf("Entries posted on a Saturday or Sunday: %d row(s).", sum(weekend))} {
		if !strings.Contains(strings.Join(text, "\n"), want) {
			t.Errorf("findings lack %q: %v", want, text)
		}
	}
}

func sum(m map[string]int) int {
	n := 0
	for _, v := range m {
		n += v
	}
	return n
}

func equalCounts(a, b map[string]int) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}
