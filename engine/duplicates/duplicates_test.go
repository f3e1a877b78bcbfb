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

// expected computes every group of a test over the population in Go, with
// the default options (all: every row of the ledger, for the documents'
// balances).
func expected(test string, pop, all []drilltest.Row, windowDays int) (map[string]expectation, map[string][2]int64) {
	return expectedWith(test, pop, all, windowDays, duplicates.DefaultMinCounterparties, duplicates.DefaultMinRecords, defaultFloorCents)
}

// defaultFloorCents is duplicates.DefaultFloor in cents.
const defaultFloorCents = 10000

func absC(c int64) int64 {
	if c < 0 {
		return -c
	}
	return c
}

// expectedWith computes the groups a test keeps, and per reason the groups
// and records it leaves out: groups whose amounts are all below floor
// (cents), and same_doc groups whose lines all belong to documents
// (entity, doc_id) that net to zero over all.
func expectedWith(test string, pop, all []drilltest.Row, windowDays, minCPs, minRecords int, floor int64) (map[string]expectation, map[string][2]int64) {
	out := map[string]expectation{}
	left := map[string][2]int64{}
	leave := func(reason string, records int64) {
		l := left[reason]
		left[reason] = [2]int64{l[0] + 1, l[1] + records}
	}
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
			switch {
			case c < 2:
			case absC(cents[k]) < floor:
				leave(duplicates.LeftBelowFloor, c)
			default:
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
				if len(docs) >= 2 && absC(c[0].Cents) < floor {
					leave(duplicates.LeftBelowFloor, int64(len(c)))
				} else if len(docs) >= 2 {
					kk := k + "|" + day(c[0].Posted)
					out[kk] = expectation{key: kk, records: int64(len(c)), extra: fmt.Sprintf("docs=%d last=%s", len(docs), day(c[len(c)-1].Posted))}
				}
			}
		}
	case duplicates.SameDoc:
		type agg struct {
			n                 int64
			amounts           map[int64]bool
			min, max, largest int64
			balanced          bool
		}
		net := map[string]int64{}
		for _, r := range all {
			if r.DocID != "" {
				net[r.Entity+"|"+r.DocID] += r.Cents
			}
		}
		by := map[string]*agg{}
		for _, r := range pop {
			k := r.DocID + "|" + r.Counterparty
			a := by[k]
			if a == nil {
				a = &agg{amounts: map[int64]bool{}, min: math.MaxInt64, max: math.MinInt64, balanced: true}
				by[k] = a
			}
			a.n++
			a.amounts[r.Cents] = true
			a.min, a.max = min(a.min, r.Cents), max(a.max, r.Cents)
			a.largest = max(a.largest, absC(r.Cents))
			a.balanced = a.balanced && net[r.Entity+"|"+r.DocID] == 0
		}
		for k, a := range by {
			switch {
			case len(a.amounts) < 2:
			case a.balanced:
				leave(duplicates.LeftBalanced, a.n)
			case a.largest < floor:
				leave(duplicates.LeftBelowFloor, a.n)
			default:
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
			switch {
			case len(s) < minCPs:
			case absC(c) < floor:
				leave(duplicates.LeftBelowFloor, n[c])
			default:
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
			if as[0] < floor {
				leave(duplicates.LeftBelowFloor, int64(len(as)))
				continue
			}
			rsf := (float64(as[0]) / 100) / (float64(as[1]) / 100)
			out[cp] = expectation{key: cp, records: int64(len(as)), extra: fmt.Sprintf("largest=%s second=%s rsf=%.6f", ct(as[0]), ct(as[1]), rsf)}
		}
	}
	return out, left
}

