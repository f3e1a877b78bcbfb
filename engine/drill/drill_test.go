package drill_test

import (
	"context"
	"errors"
	"fmt"
	"math/big"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/drill/drilltest"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// The checks here: drill results equal an independent
// filter of the same rows in Go (the rows drilltest generated and the test
// wrote as CSV), for digit bins, amount ranges, exact amounts, segments and
// filters; groups equal a Go aggregation; bad input gets a clear message.

var (
	once    sync.Once
	shared  *workspace.Workspace
	ledger  *drilltest.Ledger
	setErr  error
	tempDir string
)

func TestMain(m *testing.M) {
	code := m.Run()
	if shared != nil {
		shared.Close()
	}
	if tempDir != "" {
		os.RemoveAll(tempDir)
	}
	os.Exit(code)
}

func setup(t *testing.T) (*workspace.Workspace, *drilltest.Ledger) {
	t.Helper()
	once.Do(func() {
		ledger = drilltest.Generate(25_000, 42)
		tempDir, setErr = os.MkdirTemp("", "leadline-drill-test-")
		if setErr != nil {
			return
		}
		path := filepath.Join(tempDir, "payables.csv")
		if setErr = ledger.WriteCSV(path); setErr != nil {
			return
		}
		ctx := context.Background()
		if shared, setErr = workspace.Open(ctx, ":memory:", workspace.Options{}); setErr != nil {
			return
		}
		_, setErr = load.Load(ctx, shared, []string{path}, load.Options{})
	})
	if setErr != nil {
		t.Fatal(setErr)
	}
	return shared, ledger
}

func abs(c int64) int64 {
	if c < 0 {
		return -c
	}
	return c
}

// keep applies signs and minimum (in cents) like population.Spec.
func keep(r drilltest.Row, signs string, minCents int64) bool {
	switch signs {
	case "positive":
		if r.Cents <= 0 {
			return false
		}
	case "negative":
		if r.Cents >= 0 {
			return false
		}
	}
	return abs(r.Cents) >= minCents
}

func drillLines(t *testing.T, ws *workspace.Workspace, sel drill.Selection) map[int64]bool {
	t.Helper()
	ctx := context.Background()
	b, err := drill.Build(ctx, ws, sel)
	if err != nil {
		t.Fatalf("%+v: %v", sel, err)
	}
	tab, more, err := drill.Records(ctx, ws, b, drill.RecordOptions{Limit: 1_000_000})
	if err != nil {
		t.Fatal(err)
	}
	if more {
		t.Fatal("more than a million records")
	}
	li := colIndex(t, tab.Columns, "line")
	out := map[int64]bool{}
	for _, r := range tab.Rows {
		out[r[li].(int64)] = true
	}
	s, err := drill.Summarize(ctx, ws, b)
	if err != nil {
		t.Fatal(err)
	}
	if s.Records != int64(len(out)) {
		t.Errorf("%+v: summary counts %d records, listed %d", sel, s.Records, len(out))
	}
	return out
}

// whereLines runs the selection's predicate alone (the records path is
// checked by drillLines in the other tests; this keeps 2,000 bins quick).
func whereLines(t *testing.T, ws *workspace.Workspace, sel drill.Selection) map[int64]bool {
	t.Helper()
	ctx := context.Background()
	b, err := drill.Build(ctx, ws, sel)
	if err != nil {
		t.Fatalf("%+v: %v", sel, err)
	}
	rows, err := ws.Conn.QueryContext(ctx, "SELECT line FROM ledger WHERE "+b.Where.SQL, b.Where.Args...)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	out := map[int64]bool{}
	for rows.Next() {
		var n int64
		if err := rows.Scan(&n); err != nil {
			t.Fatal(err)
		}
		out[n] = true
	}
	return out
}

func colIndex(t *testing.T, cols []string, name string) int {
	t.Helper()
	for i, c := range cols {
		if c == name {
			return i
		}
	}
	t.Fatalf("no column %s in %v", name, cols)
	return -1
}

func goLines(rows []drilltest.Row, f func(drilltest.Row) bool) map[int64]bool {
	out := map[int64]bool{}
	for _, r := range rows {
		if f(r) {
			out[r.Line] = true
		}
	}
	return out
}

func diff(a, b map[int64]bool) string {
	var onlyA, onlyB []int64
	for k := range a {
		if !b[k] {
			onlyA = append(onlyA, k)
		}
	}
	for k := range b {
		if !a[k] {
			onlyB = append(onlyB, k)
		}
	}
	if len(onlyA) == 0 && len(onlyB) == 0 {
		return ""
	}
	sort.Slice(onlyA, func(i, j int) bool { return onlyA[i] < onlyA[j] })
	sort.Slice(onlyB, func(i, j int) bool { return onlyB[i] < onlyB[j] })
	return fmt.Sprintf("drill %d, Go %d; only in drill: %v; only in Go: %v", len(a), len(b), head(onlyA), head(onlyB))
}

func head(x []int64) []int64 {
	if len(x) > 5 {
		return x[:5]
	}
	return x
}

func bin(n int) *int { return &n }

// lastTwoLeftOut reports whether an amount in cents is below the last-two
// test's minimum: five digits in units, 100.00 at scale 2, written out here
// independently of drill.LastTwoMinUnits.
func lastTwoLeftOut(cents int64) bool {
	return cents > -10000 && cents < 10000
}

// TestDrillBinsEqualGoFilter: for every bin of every digit test (default
// population and both signs from 0), the records drilled are exactly the
// rows whose decimal text has those digits (DigitsOf).
func TestDrillBinsEqualGoFilter(t *testing.T) {
	ws, l := setup(t)
	for _, pop := range []struct {
		signs string
		min   string
		cents int64
	}{{"positive", "10", 1000}, {"both", "0", 0}, {"negative", "0.5", 50}} {
		// the digits of every row, from its decimal text, once
		byBin := map[benford.Test]map[int]map[int64]bool{}
		for _, test := range drill.DrillTests {
			byBin[test] = map[int]map[int64]bool{}
		}
		for _, r := range l.Rows {
			if d, ok := drill.DigitsOf(big.NewInt(r.Cents)); ok && keep(r, pop.signs, pop.cents) {
				for test, b := range d {
					if test == benford.LastTwo && lastTwoLeftOut(r.Cents) {
						continue // the last-two test takes only |amount| >= 100.00 (drill.LastTwoMinUnits)
					}
					if byBin[test][b] == nil {
						byBin[test][b] = map[int64]bool{}
					}
					byBin[test][b][r.Line] = true
				}
			}
		}
		total := 0
		for _, test := range drill.DrillTests {
			lo, hi := test.Bins()
			if test == benford.FirstThree && pop.signs != "positive" {
				continue // 900 bins once is enough
			}
			sum := 0
			for b := lo; b <= hi; b++ {
				got := whereLines(t, ws, drill.Selection{Spec: population.Spec{Signs: pop.signs, Min: pop.min}, Test: string(test), Bin: bin(b)})
				want := byBin[test][b]
				if want == nil {
					want = map[int64]bool{}
				}
				if d := diff(got, want); d != "" {
					t.Errorf("signs %s min %s, %s bin %d: %s", pop.signs, pop.min, test, b, d)
				}
				sum += len(got)
			}
			n := len(goLines(l.Rows, func(r drilltest.Row) bool {
				return keep(r, pop.signs, pop.cents) && r.Cents != 0 && (test != benford.LastTwo || !lastTwoLeftOut(r.Cents))
			}))
			if sum != n {
				t.Errorf("signs %s min %s, %s: the bins hold %d records, the population %d", pop.signs, pop.min, test, sum, n)
			}
			total += sum
		}
		t.Logf("signs %s, min %s: every bin equal to the Go filter (%d bin memberships checked)", pop.signs, pop.min, total)
	}
}

// TestDrillAmountsRangesSegments: exact amounts, half-open ranges of
// absolute amounts, segments and filters against the Go filter.
func TestDrillAmountsRangesSegments(t *testing.T) {
	ws, l := setup(t)
	cases := []struct {
		name string
		sel  drill.Selection
		f    func(drilltest.Row) bool
	}{
		{"range 4500:5000", drill.Selection{Range: "4500:5000"},
			func(r drilltest.Row) bool { return r.Cents >= 450000 && r.Cents < 500000 }},
		{"range both signs", drill.Selection{Spec: population.Spec{Signs: "both", Min: "0"}, Range: "99.995:250"},
			func(r drilltest.Row) bool { return abs(r.Cents) >= 10000 && abs(r.Cents) < 25000 }},
		{"range open end", drill.Selection{Range: "50000:"},
			func(r drilltest.Row) bool { return r.Cents >= 5000000 }},
		{"range negative", drill.Selection{Spec: population.Spec{Signs: "negative", Min: "0"}, Range: ":100"},
			func(r drilltest.Row) bool { return r.Cents < 0 && -r.Cents < 10000 }},
		{"amount 250", drill.Selection{Amount: "250"},
			func(r drilltest.Row) bool { return r.Cents == 25000 }},
		{"amount -250 (negative)", drill.Selection{Amount: "-250.00"},
			func(r drilltest.Row) bool { return r.Cents == -25000 }},
		{"amount 250 both", drill.Selection{Amount: "250", Spec: population.Spec{Signs: "both"}},
			func(r drilltest.Row) bool { return abs(r.Cents) == 25000 }},
		{"segment counterparty", drill.Selection{Segments: []string{"counterparty=V0007"}},
			func(r drilltest.Row) bool { return r.Cents >= 1000 && r.Counterparty == "V0007" }},
		{"two segments", drill.Selection{Segments: []string{"user_id=ghart", "entity=WEST"}, Spec: population.Spec{Signs: "both", Min: "0"}},
			func(r drilltest.Row) bool { return r.UserID == "ghart" && r.Entity == "WEST" }},
		{"segment original column", drill.Selection{Segments: []string{"currency=EUR", "account=6400"}},
			func(r drilltest.Row) bool { return r.Cents >= 1000 && r.Account == "6400" }},
		{"month", drill.Selection{Segments: []string{"month=2025-03"}},
			func(r drilltest.Row) bool { return r.Cents >= 1000 && r.Posted.Month() == 3 }},
		{"quarter", drill.Selection{Segments: []string{"quarter=2025-Q3"}},
			func(r drilltest.Row) bool {
				return r.Cents >= 1000 && r.Posted.Year() == 2025 && (r.Posted.Month()-1)/3 == 2
			}},
		{"year and quarter", drill.Selection{Segments: []string{"year=2025", "quarter=2025-Q1"}, Spec: population.Spec{Signs: "both", Min: "0"}},
			func(r drilltest.Row) bool { return r.Posted.Year() == 2025 && r.Posted.Month() <= 3 }},
		{"where", drill.Selection{Spec: population.Spec{Where: "account IN ('5010', '5020') AND posted >= DATE '2025-07-01'"}},
			func(r drilltest.Row) bool {
				return r.Cents >= 1000 && (r.Account == "5010" || r.Account == "5020") && r.Posted.Month() >= 7
			}},
		{"bin, segment and where", drill.Selection{Test: "first_two", Bin: bin(47), Segments: []string{"entity=NORTH"}, Spec: population.Spec{Where: "user_id <> 'abarrow'"}},
			func(r drilltest.Row) bool {
				d, _ := drill.DigitsOf(big.NewInt(r.Cents))
				return r.Cents >= 1000 && d[benford.FirstTwo] == 47 && r.Entity == "NORTH" && r.UserID != "abarrow"
			}},
	}
	for _, c := range cases {
		got := drillLines(t, ws, c.sel)
		want := goLines(l.Rows, c.f)
		if d := diff(got, want); d != "" {
			t.Errorf("%s: %s", c.name, d)
		}
		if len(want) == 0 {
			t.Errorf("%s: the case selects nothing; it tests nothing", c.name)
		}
	}
}

// TestDrillGroupEqualsGo: grouping a first-two bin by counterparty gives
// the Go aggregation: records, total, distinct amounts and the most repeated
// amounts (top 3, seen twice or more, by count then size).
func TestDrillGroupEqualsGo(t *testing.T) {
	ws, l := setup(t)
	ctx := context.Background()
	for _, sel := range []drill.Selection{
		{Test: "first_two", Bin: bin(25)}, // holds the round 250.00 price
		{Test: "first", Bin: bin(1), Spec: population.Spec{Signs: "both", Min: "0"}},
	} {
		b, err := drill.Build(ctx, ws, sel)
		if err != nil {
			t.Fatal(err)
		}
		res, err := drill.Group(ctx, ws, b, drill.GroupOptions{Column: "counterparty", Limit: 100_000})
		if err != nil {
			t.Fatal(err)
		}
		type agg struct {
			n      int64
			total  int64
			counts map[int64]int64
		}
		want := map[string]*agg{}
		minC, signs := int64(1000), "positive"
		if sel.Min == "0" {
			minC = 0
		}
		if sel.Signs != "" {
			signs = sel.Signs
		}
		for _, r := range l.Rows {
			d, ok := drill.DigitsOf(big.NewInt(r.Cents))
			test, _ := drill.CheckBin(sel.Test, *sel.Bin)
			if !ok || !keep(r, signs, minC) || d[test] != *sel.Bin {
				continue
			}
			a := want[r.Counterparty]
			if a == nil {
				a = &agg{counts: map[int64]int64{}}
				want[r.Counterparty] = a
			}
			a.n++
			a.total += r.Cents
			a.counts[r.Cents]++
		}
		if res.GroupsTotal != int64(len(want)) || len(res.Table.Rows) != len(want) {
			t.Fatalf("%+v: %d groups (%d rows), Go has %d", sel, res.GroupsTotal, len(res.Table.Rows), len(want))
		}
		var prev int64 = 1 << 62
		for _, row := range res.Table.Rows {
			cp := row[0].(string)
			a := want[cp]
			type ac struct{ c, n int64 }
			var acs []ac
			for c, n := range a.counts {
				acs = append(acs, ac{c, n})
			}
			sort.Slice(acs, func(i, j int) bool {
				if acs[i].n != acs[j].n {
					return acs[i].n > acs[j].n
				}
				if abs(acs[i].c) != abs(acs[j].c) {
					return abs(acs[i].c) > abs(acs[j].c)
				}
				return acs[i].c > acs[j].c
			})
			var rep []string
			for i, x := range acs {
				if i < 3 && x.n > 1 {
					rep = append(rep, fmt.Sprintf("%s×%d", drilltest.CentsText(x.c), x.n))
				}
			}
			w := []any{cp, a.n, drilltest.CentsText(a.total), int64(len(a.counts)), strings.Join(rep, "; ")}
			if fmt.Sprint(row) != fmt.Sprint(w) {
				t.Errorf("%+v: group %v, Go %v", sel, row, w)
			}
			if row[1].(int64) > prev {
				t.Errorf("groups not sorted by records")
			}
			prev = row[1].(int64)
		}
		t.Logf("%s bin %d by counterparty: %d groups equal to the Go aggregation", sel.Test, *sel.Bin, len(want))
	}
}

// TestSortLimitAndColumns: --sort, --desc and --limit against Go; every
// original column and the file name are in the records.
func TestSortLimitAndColumns(t *testing.T) {
	ws, l := setup(t)
	ctx := context.Background()
	b, err := drill.Build(ctx, ws, drill.Selection{Test: "first_two", Bin: bin(18)})
	if err != nil {
		t.Fatal(err)
	}
	tab, more, err := drill.Records(ctx, ws, b, drill.RecordOptions{Sort: "amount", Desc: true, Limit: 7})
	if err != nil {
		t.Fatal(err)
	}
	if !more || len(tab.Rows) != 7 {
		t.Fatalf("%d rows, more=%v; want 7 and more", len(tab.Rows), more)
	}
	var want []int64
	for _, r := range l.Rows {
		d, _ := drill.DigitsOf(big.NewInt(r.Cents))
		if r.Cents >= 1000 && d[benford.FirstTwo] == 18 {
			want = append(want, r.Cents)
		}
	}
	sort.Slice(want, func(i, j int) bool { return want[i] > want[j] })
	ai := colIndex(t, tab.Columns, "amount")
	for i, r := range tab.Rows {
		if r[ai] != drilltest.CentsText(want[i]) {
			t.Errorf("row %d: amount %v, want %s", i, r[ai], drilltest.CentsText(want[i]))
		}
	}
	for _, c := range []string{"row_id", "file_id", "line", "amount", "counterparty", "doc_id", "posted", "po_number", "currency", "amount_text", "file_name"} {
		colIndex(t, tab.Columns, c)
	}
	fi := colIndex(t, tab.Columns, "file_name")
	if tab.Rows[0][fi] != "payables.csv" {
		t.Errorf("file_name %v, want payables.csv", tab.Rows[0][fi])
	}
}

// TestExport: CSV, JSON and Parquet exports hold exactly the drilled
// records, read back with DuckDB.
func TestExport(t *testing.T) {
	ws, l := setup(t)
	ctx := context.Background()
	b, err := drill.Build(ctx, ws, drill.Selection{Range: "1000:2000", Segments: []string{"entity=SOUTH"}})
	if err != nil {
		t.Fatal(err)
	}
	want := goLines(l.Rows, func(r drilltest.Row) bool { return r.Cents >= 100000 && r.Cents < 200000 && r.Entity == "SOUTH" })
	dir := t.TempDir()
	for _, f := range []struct{ name, reader string }{
		{"out.csv", "read_csv(%s, all_varchar = true)"},
		{"out.json", "read_json(%s)"},
		{"out.parquet", "read_parquet(%s)"},
	} {
		path := filepath.Join(dir, f.name)
		if err := drill.Export(ctx, ws, b, drill.RecordOptions{}, path); err != nil {
			t.Fatalf("%s: %v", f.name, err)
		}
		rows, err := ws.Conn.QueryContext(ctx, "SELECT CAST(line AS BIGINT), CAST(amount AS VARCHAR), file_name FROM "+fmt.Sprintf(f.reader, "'"+path+"'"))
		if err != nil {
			t.Fatal(err)
		}
		got := map[int64]bool{}
		for rows.Next() {
			var line int64
			var amount, file string
			if err := rows.Scan(&line, &amount, &file); err != nil {
				t.Fatal(err)
			}
			got[line] = true
			if !strings.Contains(amount, ".") || file != "payables.csv" {
				t.Errorf("%s: amount %q file %q", f.name, amount, file)
			}
		}
		rows.Close()
		if d := diff(got, want); d != "" {
			t.Errorf("%s: %s", f.name, d)
		}
	}
	gpath := filepath.Join(dir, "groups.csv")
	if err := drill.ExportGroups(ctx, ws, b, drill.GroupOptions{Column: "counterparty"}, gpath); err != nil {
		t.Fatal(err)
	}
	var n, recs int64
	if err := ws.Conn.QueryRowContext(ctx, "SELECT count(*), sum(records) FROM read_csv('"+gpath+"')").Scan(&n, &recs); err != nil {
		t.Fatal(err)
	}
	if recs != int64(len(want)) {
		t.Errorf("group export: %d groups hold %d records, want %d", n, recs, len(want))
	}
}

// TestBadInput: clear messages (the project's bad-input rule: a refusal names what is allowed).
func TestBadInput(t *testing.T) {
	ws, _ := setup(t)
	ctx := context.Background()
	for _, c := range []struct {
		sel  drill.Selection
		want string
	}{
		{drill.Selection{Test: "first_two", Bin: bin(5)}, "--bin 5 does not exist for the first-two digits test: its bins are 10 to 99"},
		{drill.Selection{Test: "first_two", Bin: bin(100)}, "--bin 100 does not exist"},
		{drill.Selection{Test: "first_two"}, "give --test and --bin together"},
		{drill.Selection{Segments: []string{"vendor=V0001"}}, `no column "vendor" in the ledger`},
		{drill.Selection{Segments: []string{"counterparty"}}, "write COLUMN=VALUE"},
		{drill.Selection{Range: "5000:4500"}, "FROM must be below TO"},
		{drill.Selection{Range: "-5000:-4500"}, "ranges are on absolute amounts"},
		{drill.Selection{Range: "4500"}, "write FROM:TO"},
		{drill.Selection{Range: "4,500:5,000"}, "not a plain decimal number"},
		{drill.Selection{Amount: "12.345"}, "more decimal places than the ledger's amounts (DECIMAL(18,2))"},
		{drill.Selection{Amount: "-12", Spec: population.Spec{Signs: "positive"}}, "--signs negative"},
		{drill.Selection{Spec: population.Spec{Signs: "all"}}, `signs "all": give positive, negative or both`},
		{drill.Selection{Spec: population.Spec{Min: "-5"}}, "the minimum is on absolute amounts"},
		{drill.Selection{Spec: population.Spec{Where: "amount > 0; DROP TABLE ledger"}}, "filter"},
		{drill.Selection{Spec: population.Spec{Where: "nosuch > 1"}}, "nosuch"},
	} {
		_, err := drill.Build(ctx, ws, c.sel)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want it to mention %q", c.sel, err, c.want)
		}
	}
	b, err := drill.Build(ctx, ws, drill.Selection{})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := drill.Records(ctx, ws, b, drill.RecordOptions{Sort: "nosuch"}); err == nil || !strings.Contains(err.Error(), `--sort: no column "nosuch"`) {
		t.Errorf("sort by an unknown column: %v", err)
	}
	if _, err := drill.Group(ctx, ws, b, drill.GroupOptions{Column: "nosuch"}); err == nil || !strings.Contains(err.Error(), `--group: no column "nosuch"`) {
		t.Errorf("group by an unknown column: %v", err)
	}
	if err := drill.Export(ctx, ws, b, drill.RecordOptions{}, filepath.Join(t.TempDir(), "x.xlsx")); err == nil || !strings.Contains(err.Error(), "name a .csv, .json or .parquet file") {
		t.Errorf("export to .xlsx: %v", err)
	}
	// An empty selection: the summary counts 0 and the message names the selection.
	b, err = drill.Build(ctx, ws, drill.Selection{Amount: "98765432.10"})
	if err != nil {
		t.Fatal(err)
	}
	s, err := drill.Summarize(ctx, ws, b)
	if err != nil || s.Records != 0 {
		t.Fatalf("summary %+v, %v", s, err)
	}
	if e := drill.NoRecordsError(b); !errors.Is(e, drill.ErrNoRecords) || !strings.Contains(e.Error(), "no records match: signs positive; |amount| >= 10; |amount| = 98765432.10") {
		t.Errorf("empty result message: %v", e)
	}
}

