package countsql

import (
	"context"
	"database/sql"
	"fmt"
	"math/big"
	"os"
	"path/filepath"
	"strings"
	"testing"

	_ "github.com/duckdb/duckdb-go/v2"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/segment"
)

// TestFirst3TreeEdges runs the emitted DuckDB query on amounts at every
// power of ten and its neighbours, up to the largest 64-bit unit count,
// and checks each bin against the first three significant digits computed
// with math/big from the amount's decimal text (an independent reference).
func TestFirst3TreeEdges(t *testing.T) {
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	ctx := context.Background()
	if _, err := db.ExecContext(ctx, "CREATE TABLE t (amt DECIMAL(38,2))"); err != nil {
		t.Fatal(err)
	}
	want := map[int64]int64{} // bin -> count
	var units []*big.Int
	for k := 0; k <= 18; k++ {
		p := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(k)), nil)
		for _, d := range []int64{-1, 0, 1, 23} {
			u := new(big.Int).Add(p, big.NewInt(d))
			if u.Sign() > 0 {
				units = append(units, u)
			}
		}
	}
	units = append(units, big.NewInt(9223372036854775807))
	for _, u := range units {
		text := u.String()
		f3, _ := new(big.Int).SetString((text + "00")[:3], 10)
		want[f3.Int64()]++
		amt := new(big.Rat).SetFrac(u, big.NewInt(100)).FloatString(2)
		if _, err := db.ExecContext(ctx, "INSERT INTO t VALUES (CAST(? AS DECIMAL(38,2)))", amt); err != nil {
			t.Fatal(err)
		}
	}
	q, err := Query(Spec{Engine: "duckdb", Table: "t", Amount: "amt", Scale: 2, Min: "0"})
	if err != nil {
		t.Fatal(err)
	}
	rows, err := db.QueryContext(ctx, stripQuery(q))
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	got := map[int64]int64{}
	for rows.Next() {
		var kind string
		var bin, n int64
		var hi, lo any
		if err := rows.Scan(&kind, &bin, &n, &hi, &lo); err != nil {
			t.Fatal(err)
		}
		if kind == "f" {
			got[bin] += n
		}
	}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("first three digits:\ngot  %v\nwant %v", got, want)
	}
}

// TestEveryRowCountedOnce: NULL amounts, filtered rows, zeros, the other
// sign and small amounts each get their code, and the codes and the tested
// rows add up to the table's rows.
func TestEveryRowCountedOnce(t *testing.T) {
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	ctx := context.Background()
	if _, err := db.ExecContext(ctx, `CREATE TABLE t AS SELECT * FROM (VALUES
		('A', 12.34), ('A', NULL), ('A', 0), ('A', -5.00), ('A', 0.29), ('B', 99.99), ('B', 10.00), ('B', 250.07), ('C', 1000.00), (NULL, NULL)) v(ent, amt)`); err != nil {
		t.Fatal(err)
	}
	count := func(lastTwoAll bool) (*battery.Counts, []battery.SegmentCounts) {
		q, err := Query(Spec{Engine: "duckdb", Table: "t", Amount: "amt", Scale: 2, Min: "1", Where: "ent <> 'C'",
			By: []Segment{{Name: "ent", Column: "ent"}}, LastTwoAll: lastTwoAll})
		if err != nil {
			t.Fatal(err)
		}
		path := filepath.Join(t.TempDir(), "c.csv")
		if _, err := db.ExecContext(ctx, "COPY ("+stripQuery(q)+") TO '"+path+"' (HEADER)"); err != nil {
			t.Fatal(err)
		}
		m, err := ReadFiles([]string{path})
		if err != nil {
			t.Fatal(err)
		}
		all, segs, err := m.Counts([]string{"ent"}, 2)
		if err != nil {
			t.Fatal(err)
		}
		return all, segs
	}
	all, segs := count(false)
	// Rows: 10. Tested 12.34, 99.99, 10.00, 250.07; zero 1; other sign 1;
	// below 1.00: 0.29; NULL amount 1 (A; the NULL-entity row is filtered,
	// as NULL <> 'C' is not true); filtered: C and the NULL entity.
	want := battery.Left{Filtered: 2, Zero: 1, OtherSign: 1, BelowMin: 1, NoAmount: 1}
	if all.Left != want || all.N() != 4 || all.N()+all.Left.Total() != 10 {
		t.Errorf("left %+v (want %+v), tested %d (want 4)", all.Left, want, all.N())
	}
	if all.FirstThree[123-100] != 1 || all.FirstThree[999-100] != 1 || all.FirstThree[100-100] != 1 || all.FirstThree[250-100] != 1 {
		t.Errorf("first three: 12.34 -> 123, 99.99 -> 999, 10.00 -> 100, 250.07 -> 250 expected")
	}
	// The last-two test takes amounts of 100.00 and more only, as the
	// local scan does (battery.LastTwoMin), unless LastTwoAll.
	var lastN int64
	for _, n := range all.LastTwo {
		lastN += n
	}
	if all.LastTwo[7] != 1 || lastN != 1 {
		t.Errorf("last two: only 250.07 -> 07 expected, got %d amounts", lastN)
	}
	if every, _ := count(true); every.LastTwo[34] != 1 || every.LastTwo[99] != 1 || every.LastTwo[0] != 1 || every.LastTwo[7] != 1 {
		t.Errorf("last two with LastTwoAll: 12.34 -> 34, 99.99 -> 99, 10.00 -> 00, 250.07 -> 07 expected")
	}
	if all.FirstThreeSum[999-100] != 99.99 {
		t.Errorf("sum of bin 999: %v, want 99.99", all.FirstThreeSum[999-100])
	}
	// Segments A and B were read (C and the blank entity only filtered).
	if len(segs) != 2 || segs[0].Key.Label() != "A" || segs[1].Key.Label() != "B" {
		t.Errorf("segments %v, want A and B", segs)
	}
}

