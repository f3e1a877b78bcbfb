package ranges

import (
	"bufio"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/workspace"
)

// row is one generated ledger row (invented test data).
type row struct {
	entity, posted string
	cents          int64
}

func loadRows(t testing.TB, rows []row) *workspace.Workspace {
	t.Helper()
	dir := t.TempDir()
	path := filepath.Join(dir, "gl.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(f)
	fmt.Fprintln(w, "entity,posted,amount")
	for _, r := range rows {
		sign := ""
		c := r.cents
		if c < 0 {
			sign, c = "-", -c
		}
		fmt.Fprintf(w, "%s,%s,%s%d.%02d\n", r.entity, r.posted, sign, c/100, c%100)
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	ctx := context.Background()
	ws, err := workspace.Open(ctx, filepath.Join(dir, "ws.duckdb"), workspace.Options{Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	rep, err := load.Load(ctx, ws, []string{path}, load.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsLoaded != int64(len(rows)) {
		t.Fatalf("loaded %d of %d rows", rep.RowsLoaded, len(rows))
	}
	return ws
}

// boundaryRows: amounts on and around the edges 4500, 5000, 5500 of both
// signs, zeros, amounts below the minimum, a blank entity, and random
// amounts from 1 to 10^5.
func boundaryRows() []row {
	var rows []row
	ents := []string{"A", "B", ""}
	months := []string{"2025-01-15", "2025-02-03", "2025-02-28"}
	special := []int64{449999, 450000, 450001, 499999, 500000, 500001, 549999, 550000, 550001, 1000, 999, 29, 0, 100000000}
	for i, c := range special {
		for k, e := range ents {
			rows = append(rows, row{e, months[(i+k)%3], c}, row{e, months[(i+k+1)%3], -c})
		}
	}
	rng := rand.New(rand.NewPCG(7, 7))
	for i := range 3000 {
		c := int64(math.Exp(rng.Float64()*math.Log(1e7)) + 0.5) // 0.01 .. 100,000.00
		if rng.IntN(4) == 0 {
			c = -c
		}
		rows = append(rows, row{ents[i%3], months[i%3], c})
	}
	return rows
}

// TestCountExact checks the one-scan counts (DuckDB's histogram over the
// negated edges) against an independent count in Go on the exact cents,
// per segment and for each choice of signs, including amounts exactly on
// an edge (an edge belongs to the band above it), and the counts of what
// was left out.
func TestCountExact(t *testing.T) {
	rows := boundaryRows()
	ws := loadRows(t, rows)
	ctx := context.Background()
	edgesCents := []int64{450000, 500000, 550000}
	edges := []float64{4500, 5000, 5500}
	for _, signs := range []string{"positive", "negative", "both"} {
		for _, by := range [][]string{nil, {"entity"}, {"month", "entity"}} {
			pop, err := Prepare(ctx, ws, population.Spec{Signs: signs, Min: "10"})
			if err != nil {
				t.Fatal(err)
			}
			segs, err := segment.Resolve(ctx, ws, by)
			if err != nil {
				t.Fatal(err)
			}
			groups, err := pop.Count(ctx, ws, segs, edges)
			if err != nil {
				t.Fatal(err)
			}
			// independent count in Go
			type want struct {
				c    Counts
				bins []int64
			}
			wants := map[string]*want{}
			for _, r := range rows {
				var key []string
				for _, s := range by {
					switch s {
					case "entity":
						key = append(key, orBlank(r.entity))
					case "month":
						key = append(key, r.posted[:7])
					}
				}
				k := strings.Join(key, " / ")
				w := wants[k]
				if w == nil {
					w = &want{bins: make([]int64, 4)}
					wants[k] = w
				}
				w.c.Rows++
				x := r.cents
				ok := signs == "both" || (signs == "positive" && x > 0) || (signs == "negative" && x < 0)
				if x < 0 {
					x = -x
				}
				switch {
				case ok && x >= 1000:
					if w.c.Tested == 0 || float64(x)/100 < w.c.Min {
						w.c.Min = float64(x) / 100
					}
					if float64(x)/100 > w.c.Max {
						w.c.Max = float64(x) / 100
					}
					w.c.Tested++
					j := 0
					for j < 3 && x >= edgesCents[j] {
						j++
					}
					w.bins[j]++
				case r.cents == 0:
					w.c.Zero++
				case !ok:
					w.c.OtherSign++
				default:
					w.c.BelowMin++
				}
			}
			if len(groups) != len(wants) {
				t.Errorf("%s by %v: %d groups, want %d", signs, by, len(groups), len(wants))
			}
			for _, g := range groups {
				k := g.Key.Label()
				w := wants[k]
				if w == nil {
					t.Errorf("%s by %v: unexpected group %q", signs, by, k)
					continue
				}
				if g.Counts != w.c || fmt.Sprint(g.Bins.Counts) != fmt.Sprint(w.bins) {
					t.Errorf("%s by %v, group %q: %+v %v, want %+v %v", signs, by, k, g.Counts, g.Bins.Counts, w.c, w.bins)
				}
			}
		}
	}
}

func orBlank(s string) string {
	if s == "" {
		return "(blank)"
	}
	return s
}

// TestDrillAgrees: every band of a range table and every limit band, per
// segment, drills down (engine/drill, the drill command's selection) to
// exactly the amounts it counted; logarithmic band edges are irrational and
// reach drill rounded up to the cent (DrillRange).
func TestDrillAgrees(t *testing.T) {
	ws := loadRows(t, boundaryRows())
	ctx := context.Background()
	for _, o := range []Options{
		{Layout: Layout{PerDecade: 7}},
		{Layout: Layout{Width: 2500, To: 30000}, Spec: population.Spec{Signs: "negative", Min: "1"}},
		{Layout: Layout{PerDecade: 3, From: 0.01}, Spec: population.Spec{Signs: "both", Min: "0.01", Where: "entity <> 'B'"}},
	} {
		rep, err := Run(ctx, ws, o)
		if err != nil {
			t.Fatal(err)
		}
		var sum int64
		for _, b := range rep.Bands {
			sel := drill.Selection{Spec: rep.Population, Range: b.Range}
			got := drillCount(t, ws, sel)
			if got != b.Count {
				t.Errorf("%+v: band [%v, %v) (%s): %d counted, drill finds %d", o, b.From, b.To, b.Range, b.Count, got)
			}
			sum += b.Count
		}
		if sum+rep.BelowBands+rep.AboveBands != rep.Counts.Tested {
			t.Errorf("%+v: bands %d + below %d + above %d != tested %d", o, sum, rep.BelowBands, rep.AboveBands, rep.Counts.Tested)
		}
		if rep.Counts.Tested+rep.Counts.Zero+rep.Counts.OtherSign+rep.Counts.BelowMin != rep.Counts.Rows {
			t.Errorf("%+v: counts do not add up: %+v", o, rep.Counts)
		}
	}
	// a segment and a band below a limit
	pop, _ := Prepare(ctx, ws, population.Spec{})
	segs, _ := segment.Resolve(ctx, ws, []string{"entity", "month"})
	groups, err := pop.Count(ctx, ws, segs, []float64{4500, 5000})
	if err != nil {
		t.Fatal(err)
	}
	for _, g := range groups {
		n, _ := g.Bins.Between(4500, 5000)
		sel := drill.Selection{Range: DrillRange(4500, 5000, 2), Segments: g.Key.DrillSegments(segs)}
		if got := drillCount(t, ws, sel); got != n {
			t.Errorf("segment %s: %d counted, drill finds %d", g.Key.Label(), n, got)
		}
	}
}

func drillCount(t *testing.T, ws *workspace.Workspace, sel drill.Selection) int64 {
	t.Helper()
	b, err := drill.Build(context.Background(), ws, sel)
	if err != nil {
		t.Fatal(err)
	}
	s, err := drill.Summarize(context.Background(), ws, b)
	if err != nil {
		t.Fatal(err)
	}
	return s.Records
}

func TestDrillRangeAndQuote(t *testing.T) {
	for _, c := range []struct {
		from, to float64
		scale    int
		want     string
	}{
		{4500, 5000, 2, "4500:5000"},
		{1258.925411794167, 1584.893192461114, 2, "1258.93:1584.9"},
		{0.1 * 3, 2.5 * 0.9, 2, "0.3:2.25"},
		{2.2500000000000004, 1e6, 2, "2.25:1000000"},
		{12.3, 99.99, 0, "13:100"},
		{0, 500, 2, "0:500"},
	} {
		if got := DrillRange(c.from, c.to, c.scale); got != c.want {
			t.Errorf("DrillRange(%v, %v, %d) = %q, want %q", c.from, c.to, c.scale, got, c.want)
		}
	}
	for in, want := range map[string]string{
		"entity=E03":         "entity=E03",
		"entity = 'E03'":     `"entity = 'E03'"`,
		`descr = "x" AND $a`: `'descr = "x" AND $a'`,
		"it's $5":            `'it'\''s $5'`,
		"":                   `""`,
	} {
		if got := ShellQuote(in); got != want {
			t.Errorf("ShellQuote(%q) = %s, want %s", in, got, want)
		}
	}
	cmd := DrillCommand("acme.duckdb", "4500:5000", population.Spec{Signs: "negative", Where: "account = '6100'"}, []string{"entity=E 1"})
	want := `leadline drill --db acme.duckdb --range 4500:5000 --segment "entity=E 1" --signs negative --where "account = '6100'"`
	if cmd != want {
		t.Errorf("DrillCommand = %s\nwant            %s", cmd, want)
	}
}

// TestSegmentsResolve: canonical, month and unknown columns.
func TestSegmentsResolve(t *testing.T) {
	ws := loadRows(t, boundaryRows()[:50])
	ctx := context.Background()
	segs, err := segment.Resolve(ctx, ws, []string{"Entity", "month"})
	if err != nil || len(segs) != 2 || segs[0].Name != "entity" || segs[1].Name != "month" {
		t.Errorf("%+v %v", segs, err)
	}
	for _, by := range [][]string{{"nope"}, {"entity", "ENTITY"}, {"amount"}, {" "}} {
		if _, err := segment.Resolve(ctx, ws, by); err == nil || !strings.Contains(err.Error(), "--by") {
			t.Errorf("--by %q: %v", by, err)
		}
	}
}
