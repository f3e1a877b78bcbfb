package countsql

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill/drilltest"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/workspace"
)

// row is one record of the test ledger: entity ("" and "  " are blank),
// posted date (YYYY-MM-DD) and the exact amount in cents.
type row struct {
	entity, posted string
	cents          int64
}

// testLedger is a generated payables ledger plus the amounts whose digits
// a float would get wrong or that reach the edges of the digit rule:
// 0.29, 10.00, 99.99, 1000.00, zeros, credit notes, blank entities and
// amounts up to the largest a DECIMAL(18,2) holds.
func testLedger() []row {
	var out []row
	for _, r := range drilltest.Generate(6000, 20).Rows {
		out = append(out, row{r.Entity, r.Posted.Format("2006-01-02"), r.Cents})
	}
	extra := []int64{29, 1000, 9999, 10000, -10000, 100000, 0, 0, 0, -29, -100000, -999, 1, 99, 101, 999, 1001,
		999999999999999999, 100000000000000000, 123456789012345, 98765432109876543, -999999999999999999,
		10000000000, 9999999999, 1000000000, 999999999}
	for i, c := range extra {
		ent := []string{"NORTH", "", "WEST", "SOUTH"}[i%4]
		out = append(out, row{ent, "2025-0" + string(rune('1'+i%9)) + "-15", c})
	}
	// Both sides of the year ends, for the year and quarter segments.
	for i, d := range []string{"2024-12-31", "2024-12-31", "2025-01-01", "2025-12-31", "2026-01-01", "2026-01-01"} {
		out = append(out, row{[]string{"NORTH", "WEST"}[i%2], d, int64(12345 + 1000*i)})
	}
	return out
}