// TestBadCountFiles: files that are not the query's result are refused
// with the file, the line and the problem.
func TestBadCountFiles(t *testing.T) {
	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	good := "kind,bin,n,sum_hi,sum_lo\nf,123,2,0,2468\nl,34,2,0,0\n"
	for _, c := range []struct {
		name, text, want string
	}{
		{"header.csv", "a,b\n", "header.csv line 1: columns a,b"},
		{"bin.csv", "kind,bin,n,sum_hi,sum_lo\nf,1000,2,0,0\n", "bin.csv line 2: kind \"f\" with bin 1000"},
		{"neg.csv", "kind,bin,n,sum_hi,sum_lo\nf,123,-2,0,0\n", "neg.csv line 2"},
		{"text.csv", "kind,bin,n,sum_hi,sum_lo\nl,12,x,0,0\n", "text.csv line 2"},
		{"short.csv", "kind,bin,n,sum_hi,sum_lo\nf,123,2,0,2468\nl,34,3,0,0\n", "cut short"},
		{"overflow.csv", "kind,bin,n,sum_hi,sum_lo\nf,-1,9223372036854775807,0,0\nf,-1,1,0,0\n", "overflow.csv line 3: the counts add up beyond a 64-bit integer"},
	} {
		_, err := ReadFiles([]string{write(c.name, c.text)})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	other := write("seg.csv", "by_entity,kind,bin,n,sum_hi,sum_lo\nA,f,123,2,0,2468\nA,l,34,2,0,0\n")
	if _, err := ReadFiles([]string{write("good.csv", good), other}); err == nil || !strings.Contains(err.Error(), "same query") {
		t.Errorf("files of different queries merged: %v", err)
	}
	m, err := ReadFiles([]string{write("good.csv", good), write("good2.csv", good)})
	if err != nil {
		t.Fatal(err)
	}
	all, _, err := m.Counts(nil, 2)
	if err != nil {
		t.Fatal(err)
	}
	if all.FirstThree[23] != 4 || all.FirstThreeSum[23] != 49.36 {
		t.Errorf("two files: bin 123 holds %d amounts summing %v, want 4 and 49.36", all.FirstThree[23], all.FirstThreeSum[23])
	}
}

// TestSpecChecks: what cannot be printed safely is refused with the flag.
func TestSpecChecks(t *testing.T) {
	base := Spec{Engine: "postgresql", Table: "gl", Amount: "amt", Scale: 2}
	for _, c := range []struct {
		edit func(*Spec)
		want string
	}{
		{func(s *Spec) { s.Engine = "oracle" }, "--engine"},
		{func(s *Spec) { s.Table = "gl; DROP TABLE x" }, "--table"},
		{func(s *Spec) { s.Amount = "a b" }, "--map amount"},
		{func(s *Spec) { s.Where = "1=1); DROP TABLE gl; --" }, "--where"},
		{func(s *Spec) { s.Where = "x = 1 -- comment" }, "--where"},
		{func(s *Spec) { s.Where = "x = ')'" + ")" }, "--where"},
		{func(s *Spec) { s.Min = "-1" }, "--min"},
		{func(s *Spec) { s.Scale = 12 }, "--scale"},
		{func(s *Spec) { s.By = []Segment{{Name: "e", Column: "e"}, {Name: "E", Column: "f"}} }, "twice"},
		{func(s *Spec) { s.By = []Segment{{Name: "p", Column: "posted", Quarter: true, Year: true}} }, "one period"},
	} {
		s := base
		c.edit(&s)
		if _, err := Query(s); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one naming %s", s, err, c.want)
		}
	}
	q, err := Query(base)
	if err != nil {
		t.Fatal(err)
	}
	s, err := ReadQuery(q)
	if err != nil || s.Engine != "postgresql" || s.Scale != 2 || s.Min != "10" {
		t.Errorf("the spec read back from the query: %+v, %v", s, err)
	}
	if _, err := ReadQuery("SELECT 1"); err == nil {
		t.Errorf("a query without the spec line was read")
	}
}

