package battery

import (
	"context"
	"reflect"
	"slices"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/load"
)

// TestPeriodSegments: --by year, quarter and month of the posted date on
// a ledger whose dates sit on both sides of a year end (31 December /
// 1 January) and of a quarter end (31 March / 1 April), with two records
// without a posted date. The split is counted by hand from the rows below:
// records without a date form the blank segment of every period, as month
// always did; an amount below --min is left out of its period's segment.
func TestPeriodSegments(t *testing.T) {
	ws := openWS(t)
	loadCSV(t, ws, "periods.csv", []string{
		"entity,posted,amount",
		"A,2024-12-31,150.00",
		"A,2024-12-31,250.00",
		"B,2024-12-31,350.00",
		"A,2025-01-01,410.00",
		"B,2025-01-01,520.00",
		"B,2025-01-01,5.00", // below the default --min of 10: left out
		"A,2025-03-31,610.00",
		"A,2025-04-01,720.00",
		"B,2025-12-31,830.00",
		"A,,910.00",
		"B,,105.00",
	}, load.Options{})
	// Segment label -> the first-three bins of its tested amounts, by hand.
	cases := []struct {
		by   []string
		want map[string][]int
	}{
		{[]string{"year"}, map[string][]int{
			"(blank)": {910, 105}, "2024": {150, 250, 350}, "2025": {410, 520, 610, 720, 830},
		}},
		{[]string{"quarter"}, map[string][]int{
			"(blank)": {910, 105}, "2024-Q4": {150, 250, 350}, "2025-Q1": {410, 520, 610}, "2025-Q2": {720}, "2025-Q4": {830},
		}},
		{[]string{"month"}, map[string][]int{
			"(blank)": {910, 105}, "2024-12": {150, 250, 350}, "2025-01": {410, 520}, "2025-03": {610}, "2025-04": {720}, "2025-12": {830},
		}},
		{[]string{"entity", "quarter"}, map[string][]int{
			"A / (blank)": {910}, "B / (blank)": {105}, "A / 2024-Q4": {150, 250}, "B / 2024-Q4": {350},
			"A / 2025-Q1": {410, 610}, "B / 2025-Q1": {520}, "A / 2025-Q2": {720}, "B / 2025-Q4": {830},
		}},
	}
	for _, c := range cases {
		rep := run(t, ws, Options{By: c.by, Tests: []benford.Test{benford.FirstDigit}, MinSegmentRows: 1})
		got := map[string][]int{}
		var order []string
		for _, s := range rep.SegmentResults {
			label := s.Key.Label()
			order = append(order, label)
			var bins []int
			for i, n := range s.Counts.FirstThree {
				for range n {
					bins = append(bins, 100+i)
				}
			}
			got[label] = bins
		}
		want := map[string][]int{}
		for k, v := range c.want {
			w := append([]int(nil), v...)
			slices.Sort(w)
			want[k] = w
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("--by %v: segments %v, want %v", c.by, got, want)
		}
		// Each segment drills down to exactly its records (the blank
		// period, COLUMN=, to the records without a posted date).
		var segs []Segment
		for _, name := range rep.Segments.By {
			segs = append(segs, Segment{Name: name})
		}
		for _, sr := range rep.SegmentResults {
			b, err := drill.Build(context.Background(), ws, drill.Selection{Segments: sr.Key.DrillSegments(segs)})
			if err != nil {
				t.Fatalf("--by %v, segment %q: %v", c.by, sr.Key.Label(), err)
			}
			var n int
			if err := ws.Conn.QueryRowContext(context.Background(), "SELECT count(*) FROM ledger WHERE "+b.Where.SQL, b.Where.Args...).Scan(&n); err != nil {
				t.Fatal(err)
			}
			if n != len(want[sr.Key.Label()]) {
				t.Errorf("--by %v: segment %q drills down to %d records, want %d", c.by, sr.Key.Label(), n, len(want[sr.Key.Label()]))
			}
		}
		for i := 1; i < len(rep.SegmentResults); i++ {
			if !rep.SegmentResults[i-1].Key.Less(rep.SegmentResults[i].Key) {
				t.Errorf("--by %v: segments out of order: %q", c.by, order)
				break
			}
		}
	}
}
