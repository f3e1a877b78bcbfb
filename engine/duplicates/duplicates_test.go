package duplicates_test

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/drill/drilltest"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/load"
	popn "github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// The checks here: a generated payables ledger with
// planted groups of every kind (the plan is drilltest.Ledger.Plants); every
// planted group must be found, and every other group reported must be a
// real coincidence of the generated rows, computed independently below in
// Go from the rows the test wrote.

const (
	nRows = 30_000
	seed  = 20250101
)

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

// setup loads the generated ledger into a workspace shared by the tests of
// this package (they run one after another).
func setup(t *testing.T) (*workspace.Workspace, *drilltest.Ledger) {
	t.Helper()
	once.Do(func() {
		ledger = drilltest.Generate(nRows, seed)
		dir, err := os.MkdirTemp("", "leadline-dups-test-")
		tempDir = dir
		if err != nil {
			setErr = err
			return
		}
		path := filepath.Join(dir, "payables.csv")
		if setErr = ledger.WriteCSV(path); setErr != nil {
			return
		}
		ctx := context.Background()
		shared, setErr = workspace.Open(ctx, ":memory:", workspace.Options{})
		if setErr != nil {
			return
		}
		rep, err := load.Load(ctx, shared, []string{path}, load.Options{})
		if err != nil {
			setErr = err
			return
		}
		if rep.RowsLoaded != int64(len(ledger.Rows)) {
			setErr = fmt.Errorf("loaded %d rows, wrote %d", rep.RowsLoaded, len(ledger.Rows))
		}
	})
	if setErr != nil {
		t.Fatal(setErr)
	}
	return shared, ledger
}

// population is the default population of the scan: positive amounts of at
// least 10.00.
func population(rows []drilltest.Row) []drilltest.Row {
	var out []drilltest.Row
	for _, r := range rows {
		if r.Cents > 0 && r.Cents >= 1000 {
			out = append(out, r)
		}
	}
	return out
}

func day(t time.Time) string { return t.Format("2006-01-02") }

// expectation is one group computed in Go, keyed like the engine's group.
type expectation struct {
	key     string
	records int64
	extra   string // per-test figures compared as text
}

func keyOf(test string, g duplicates.Group) (string, string) {
	switch test {
	case duplicates.Exact:
		return strings.Join([]string{g.Amount, g.Counterparty, g.Posted, g.DocID}, "|"), g.Excess
	case duplicates.SameAmount:
		return strings.Join([]string{g.Amount, g.Counterparty, g.FirstPosted}, "|"), fmt.Sprintf("docs=%d last=%s", g.Documents, g.LastPosted)
	case duplicates.SameDoc:
		return g.DocID + "|" + g.Counterparty, fmt.Sprintf("amounts=%d min=%s max=%s", g.Amounts, g.MinAmount, g.MaxAmount)
	case duplicates.Spread:
		return g.Amount, fmt.Sprintf("cps=%d", g.Counterparties)
	case duplicates.RSF:
		return g.Counterparty, fmt.Sprintf("largest=%s second=%s rsf=%.6f", g.Largest, g.Second, g.RSF)
	}
	return "", ""
}

// expected computes every group of a test over the population in Go.
func expected(test string, pop []drilltest.Row, windowDays int) map[string]expectation {
	return expectedWith(test, pop, windowDays, duplicates.DefaultMinCounterparties, duplicates.DefaultMinRecords)
}

func absC(c int64) int64 {
	if c < 0 {
		return -c
	}
	return c
}