// TestRecordsQueryPeriodSegment: the drill-down query on counts made
// elsewhere selects a period segment as the counting query did (the
// quarter or year of the date, not the date as text), so that a band of
// one quarter lists that quarter's records.
func TestRecordsQueryPeriodSegment(t *testing.T) {
	for _, c := range []struct {
		seg  Segment
		want string
	}{
		{Segment{Name: "quarter", Column: "posted", Quarter: true}, `strftime(CAST("posted" AS DATE), '%Y') || '-Q' || CAST(quarter(CAST("posted" AS DATE)) AS VARCHAR) = '2025-Q3'`},
		{Segment{Name: "year", Column: "posted", Year: true}, `strftime(CAST("posted" AS DATE), '%Y') = '2025-Q3'`},
		{Segment{Name: "month", Column: "posted", Month: true}, `strftime(CAST("posted" AS DATE), '%Y-%m') = '2025-Q3'`},
	} {
		s := Spec{Engine: "duckdb", Table: "gl", Amount: "amt", Scale: 2, Signs: "positive", Min: "10", LastTwo: "scale", By: []Segment{c.seg}}
		q, err := RecordsQuery(s, 4500, 5000, []string{c.seg.Name}, segment.Key{{String: "2025-Q3", Valid: true}})
		if err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(q, c.want) {
			t.Errorf("%s segment: %s\nlacks %s", c.seg.Name, q, c.want)
		}
	}
}

// TestDrillsCapSegments: drill-down queries are written for the whole
// selection and for at most DrillSegments flagged segments per test, the
// most distorted first in the ranking's order.
func TestDrillsCapSegments(t *testing.T) {
	spec := Spec{Engine: "duckdb", Table: "gl", Amount: "amount", Scale: 2, By: []Segment{{Name: "user_id", Column: "user_id"}}}.WithDefaults()
	flagged := func() benford.Result {
		r, err := benford.Analyze(benford.FirstDigit, []int64{4000, 1500, 1200, 850, 750, 650, 520, 480, 440})
		if err != nil {
			t.Fatal(err)
		}
		if len(r.TopFlagged) == 0 {
			t.Fatal("setup: no flagged bin")
		}
		return r
	}
	whole := flagged()
	rep := &battery.Report{Tests: []benford.Result{whole}, Segments: &battery.Segments{}}
	rk := battery.Ranking{Test: benford.FirstDigit}
	for i := range 15 {
		key := segment.Key{{String: fmt.Sprintf("u%02d", i), Valid: true}}
		rep.SegmentResults = append(rep.SegmentResults, battery.SegmentResult{Key: key, Results: []benford.Result{flagged()}})
		// ranked in reverse key order: u14 is the most distorted
		rk.Rows = append([]battery.SegmentRow{{Segment: key.Label(), Flagged: 1}}, rk.Rows...)
	}
	rep.Segments.Rankings = []battery.Ranking{rk}
	drills, err := Drills(spec, rep, []string{"user_id"})
	if err != nil {
		t.Fatal(err)
	}
	per := len(whole.TopFlagged)
	segs := map[string]bool{}
	var order []string
	for _, d := range drills {
		if d.Segment != "" && !segs[d.Segment] {
			segs[d.Segment] = true
			order = append(order, d.Segment)
		}
	}
	if len(drills) != per*(1+DrillSegments) || len(segs) != DrillSegments || order[0] != "u14" || order[DrillSegments-1] != "u05" {
		t.Errorf("%d drills for %d segments, in the order %v; want %d for %d segments, u14 first and u05 last", len(drills), len(segs), order, per*(1+DrillSegments), DrillSegments)
	}
}