// TestFileOrder: without --sort the records come in file order (the first
// N lines of the selection), with --desc the last N; sorting by file_name
// keeps file order within the file.
func TestFileOrder(t *testing.T) {
	ws, l := setup(t)
	ctx := context.Background()
	b, err := drill.Build(ctx, ws, drill.Selection{Test: "first", Bin: bin(7)})
	if err != nil {
		t.Fatal(err)
	}
	var want []int64
	for _, r := range l.Rows {
		d, _ := drill.DigitsOf(big.NewInt(r.Cents))
		if r.Cents >= 1000 && d[benford.FirstDigit] == 7 {
			want = append(want, r.Line)
		}
	}
	sort.Slice(want, func(i, j int) bool { return want[i] < want[j] })
	for _, o := range []drill.RecordOptions{{Limit: 25}, {Limit: 25, Desc: true}, {Limit: 25, Sort: "file_name"}} {
		tab, more, err := drill.Records(ctx, ws, b, o)
		if err != nil {
			t.Fatal(err)
		}
		if !more || len(tab.Rows) != 25 {
			t.Fatalf("%+v: %d rows, more %v", o, len(tab.Rows), more)
		}
		li := colIndex(t, tab.Columns, "line")
		for i, r := range tab.Rows {
			w := want[i]
			if o.Desc {
				w = want[len(want)-1-i]
			}
			if r[li].(int64) != w {
				t.Errorf("%+v: row %d is line %d, want %d", o, i, r[li], w)
				break
			}
		}
	}
}