func expectedWith(test string, pop []drilltest.Row, windowDays, minCPs, minRecords int) map[string]expectation {
	out := map[string]expectation{}
	ct := drilltest.CentsText
	switch test {
	case duplicates.Exact:
		n := map[string]int64{}
		cents := map[string]int64{}
		for _, r := range pop {
			k := strings.Join([]string{ct(r.Cents), r.Counterparty, day(r.Posted), r.DocID}, "|")
			n[k]++
			cents[k] = r.Cents
		}
		for k, c := range n {
			if c >= 2 {
				out[k] = expectation{key: k, records: c, extra: ct(absC(cents[k]) * (c - 1))}
			}
		}
	case duplicates.SameAmount:
		by := map[string][]drilltest.Row{}
		for _, r := range pop {
			k := ct(r.Cents) + "|" + r.Counterparty
			by[k] = append(by[k], r)
		}
		for k, rs := range by {
			sort.Slice(rs, func(i, j int) bool { return rs[i].Posted.Before(rs[j].Posted) })
			// clusters: a new one starts where the gap exceeds the window
			var clusters [][]drilltest.Row
			for i, r := range rs {
				if i == 0 || (windowDays > 0 && r.Posted.Sub(rs[i-1].Posted) > time.Duration(windowDays)*24*time.Hour) {
					clusters = append(clusters, nil)
				}
				clusters[len(clusters)-1] = append(clusters[len(clusters)-1], r)
			}
			for _, c := range clusters {
				docs := map[string]bool{}
				for _, r := range c {
					docs[r.DocID] = true
				}
				if len(docs) >= 2 {
					kk := k + "|" + day(c[0].Posted)
					out[kk] = expectation{key: kk, records: int64(len(c)), extra: fmt.Sprintf("docs=%d last=%s", len(docs), day(c[len(c)-1].Posted))}
				}
			}
		}
	case duplicates.SameDoc:
		type agg struct {
			n        int64
			amounts  map[int64]bool
			min, max int64
		}
		by := map[string]*agg{}
		for _, r := range pop {
			k := r.DocID + "|" + r.Counterparty
			a := by[k]
			if a == nil {
				a = &agg{amounts: map[int64]bool{}, min: math.MaxInt64, max: math.MinInt64}
				by[k] = a
			}
			a.n++
			a.amounts[r.Cents] = true
			a.min, a.max = min(a.min, r.Cents), max(a.max, r.Cents)
		}
		for k, a := range by {
			if len(a.amounts) >= 2 {
				out[k] = expectation{key: k, records: a.n, extra: fmt.Sprintf("amounts=%d min=%s max=%s", len(a.amounts), ct(a.min), ct(a.max))}
			}
		}
	case duplicates.Spread:
		cps := map[int64]map[string]bool{}
		n := map[int64]int64{}
		for _, r := range pop {
			if cps[r.Cents] == nil {
				cps[r.Cents] = map[string]bool{}
			}
			cps[r.Cents][r.Counterparty] = true
			n[r.Cents]++
		}
		for c, s := range cps {
			if len(s) >= minCPs {
				out[ct(c)] = expectation{key: ct(c), records: n[c], extra: fmt.Sprintf("cps=%d", len(s))}
			}
		}
	case duplicates.RSF:
		by := map[string][]int64{}
		for _, r := range pop {
			by[r.Counterparty] = append(by[r.Counterparty], absC(r.Cents))
		}
		for cp, as := range by {
			if len(as) < minRecords {
				continue
			}
			sort.Slice(as, func(i, j int) bool { return as[i] > as[j] })
			if as[1] == 0 {
				continue
			}
			rsf := (float64(as[0]) / 100) / (float64(as[1]) / 100)
			out[cp] = expectation{key: cp, records: int64(len(as)), extra: fmt.Sprintf("largest=%s second=%s rsf=%.6f", ct(as[0]), ct(as[1]), rsf)}
		}
	}
	return out
}

// plantFound reports whether a reported group holds the planted one.
func plantFound(test string, p drilltest.Plant, groups []duplicates.Group) bool {
	for _, g := range groups {
		k, _ := keyOf(test, g)
		switch test {
		case duplicates.SameAmount:
			if g.Amount == drilltest.CentsText(p.Cents) && g.Counterparty == p.Counterparty &&
				g.FirstPosted <= day(p.Posted) && g.LastPosted >= day(p.Posted.AddDate(0, 0, p.GapDays)) {
				return true
			}
		default:
			if k == plantKey(p) && g.Records >= int64(p.Rows) {
				return true
			}
		}
	}
	return false
}

// plantKey is the key a planted group must be found under.
func plantKey(p drilltest.Plant) string {
	ct := drilltest.CentsText
	switch p.Test {
	case duplicates.Exact:
		return strings.Join([]string{ct(p.Cents), p.Counterparty, day(p.Posted), p.DocID}, "|")
	case duplicates.SameAmount:
		return ct(p.Cents) + "|" + p.Counterparty
	case duplicates.SameDoc:
		return p.DocID + "|" + p.Counterparty
	case duplicates.Spread:
		return ct(p.Cents)
	case duplicates.RSF:
		return p.Counterparty
	}
	return ""
}

