package report

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"
	"time"
)

// TestRenderedFormats renders a report from a small pack-run document and
// checks the text of the page itself: ids without separators, dates as
// dates, money with two decimals, an underflowed p-value as "< 1e-300",
// parameters as a list (not JSON), the check's SQL in its own section.
func TestRenderedFormats(t *testing.T) {
	doc := `{
  "results": {},
  "tables": [
    {"name": "extract_bin", "title": "Records behind bin 18", "section": "extract",
     "columns": [{"name": "row_id", "kind": "count"}, {"name": "line", "kind": "count"}, {"name": "doc_id", "kind": "text"},
                 {"name": "amount", "kind": "money"}, {"name": "posted", "kind": "date"}, {"name": "p_value", "kind": "number"},
                 {"name": "count", "kind": "count"}],
     "rows": [[1400, 123141, "D-1", "1234.5", "2025-01-02T00:00:00Z", 0, 12345]], "rows_total": 1},
    {"name": "check_round", "title": "Round amounts", "section": "check",
     "columns": [{"name": "doc_id", "kind": "text"}, {"name": "amount", "kind": "money"}],
     "rows": [["D-2", "1000"]], "rows_total": 1}
  ]
}`
	params := `{"out": "/tmp/out", "parameters": {"battery": {"options": {"signs": "positive", "min": "10", "tests": ["first", "first_two"]}},
  "checks": [{"name": "round", "sql": "SELECT doc_id, amount FROM ledger WHERE abs(amount) % $round_to = 0", "params": {"round_to": 1000}}]}}`
	r := &Run{ID: 7, Kind: KindPack, StartedAt: time.Date(2025, 3, 4, 5, 6, 7, 0, time.UTC), FinishedAt: time.Date(2025, 3, 4, 5, 7, 0, 0, time.UTC),
		Params: json.RawMessage(params), Result: json.RawMessage(doc)}
	m := &Model{Title: "t", GeneratedAt: time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC), Runs: []Run{*r},
		Completeness: &Completeness{Balanced: true, Files: []FileRow{{FileID: 1, Name: "gl.csv", RowsRead: 2, RowsLoaded: 1, RowsRejected: 1, Balanced: true}},
			Reasons: []ReasonRow{{FileID: 1, File: "gl.csv", Reason: "not a number", Rows: 1, FirstLine: 3307}}}}
	if err := m.addPackDoc(r, r.Result, runBase(r.ID)); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	shown := func(field string) string {
		t.Helper()
		i := strings.Index(page, `data-field="`+field+`"`)
		if i < 0 {
			t.Fatalf("no number %s in the page", field)
		}
		rest := page[i:]
		return rest[strings.Index(rest, ">")+1 : strings.Index(rest, "</span>")]
	}
	for field, want := range map[string]string{
		"rows.0.row_id":                     "1400",     // an id: no separator
		"rows.0.line":                       "123141",   // a line number: no separator
		"rows.0.amount":                     "1,234.50", // money: separators, two decimals
		"rows.0.p_value":                    "&lt; 1e-300",
		"rows.0.count":                      "12,345", // a count: separators
		"rejects.1.not a number.first_line": "3307",
	} {
		if got := shown(field); got != want {
			t.Errorf("%s shown as %q, want %q", field, got, want)
		}
	}
	if !strings.Contains(page, `<span class="date">2025-01-02</span>`) || strings.Contains(page, "2025-01-02T00:00:00Z</") {
		t.Error("the posting date is not shown as a date")
	}
	// Parameters as a list in words, not JSON.
	if !strings.Contains(page, `<span class="pk">min:</span> 10`) || strings.Contains(page, `{&#34;out&#34;`) || strings.Contains(page, `{"out"`) {
		t.Error("the run's parameters are not a readable list")
	}
	if !strings.Contains(page, "Started 2025-03-04 05:06:07 UTC") {
		t.Error("the run's start is not shown as a date and time")
	}
	// The check in its own section with its SQL and bound value.
	i := strings.Index(page, `id="checks"`)
	if i < 0 {
		t.Fatal("no checks section")
	}
	checks := page[i:]
	checks = checks[:strings.Index(checks, "</section>")]
	for _, want := range []string{"Round amounts", "SELECT doc_id, amount FROM ledger WHERE abs(amount) % $round_to = 0", "<code>$round_to</code>", "1,000.00"} {
		if !strings.Contains(checks, want) {
			t.Errorf("the checks section lacks %q", want)
		}
	}
}
