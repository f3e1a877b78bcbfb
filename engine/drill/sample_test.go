package drill_test

import (
	"context"
	"encoding/csv"
	"math/big"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strconv"
	"testing"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/drill/drilltest"
	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/sample"
)

// sampleLines draws a sample of a selection and returns the lines of the
// records drawn, in order, and what was drawn.
func sampleLines(t *testing.T, sel drill.Selection, method string, size int, seed int64) ([]int64, *drill.SampleDrawn) {
	t.Helper()
	ws, _ := setup(t)
	ctx := context.Background()
	b, err := drill.Build(ctx, ws, sel)
	if err != nil {
		t.Fatal(err)
	}
	tab, d, err := drill.Sample(ctx, ws, b, method, size, seed)
	if err != nil {
		t.Fatal(err)
	}
	li := colIndex(t, tab.Columns, "line")
	var lines []int64
	for _, r := range tab.Rows {
		lines = append(lines, r[li].(int64))
	}
	return lines, d
}

// inRange is the selection's records computed in Go from the generated
// rows, in file order: what a reviewer holds in the population file.
func inRange(l *drilltest.Ledger, from, to int64) []drilltest.Row {
	var out []drilltest.Row
	for _, r := range l.Rows {
		if keep(r, "positive", 1000) && abs(r.Cents) >= from && abs(r.Cents) < to {
			out = append(out, r)
		}
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Line < out[j].Line })
	return out
}

// A sample of drill records: the same seed draws the same records, another
// seed others; the records are those engine/sample's own draw picks from
// the population in file order (the order documented in FileOrder), so a
// reviewer with the population and the seed redraws them; a monetary-unit
// sample holds every record of |amount| at least the interval, and its
// interval is ceil(total / size).
func TestDrillSampleReproducible(t *testing.T) {
	_, l := setup(t)
	sel := drill.Selection{Range: "1000:5000"}
	pop := inRange(l, 100000, 500000)
	if len(pop) < 200 {
		t.Fatalf("only %d records in the range", len(pop))
	}
	for _, method := range []string{"random", "monetary"} {
		a, da := sampleLines(t, sel, method, 20, 7)
		b, _ := sampleLines(t, sel, method, 20, 7)
		c, _ := sampleLines(t, sel, method, 20, 8)
		if !reflect.DeepEqual(a, b) || len(a) == 0 {
			t.Errorf("%s: seed 7 drew %v, then %v", method, a, b)
		}
		if reflect.DeepEqual(a, c) {
			t.Errorf("%s: seeds 7 and 8 drew the same records %v", method, a)
		}
		if da.PopulationRecords != int64(len(pop)) || da.Method != method || da.Seed != 7 || da.Order != drill.FileOrder {
			t.Errorf("%s: drawn %+v, population %d", method, da, len(pop))
		}
		sizes := make([]*big.Int, len(pop))
		total := new(big.Int)
		for i, r := range pop {
			sizes[i] = big.NewInt(abs(r.Cents))
			total.Add(total, sizes[i])
		}
		if da.PopulationTotal != drill.UnitsText(total, 2) {
			t.Errorf("%s: population total %s, Go sums %s", method, da.PopulationTotal, drill.UnitsText(total, 2))
		}
		var want []int64
		if method == "random" {
			want = sample.Random(int64(len(pop)), 20, 7)
		} else {
			res, err := sample.Monetary(sizes, 20, 7)
			if err != nil {
				t.Fatal(err)
			}
			want = res.Positions
			if da.Interval != drill.UnitsText(res.Interval, 2) || da.Start != drill.UnitsText(res.Start, 2) {
				t.Errorf("interval %s start %s, redrawn %v %v", da.Interval, da.Start, res.Interval, res.Start)
			}
		}
		var wantLines []int64
		for _, p := range want {
			wantLines = append(wantLines, pop[p].Line)
		}
		if !reflect.DeepEqual(a, wantLines) {
			t.Errorf("%s: drawn lines %v, redrawn from the population %v", method, a, wantLines)
		}
	}
}

// Monetary-unit selection takes every record of |amount| at least the
// interval.
func TestDrillSampleMonetaryTakesLargeRecords(t *testing.T) {
	_, l := setup(t)
	sel := drill.Selection{Range: "10:"}
	pop := inRange(l, 1000, 1<<62)
	// A size whose interval (total / size) is at most half the largest
	// amount, so that some records reach it.
	var total, largest int64
	for _, r := range pop {
		total += abs(r.Cents)
		largest = max(largest, abs(r.Cents))
	}
	size := int(2*total/largest) + 1
	lines, d := sampleLines(t, sel, "monetary", size, 3)
	interval, ok := new(big.Rat).SetString(d.Interval)
	if !ok {
		t.Fatalf("interval %q", d.Interval)
	}
	got := map[int64]bool{}
	for _, n := range lines {
		got[n] = true
	}
	large := 0
	for _, r := range pop {
		if big.NewRat(abs(r.Cents), 100).Cmp(interval) >= 0 {
			large++
			if !got[r.Line] {
				t.Errorf("line %d of %d cents is at least the interval %s but not drawn", r.Line, r.Cents, d.Interval)
			}
		}
	}
	if large == 0 {
		t.Fatalf("no record reaches the interval %s: the test checks nothing", d.Interval)
	}
}

// An export of the sample holds the sampled records, each followed by the
// empty follow-up columns; so does an export of all the records.
func TestExportsCarryFollowupColumns(t *testing.T) {
	ws, _ := setup(t)
	ctx := context.Background()
	b, err := drill.Build(ctx, ws, drill.Selection{Range: "1000:5000"})
	if err != nil {
		t.Fatal(err)
	}
	_, d, err := drill.Sample(ctx, ws, b, "random", 12, 5)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	samplePath, allPath := filepath.Join(dir, "sample.csv"), filepath.Join(dir, "all.csv")
	if err := drill.ExportSample(ctx, ws, d, samplePath); err != nil {
		t.Fatal(err)
	}
	if err := drill.Export(ctx, ws, b, drill.RecordOptions{}, allPath); err != nil {
		t.Fatal(err)
	}
	lines, _ := sampleLines(t, drill.Selection{Range: "1000:5000"}, "random", 12, 5)
	for _, c := range []struct {
		path  string
		lines []int64
	}{{samplePath, lines}, {allPath, nil}} {
		recs := readCSV(t, c.path)
		head := recs[0]
		if !reflect.DeepEqual(head[len(head)-4:], followup.Columns) {
			t.Fatalf("%s: header ends %v, want the follow-up columns %v", c.path, head[len(head)-4:], followup.Columns)
		}
		li := colIndex(t, head, "line")
		for _, r := range recs[1:] {
			for _, v := range r[len(r)-4:] {
				if v != "" {
					t.Fatalf("%s: follow-up cell %q not empty", c.path, v)
				}
			}
		}
		if c.lines != nil {
			var got []int64
			for _, r := range recs[1:] {
				n, _ := strconv.ParseInt(r[li], 10, 64)
				got = append(got, n)
			}
			if !reflect.DeepEqual(got, c.lines) {
				t.Errorf("sample file lines %v, drawn %v", got, c.lines)
			}
		}
	}
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}