// writeLedgerCSV writes the ledger as CSV (entity, posted, amount); blank
// entities are written as they are.
func writeLedgerCSV(t *testing.T, path string, rows []row, header bool) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := csv.NewWriter(f)
	if header {
		w.Write([]string{"entity", "posted", "amount"})
	}
	for _, r := range rows {
		w.Write([]string{r.entity, r.posted, drilltest.CentsText(r.cents)})
	}
	w.Flush()
	if err := w.Error(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// localWorkspace loads the ledger into a throwaway workspace through the
// real loader.
func localWorkspace(t *testing.T, rows []row) *workspace.Workspace {
	t.Helper()
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	path := filepath.Join(t.TempDir(), "ledger.csv")
	writeLedgerCSV(t, path, rows, true)
	rep, err := load.Load(ctx, ws, []string{path}, load.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsLoaded != int64(len(rows)) {
		t.Fatalf("loaded %d of %d rows", rep.RowsLoaded, len(rows))
	}
	return ws
}

// variant is one population counted both ways.
type variant struct {
	name  string
	spec  Spec     // the counting query's options (Engine and Table set by the test)
	local []string // the local scan's --by
}

func variants() []variant {
	return []variant{
		{name: "whole", spec: Spec{Amount: "amount", Scale: 2}},
		{name: "whole_last_two_all", spec: Spec{Amount: "amount", Scale: 2, LastTwoAll: true}},
		{name: "entity", spec: Spec{Amount: "amount", Scale: 2, By: []Segment{{Name: "entity", Column: "entity"}}}, local: []string{"entity"}},
		{name: "both_min0_units_month", spec: Spec{Amount: "amount", Scale: 2, Signs: "both", Min: "0", LastTwo: "units",
			By: []Segment{{Name: "entity", Column: "entity"}, {Name: "month", Column: "posted", Month: true}}}, local: []string{"entity", "month"}},
		{name: "entity_quarter_year", spec: Spec{Amount: "amount", Scale: 2, Signs: "both", Min: "0",
			By: []Segment{{Name: "entity", Column: "entity"}, {Name: "quarter", Column: "posted", Quarter: true}, {Name: "year", Column: "posted", Year: true}}},
			local: []string{"entity", "quarter", "year"}},
		{name: "negative_where", spec: Spec{Amount: "amount", Scale: 2, Signs: "negative", Min: "0.5", Where: "posted >= '2025-03-01'",
			By: []Segment{{Name: "entity", Column: "entity"}}}, local: []string{"entity"}},
	}
}

// localReport runs the battery's count-based tests on the workspace, with
// the variant's population.
func localReport(t *testing.T, ws *workspace.Workspace, v variant) *battery.Report {
	t.Helper()
	s := v.spec.WithDefaults()
	o := battery.Options{Tests: battery.CountTests(), By: v.local, LastTwo: s.LastTwo, LastTwoAll: s.LastTwoAll, MinSegmentRows: 50}
	o.Signs, o.Min, o.Where = s.Signs, s.Min, s.Where
	rep, err := battery.Run(context.Background(), ws, o)
	if err != nil {
		t.Fatal(err)
	}
	return rep
}

// countsReport reads the count files and runs the statistics, as scan
// --counts does.
func countsReport(t *testing.T, q string, files []string, v variant) *battery.Report {
	t.Helper()
	qp := filepath.Join(t.TempDir(), "query.sql")
	if err := os.WriteFile(qp, []byte(q), 0o644); err != nil {
		t.Fatal(err)
	}
	o := battery.Options{Tests: battery.CountTests(), By: v.local, MinSegmentRows: 50}
	rep, src, _, err := Scan(qp, files, o)
	if err != nil {
		t.Fatal(err)
	}
	if len(src.Files) != len(files) || src.QuerySHA256 != SHA256([]byte(q)) {
		t.Fatalf("provenance %+v does not name the %d files and the query's hash", src, len(files))
	}
	return rep
}

// sameReports asserts that two reports agree bin for bin (every count and
// sum of every table) and statistic for statistic (the JSON document, but
// for the run id, timings and the amount type's wording).
func sameReports(t *testing.T, local, counts *battery.Report) {
	t.Helper()
	if local.Tested == 0 || len(local.Tests) != len(battery.CountTests()) {
		t.Fatalf("the local scan tested %d amounts in %d tests: the comparison would prove nothing", local.Tested, len(local.Tests))
	}
	if !reflect.DeepEqual(local.Counts, counts.Counts) {
		t.Errorf("whole selection's bin counts differ:\nlocal  %+v\ncounts %+v", local.Counts, counts.Counts)
	}
	if len(local.SegmentResults) != len(counts.SegmentResults) {
		t.Fatalf("%d segments locally, %d from counts", len(local.SegmentResults), len(counts.SegmentResults))
	}
	for i := range local.SegmentResults {
		a, b := local.SegmentResults[i], counts.SegmentResults[i]
		if a.Key.String() != b.Key.String() || !reflect.DeepEqual(a.Counts, b.Counts) {
			t.Errorf("segment %q / %q: bin counts differ:\nlocal  %+v\ncounts %+v", a.Key.Label(), b.Key.Label(), a.Counts, b.Counts)
		}
	}
	doc := func(r *battery.Report) string {
		c := *r
		// Input is what the workspace's loads read: the local run states
		// it, a run on counts made elsewhere has none.
		c.RunID, c.Seconds, c.AmountType, c.Input = 0, battery.Timing{}, "", nil
		b, err := json.Marshal(&c)
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	if a, b := doc(local), doc(counts); a != b {
		i := 0
		for i < len(a) && i < len(b) && a[i] == b[i] {
			i++
		}
		lo := max(0, i-200)
		t.Errorf("JSON documents differ at byte %d:\nlocal  ...%s\ncounts ...%s", i, a[lo:min(len(a), i+200)], b[lo:min(len(b), i+200)])
	}
}

// stripQuery turns the emitted query into a subquery: no first-line
// comment, no closing semicolon.
func stripQuery(q string) string {
	_, body, _ := strings.Cut(q, "\n")
	return strings.TrimSuffix(strings.TrimSpace(body), ";")
}

func itoa(n int) string { return strconv.Itoa(n) }

// binDrills returns drill-down checks of digit bins for a scan on counts
// (rep, from the query q): for the whole selection and the first segment,
// every count test's fullest bin and its emptiest non-empty bin, and the
// first-two stretch 45 to 49, each with the count the counts put there;
// and the drills Drills makes for the report's flags. Every query must
// list exactly its count on the engine.
func binDrills(t *testing.T, q string, rep *battery.Report) []drillCheck {
	t.Helper()
	spec, err := ReadQuery(q)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, s := range spec.By {
		names = append(names, s.Name)
	}
	var out []drillCheck
	add := func(c *battery.Counts, key segment.Key) {
		for _, tt := range battery.CountTests() {
			b := c.Bins(tt)
			lo, _ := tt.Bins()
			most, least := -1, -1
			for i, n := range b {
				if most < 0 || n > b[most] {
					most = i
				}
				if n > 0 && (least < 0 || n < b[least]) {
					least = i
				}
			}
			for _, i := range []int{most, least} {
				if i < 0 {
					continue
				}
				rq, err := BinRecordsQuery(spec, tt, lo+i, lo+i, names, key)
				if err != nil {
					t.Fatal(err)
				}
				out = append(out, drillCheck{rq, b[i]})
			}
			if tt == benford.FirstTwo {
				var n int64
				for i := 45 - lo; i <= 49-lo; i++ {
					n += b[i]
				}
				rq, err := BinRecordsQuery(spec, tt, 45, 49, names, key)
				if err != nil {
					t.Fatal(err)
				}
				out = append(out, drillCheck{rq, n})
			}
		}
	}
	add(rep.Counts, nil)
	if len(rep.SegmentResults) > 0 {
		add(rep.SegmentResults[0].Counts, rep.SegmentResults[0].Key)
	}
	flags, err := Drills(spec, rep, names)
	if err != nil {
		t.Fatal(err)
	}
	for _, d := range flags {
		out = append(out, drillCheck{d.Query, d.Count})
	}
	return out
}