func runAll(t *testing.T, ws *workspace.Workspace, o duplicates.Options) *duplicates.Result {
	t.Helper()
	res, err := duplicates.Run(context.Background(), ws, o)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// TestPlantedAndCoincidences: every planted group found; every reported
// group planted or a real coincidence of the generated rows (the
// coincidences are computed independently in Go).
func TestPlantedAndCoincidences(t *testing.T) {
	ws, l := setup(t)
	pop := population(l.Rows)
	for _, window := range []int{0, 7} {
		res := runAll(t, ws, duplicates.Options{Top: -1, WindowDays: window})
		if res.RecordsTested != int64(len(pop)) {
			t.Errorf("window %d: %d records tested, the population holds %d", window, res.RecordsTested, len(pop))
		}
		for _, tr := range res.Tests {
			if tr.Status != "ok" {
				t.Fatalf("window %d: test %s %s: %s", window, tr.Test, tr.Status, tr.Reason)
			}
			want := expected(tr.Test, pop, window)
			got := map[string]duplicates.Group{}
			var records int64
			for _, g := range tr.Groups {
				k, extra := keyOf(tr.Test, g)
				if _, dup := got[k]; dup {
					t.Errorf("window %d, %s: group %s reported twice", window, tr.Test, k)
				}
				got[k] = g
				records += g.Records
				e, ok := want[k]
				switch {
				case !ok:
					t.Errorf("window %d, %s: group %s (%d records) is neither planted nor a coincidence of the rows", window, tr.Test, k, g.Records)
				case e.records != g.Records || e.extra != extra:
					t.Errorf("window %d, %s: group %s: got %d records %s, want %d records %s", window, tr.Test, k, g.Records, extra, e.records, e.extra)
				}
			}
			for k := range want {
				if _, ok := got[k]; !ok {
					t.Errorf("window %d, %s: group %s of the rows not reported", window, tr.Test, k)
				}
			}
			if tr.GroupsTotal != int64(len(tr.Groups)) || tr.RecordsTotal != records {
				t.Errorf("window %d, %s: totals %d groups %d records, listed %d groups %d records", window, tr.Test, tr.GroupsTotal, tr.RecordsTotal, len(tr.Groups), records)
			}
			// planted groups
			planted, found := 0, 0
			for _, p := range l.Plants {
				if p.Test != tr.Test {
					continue
				}
				planted++
				if tr.Test == duplicates.SameAmount && window > 0 && p.GapDays > window {
					continue // outside the window by design: TestPlantedInWindow checks these
				}
				if plantFound(tr.Test, p, tr.Groups) {
					found++
				} else {
					t.Errorf("window %d, %s: planted group %s not found", window, tr.Test, plantKey(p))
				}
			}
			t.Logf("window %d, %-11s: %4d groups (%5d records), %d planted, %d of them found; %d coincidences of the generated rows",
				window, tr.Test, len(tr.Groups), records, planted, found, len(tr.Groups)-found)
		}
	}
}

// TestOtherPopulation: with both signs, no minimum, a filter and other
// options, every test still equals the Go computation over the same rows.
func TestOtherPopulation(t *testing.T) {
	ws, l := setup(t)
	var pop []drilltest.Row
	for _, r := range l.Rows {
		if r.Entity != "WEST" && r.Cents != 0 {
			pop = append(pop, r)
		}
	}
	o := duplicates.Options{Spec: popn.Spec{Signs: "both", Min: "0", Where: "entity <> 'WEST'"}, WindowDays: 3, MinCounterparties: 4, MinRecords: 5, Top: -1}
	res := runAll(t, ws, o)
	for _, tr := range res.Tests {
		want := expectedWith(tr.Test, pop, 3, 4, 5)
		n := 0
		for _, g := range tr.Groups {
			k, extra := keyOf(tr.Test, g)
			if e, ok := want[k]; !ok || e.records != g.Records || e.extra != extra {
				t.Errorf("%s: group %s %d records %s; Go: %+v (found %v)", tr.Test, k, g.Records, extra, e, ok)
			}
			n++
		}
		if n != len(want) {
			t.Errorf("%s: %d groups, Go finds %d", tr.Test, n, len(want))
		}
		t.Logf("signs both, min 0, entity <> 'WEST', window 3: %-11s %d groups equal to Go", tr.Test, n)
	}
}

// TestPlantedInWindow: the six pairs planted 1 to 5 days apart are groups
// within a 7-day window; the two planted 40 to 59 days apart are not
// (source: the plan in drilltest).
func TestPlantedInWindow(t *testing.T) {
	ws, l := setup(t)
	res := runAll(t, ws, duplicates.Options{Top: -1, WindowDays: 7, Tests: []string{duplicates.SameAmount}})
	groups := res.Tests[0].Groups
	for _, p := range l.Plants {
		if p.Test != duplicates.SameAmount {
			continue
		}
		in := false
		for _, g := range groups {
			if g.Amount == drilltest.CentsText(p.Cents) && g.Counterparty == p.Counterparty &&
				g.FirstPosted <= day(p.Posted) && g.LastPosted >= day(p.Posted.AddDate(0, 0, p.GapDays)) {
				in = true
			}
		}
		if want := p.GapDays <= 7; in != want {
			t.Errorf("pair %s %s %d days apart: in a group within 7 days = %v, want %v", drilltest.CentsText(p.Cents), p.Counterparty, p.GapDays, in, want)
		}
	}
}

// TestRanking: the groups are in the documented order, the top N are the
// first N of all groups, and the planted size factor ranks first (25,000.00
// against 110.00; source: the plan in drilltest).
func TestRanking(t *testing.T) {
	ws, _ := setup(t)
	all := runAll(t, ws, duplicates.Options{Top: -1})
	top := runAll(t, ws, duplicates.Options{})
	for i, tr := range all.Tests {
		tt := top.Tests[i]
		if len(tt.Groups) != min(duplicates.DefaultTop, len(tr.Groups)) || tt.GroupsTotal != tr.GroupsTotal || tt.RecordsTotal != tr.RecordsTotal {
			t.Errorf("%s: top run kept %d of %d groups, all-run has %d", tr.Test, len(tt.Groups), tt.GroupsTotal, len(tr.Groups))
		}
		for j := range tt.Groups {
			a, _ := keyOf(tr.Test, tr.Groups[j])
			b, _ := keyOf(tr.Test, tt.Groups[j])
			if a != b || tt.Groups[j].ID != j+1 {
				t.Errorf("%s: group %d differs between the top and the full run: %s vs %s", tr.Test, j+1, b, a)
			}
		}
		for j := 1; j < len(tr.Groups); j++ {
			p, g := tr.Groups[j-1], tr.Groups[j]
			var ok bool
			switch tr.Test {
			case duplicates.Exact, duplicates.SameAmount:
				ok = ratOf(p.Excess) >= ratOf(g.Excess)
			case duplicates.SameDoc:
				ok = true // sum of absolute amounts: not in the group, checked by drill below
			case duplicates.Spread:
				ok = p.Counterparties > g.Counterparties || p.Counterparties == g.Counterparties && p.Records >= g.Records
			case duplicates.RSF:
				ok = p.RSF >= g.RSF
			}
			if !ok {
				t.Errorf("%s: groups %d and %d out of order", tr.Test, j, j+1)
			}
		}
	}
	for _, tr := range all.Tests {
		if tr.Test == duplicates.RSF {
			g := tr.Groups[0]
			if g.Counterparty != "V0999" || g.Largest != "25000.00" || g.Second != "110.00" || math.Abs(g.RSF-25000.0/110.0) > 1e-9 {
				t.Errorf("rsf: first group %+v, want V0999 25000.00 / 110.00", g)
			}
		}
	}
}

func ratOf(s string) float64 {
	var f float64
	fmt.Sscan(s, &f)
	return f
}

// TestDrillGroups: each stored group drills back to exactly its records
// (checked against an independent filter of the
// same rows in Go).
func TestDrillGroups(t *testing.T) {
	ws, l := setup(t)
	ctx := context.Background()
	pop := population(l.Rows)
	for _, window := range []int{0, 7} {
		res := runAll(t, ws, duplicates.Options{WindowDays: window, Top: 5})
		if err := duplicates.Save(ctx, ws, res); err != nil {
			t.Fatal(err)
		}
		for _, tr := range res.Tests {
			for _, g := range tr.Groups {
				ref, err := duplicates.ParseRef(g.Ref)
				if err != nil {
					t.Fatal(err)
				}
				sel, _, err := drill.DuplicateGroup(ctx, ws, ref)
				if err != nil {
					t.Fatal(err)
				}
				b, err := drill.Build(ctx, ws, sel)
				if err != nil {
					t.Fatal(err)
				}
				recs, more, err := drill.Records(ctx, ws, b, drill.RecordOptions{Limit: 100_000})
				if err != nil {
					t.Fatal(err)
				}
				if more {
					t.Fatalf("%s: more than 100,000 records", g.Ref)
				}
				got := lines(t, recs.Columns, recs.Rows)
				want := map[int64]bool{}
				for _, r := range pop {
					if inGroup(tr.Test, g, r) {
						want[r.Line] = true
					}
				}
				if !sameSet(got, want) || int64(len(got)) != g.Records {
					t.Errorf("%s: drill gave %d records, the group has %d, Go finds %d", g.Ref, len(got), g.Records, len(want))
				}
			}
		}
	}
}

func inGroup(test string, g duplicates.Group, r drilltest.Row) bool {
	a := drilltest.CentsText(r.Cents)
	switch test {
	case duplicates.Exact:
		return a == g.Amount && r.Counterparty == g.Counterparty && day(r.Posted) == g.Posted && r.DocID == g.DocID
	case duplicates.SameAmount:
		return a == g.Amount && r.Counterparty == g.Counterparty && day(r.Posted) >= g.FirstPosted && day(r.Posted) <= g.LastPosted
	case duplicates.SameDoc:
		return r.DocID == g.DocID && r.Counterparty == g.Counterparty
	case duplicates.Spread:
		return a == g.Amount
	case duplicates.RSF:
		return r.Counterparty == g.Counterparty
	}
	return false
}

func lines(t *testing.T, cols []string, rows [][]any) map[int64]bool {
	t.Helper()
	li := -1
	for i, c := range cols {
		if c == "line" {
			li = i
		}
	}
	if li < 0 {
		t.Fatal("no line column in the drill result")
	}
	out := map[int64]bool{}
	for _, r := range rows {
		out[r[li].(int64)] = true
	}
	return out
}

func sameSet(a, b map[int64]bool) bool {
	if len(a) != len(b) {
		return false
	}
	for k := range a {
		if !b[k] {
			return false
		}
	}
	return true
}

// TestMissingColumns: a ledger without doc_id skips the tests that need it
// and runs the others (each skipped test says "skipped: needs doc_id").
func TestMissingColumns(t *testing.T) {
	l := drilltest.Generate(3000, 7)
	path := filepath.Join(t.TempDir(), "nodoc.csv")
	if err := l.WriteCSV(path, "doc_id"); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	if _, err := load.Load(ctx, ws, []string{path}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	res := runAll(t, ws, duplicates.Options{})
	status := map[string]string{}
	for _, tr := range res.Tests {
		status[tr.Test] = tr.Status
		if tr.Status == "skipped" && !strings.HasPrefix(tr.Reason, "needs doc_id") {
			t.Errorf("%s: reason %q, want it to start with needs doc_id", tr.Test, tr.Reason)
		}
	}
	want := map[string]string{"exact": "skipped", "same_amount": "skipped", "same_doc": "skipped", "spread": "ok", "rsf": "ok"}
	for k, v := range want {
		if status[k] != v {
			t.Errorf("%s: status %s, want %s", k, status[k], v)
		}
	}
}

// TestBadInput: clear messages for options and references (the project's
// bad-input rule).
func TestBadInput(t *testing.T) {
	ws, _ := setup(t)
	ctx := context.Background()
	for _, c := range []struct {
		o    duplicates.Options
		want string
	}{
		{duplicates.Options{Tests: []string{"triplicates"}}, `unknown test "triplicates"`},
		{duplicates.Options{WindowDays: -3}, "--window-days -3"},
		{duplicates.Options{Spec: popn.Spec{Signs: "up"}}, `signs "up"`},
		{duplicates.Options{Spec: popn.Spec{Min: "ten"}}, "not a plain decimal number"},
		{duplicates.Options{Spec: popn.Spec{Where: "no_such_column = 1"}}, "no_such_column"},
		{duplicates.Options{MinRecords: 1}, "--min-records 1"},
	} {
		_, err := duplicates.Run(ctx, ws, c.o)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want it to mention %q", c.o, err, c.want)
		}
	}
	for _, c := range []struct{ ref, want string }{
		{"7", "write RUN:TEST:GROUP"},
		{"x:exact:1", "write RUN:TEST:GROUP"},
		{"1:quadruple:1", `unknown test "quadruple"`},
		{"1:exact:0", "write RUN:TEST:GROUP"},
	} {
		if _, err := duplicates.ParseRef(c.ref); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("ParseRef(%q): %v, want %q", c.ref, err, c.want)
		}
	}
	res := runAll(t, ws, duplicates.Options{Top: 2, Tests: []string{duplicates.Spread}})
	if err := duplicates.Save(ctx, ws, res); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		ref  duplicates.Ref
		want string
	}{
		{duplicates.Ref{Run: res.RunID, Test: duplicates.Spread, Group: 3}, "kept 2 groups"},
		{duplicates.Ref{Run: res.RunID, Test: duplicates.Exact, Group: 1}, "did not run the exact test"},
		{duplicates.Ref{Run: 9999, Test: duplicates.Exact, Group: 1}, "no run 9999"},
	} {
		if _, _, err := duplicates.GroupSelection(ctx, ws, c.ref); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("GroupSelection(%+v): %v, want %q", c.ref, err, c.want)
		}
	}
}