// leftOf turns a test's LeftOut into the shape expectedWith returns.
func leftOf(tr duplicates.TestResult) map[string][2]int64 {
	m := map[string][2]int64{}
	for _, l := range tr.LeftOut {
		m[l.Reason] = [2]int64{l.Groups, l.Records}
	}
	return m
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
			want, wantLeft := expected(tr.Test, pop, l.Rows, window)
			if got := leftOf(tr); fmt.Sprint(got) != fmt.Sprint(wantLeft) {
				t.Errorf("window %d, %s: left out %v, Go: %v", window, tr.Test, got, wantLeft)
			}
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
				amountKeyed := tr.Test == duplicates.Exact || tr.Test == duplicates.SameAmount || tr.Test == duplicates.Spread
				if amountKeyed && absC(p.Cents) < defaultFloorCents {
					// below the default floor by design: left out, counted
					// (left_out is checked against Go above), listed with
					// --floor 0 (TestOtherPopulation)
					if plantFound(tr.Test, p, tr.Groups) {
						t.Errorf("window %d, %s: planted group %s below the floor is listed", window, tr.Test, plantKey(p))
					}
					continue
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
	o := duplicates.Options{Spec: popn.Spec{Signs: "both", Min: "0", Where: "entity <> 'WEST'"}, WindowDays: 3, MinCounterparties: 4, MinRecords: 5, Top: -1, Floor: "0"}
	res := runAll(t, ws, o)
	for _, tr := range res.Tests {
		want, wantLeft := expectedWith(tr.Test, pop, l.Rows, 3, 4, 5, 0)
		if got := leftOf(tr); fmt.Sprint(got) != fmt.Sprint(wantLeft) {
			t.Errorf("%s: left out %v, Go: %v", tr.Test, got, wantLeft)
		}
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
			case duplicates.Exact, duplicates.SameAmount, duplicates.SameDoc, duplicates.Spread:
				ok = ratOf(p.Excess) >= ratOf(g.Excess)
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

// TestGeneralLedger: on a small general ledger in double entry, same_doc
// leaves out the lines of documents that net to zero (before, every
// multi-line document was a group) and keeps a document that does not;
// groups below the floor are left out and counted; spread ranks by money
// at stake (before, by counterparties: an amount of 12.00 to five
// counterparties ranked above 4,800.00 to four); the text output says what
// was left out.
func TestGeneralLedger(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "gl.csv")
	rows := "doc_id,counterparty,posted,amount,entity,account\n" +
		// balanced supplier invoices: two expense lines and the payable
		"D1,Acme,2025-03-01,400.00,E1,5010\nD1,Acme,2025-03-01,250.00,E1,5020\nD1,Acme,2025-03-01,-650.00,E1,2000\n" +
		"D2,Bolt,2025-03-02,900.00,E1,5010\nD2,Bolt,2025-03-02,300.00,E1,5020\nD2,Bolt,2025-03-02,-1200.00,E1,2000\n" +
		// an invoice whose expense line was entered twice: no longer balanced
		"D3,Crane,2025-03-03,700.00,E1,5010\nD3,Crane,2025-03-03,700.00,E1,5010\nD3,Crane,2025-03-03,150.00,E1,5020\nD3,Crane,2025-03-03,-850.00,E1,2000\n" +
		// the same doc_id in another entity, balanced there
		"D3,Crane,2025-03-04,20.00,E2,5010\nD3,Crane,2025-03-04,-20.00,E2,2000\n"
	for i, cp := range []string{"P1", "P2", "P3", "P4", "P5"} {
		rows += fmt.Sprintf("S%d,%s,2025-04-0%d,12.00,E1,6000\nS%d,%s,2025-04-0%d,-12.00,E1,1020\n", i, cp, i+1, i, cp, i+1)
	}
	for i, cp := range []string{"Q1", "Q2", "Q3", "Q4"} {
		rows += fmt.Sprintf("T%d,%s,2025-05-0%d,4800.00,E1,6100\nT%d,%s,2025-05-0%d,-4800.00,E1,1020\n", i, cp, i+1, i, cp, i+1)
	}
	if err := os.WriteFile(path, []byte(rows), 0o644); err != nil {
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
	res := runAll(t, ws, duplicates.Options{Tests: []string{duplicates.SameDoc, duplicates.Spread}})
	doc, spread := res.Tests[0], res.Tests[1]
	// D3's group (the key is document and counterparty) holds E1's three
	// positive lines and E2's one: 1,570.00, 870.00 beyond the largest line.
	if len(doc.Groups) != 1 || doc.Groups[0].DocID != "D3" || doc.Groups[0].Records != 4 || doc.Groups[0].Excess != "870.00" {
		t.Errorf("same_doc: groups %+v, want only D3 (4 positive lines, 870.00 beyond the largest)", doc.Groups)
	}
	if got := leftOf(doc); got[duplicates.LeftBalanced] != [2]int64{2, 4} {
		t.Errorf("same_doc left out %v, want the balanced documents D1 and D2: 2 groups of 4 records", got)
	}
	if len(spread.Groups) != 1 || spread.Groups[0].Amount != "4800.00" || spread.Groups[0].Excess != "14400.00" {
		t.Errorf("spread: groups %+v, want only 4,800.00 (the 12.00 below the floor)", spread.Groups)
	}
	if got := leftOf(spread); got[duplicates.LeftBelowFloor] != [2]int64{1, 5} {
		t.Errorf("spread left out %v, want 12.00: 1 group of 5 records below the floor", got)
	}
	all := runAll(t, ws, duplicates.Options{Tests: []string{duplicates.Spread}, Floor: "0"})
	if g := all.Tests[0].Groups; len(g) != 2 || g[0].Amount != "4800.00" || g[1].Amount != "12.00" || len(all.Tests[0].LeftOut) != 0 {
		t.Errorf("spread with floor 0: %+v, want 4,800.00 (4 counterparties, 14,400.00 at stake) before 12.00 (5 counterparties, 48.00)", g)
	}
	if _, err := duplicates.Run(ctx, ws, duplicates.Options{Floor: "1e3"}); err == nil || !strings.Contains(err.Error(), "--floor") {
		t.Errorf("floor 1e3: error %v, want one naming --floor", err)
	}
}
