package pack

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/output"
)

// TestRangesBySegment: a [ranges] step with by = ["entity"] runs the range
// table in every entity on the same bands; the ranking and the inflated
// ranges per segment are tables, the planted amounts of HAUL just under
// 5,000 are flagged there, results.json holds the segments without drill
// commands, an extract from ranges lists the records of the flagged
// segments' ranges (each in its segment), and min_segment without by is
// refused at its line.
func TestRangesBySegment(t *testing.T) {
	text := `[pack]
name = "ranges by entity"
client = "Client A"
period = "2025"

[[source]]
files = ["skerrimoor_ledger_2025.parquet"]

[ranges]
width = 500
to = 20000
by = ["entity"]
min_segment = 500

[[extract]]
name = "ranges_records"
from = "ranges"
top = 50
`
	path := packDir(t, text)
	out := filepath.Join(filepath.Dir(path), "out")
	res := mustRun(t, mustRead(t, path), out, true)
	run := res.Run
	col := func(tb *output.Table, name string) int {
		for i, c := range tb.Columns {
			if c.Name == name {
				return i
			}
		}
		t.Fatalf("%s has no column %s", tb.Name, name)
		return -1
	}
	rank := run.Table("ranges_segments")
	inf := run.Table("ranges_segments_inflated")
	if rank == nil || inf == nil {
		t.Fatalf("tables ranges_segments %v, ranges_segments_inflated %v", rank != nil, inf != nil)
	}
	if len(rank.Rows) < 3 {
		t.Errorf("%d segments ranked", len(rank.Rows))
	}
	haul := int64(-1)
	for _, r := range inf.Rows {
		if r[col(inf, "segment")] == "entity=HAUL" && r[col(inf, "range")] == "4500:5000" {
			haul = r[col(inf, "count")].(int64)
		}
	}
	if haul < 70 {
		t.Fatalf("HAUL's 4500:5000 not among the inflated ranges per segment (count %d): %v", haul, inf.Rows)
	}
	// The extract holds, per flagged segment range, exactly its records.
	ex := run.Table("extract_ranges_records")
	if ex == nil {
		t.Fatal("no extract table")
	}
	per := map[string]int64{}
	for _, r := range ex.Rows {
		per[r[col(ex, "item")].(string)]++
		if strings.HasPrefix(r[col(ex, "item")].(string), "inflated range in entity=HAUL, ") && r[col(ex, "entity")] != "HAUL" {
			t.Errorf("record of %v in HAUL's item", r[col(ex, "entity")])
		}
	}
	if n := per["inflated range in entity=HAUL, 4500:5000"]; n != haul {
		t.Errorf("extract lists %d records of HAUL's 4500:5000, the table counts %d (items %v)", n, haul, per)
	}
	// results.json: the segments, without drill commands.
	b, err := os.ReadFile(filepath.Join(out, "results.json"))
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Results struct {
			Ranges struct {
				Segments *struct {
					Pairs int               `json:"pairs"`
					Rows  []json.RawMessage `json:"rows"`
				} `json:"segments"`
			} `json:"ranges"`
		} `json:"results"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	sg := doc.Results.Ranges.Segments
	if sg == nil || sg.Pairs == 0 || len(sg.Rows) != len(rank.Rows) {
		t.Fatalf("results.json segments: %+v", sg)
	}
	for _, r := range sg.Rows {
		if strings.Contains(string(r), `"drill":"leadline`) {
			t.Errorf("results.json keeps a drill command: %.200s", r)
		}
	}

	// min_segment without by, and below 1.
	for _, c := range []struct{ add, marker, want string }{
		{"[ranges]\nmin_segment = 50\n", "min_segment", "min_segment goes with by"},
		{"[ranges]\nby = [\"entity\"]\nmin_segment = 0\n", "min_segment", "give 1 or more"},
		{"[ranges]\nby = [\"amount\"]\n", "by =", "segments are groups of records"},
	} {
		text, probs := packProblems(t, "", c.add)
		line := lineOf(t, text, c.marker)
		found := false
		for _, pr := range probs.Errors() {
			found = found || pr.Line == line && strings.Contains(pr.Message, c.want)
		}
		if !found {
			t.Errorf("%q: want a problem at line %d with %q; got %v", c.add, line, c.want, probs)
		}
	}
}
