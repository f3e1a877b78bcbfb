package main

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/leadline/leadline/fixtures"
)

// rangesByLedger writes a ledger of 20 entities of 2,000 log-uniform
// amounts each (Benford's law holds), 150 more amounts of E07 uniform in
// [4,500, 5,000), an entity TINY of 300 amounts and two rows left out (a
// negative amount and a zero). It returns the CSV's path and the refs of
// the records of E07 in [4,500, 5,000), sorted.
func rangesByLedger(t *testing.T, dir string) (string, []string) {
	t.Helper()
	var b strings.Builder
	b.WriteString("ref,entity,amount\n")
	var want []string
	n := 0
	add := func(ent string, c int64) {
		n++
		ref := fmt.Sprintf("R%06d", n)
		fmt.Fprintf(&b, "%s,%s,%d.%02d\n", ref, ent, c/100, c%100)
		if ent == "E07" && c >= 450000 && c < 500000 {
			want = append(want, ref)
		}
	}
	for i := range 20 {
		ent := fmt.Sprintf("E%02d", i)
		for _, c := range fixtures.LogUniformAmounts(2000, 10, 1e6, uint64(100+i)) {
			add(ent, c)
		}
	}
	for k := range 150 {
		add("E07", 450000+int64(k)*333) // 4,500.00 to 4,996.17
	}
	for _, c := range fixtures.LogUniformAmounts(300, 10, 1e6, 99) {
		add("TINY", c)
	}
	b.WriteString("X1,E01,-125.00\nX2,E02,0\n")
	path := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	sort.Strings(want)
	return path, want
}

// TestRangesBy runs ranges --by entity as a user would: the segment with
// amounts injected into [4,500, 5,000) is flagged there and nowhere else,
// its drill command lists exactly its records in that range, the small
// segment is counted and not scored, and text, CSV and the stored run
// carry the segments and the adjustment over them.
func TestRangesBy(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ws.duckdb")
	path, want := rangesByLedger(t, dir)
	cmd := func(args ...string) string { t.Helper(); return runOK(t, args...) }
	cmd("load", "--db", db, path)

	var doc struct {
		RunID   int64 `json:"run_id"`
		Flagged int   `json:"flagged"`
		Counts  struct {
			Rows      int64 `json:"rows"`
			Tested    int64 `json:"tested"`
			Zero      int64 `json:"zero"`
			OtherSign int64 `json:"other_sign"`
		} `json:"counts"`
		Segments *struct {
			By              []string `json:"by"`
			MinSegment      int64    `json:"min_segment"`
			Count           int      `json:"count"`
			Scored          int      `json:"scored"`
			TooSmall        int      `json:"too_small"`
			TooSmallTested  int64    `json:"too_small_tested"`
			Pairs           int      `json:"pairs"`
			Flagged         int      `json:"flagged"`
			FlaggedSegments int      `json:"flagged_segments"`
			Adjustment      string   `json:"adjustment"`
			Rows            []struct {
				Rank    int                `json:"rank"`
				Segment map[string]*string `json:"segment"`
				Counts  struct {
					Tested int64 `json:"tested"`
				} `json:"counts"`
				Flagged int `json:"flagged"`
				Bands   []struct {
					From, To  float64
					Count     int64
					P         float64
					PAdjusted float64 `json:"p_adjusted"`
					Flagged   bool
					Scored    bool
					Range     string
					Drill     string
				} `json:"bands"`
				Stretches []struct {
					Range, Drill string
				} `json:"stretches"`
			} `json:"rows"`
		} `json:"segments"`
	}
	out := cmd("ranges", "--db", db, "--width", "500", "--to", "20000", "--by", "entity", "--format", "json")
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	st := doc.Segments
	if st == nil {
		t.Fatal("no segments part in the JSON")
	}
	if st.Count != 21 || st.Scored != 20 || st.TooSmall != 1 || st.TooSmallTested != 300 || st.MinSegment != 1000 ||
		len(st.By) != 1 || st.By[0] != "entity" || !strings.Contains(st.Adjustment, "Holm over all scored (segment, band) pairs") {
		t.Errorf("segments: %d with rows, %d scored, %d too small (%d amounts), min %d, by %v, %q",
			st.Count, st.Scored, st.TooSmall, st.TooSmallTested, st.MinSegment, st.By, st.Adjustment)
	}
	var drillCmd string
	pairs, flagged := 0, 0
	for _, r := range st.Rows {
		ent := *r.Segment["entity"]
		if r.Counts.Tested < 1000 || ent == "TINY" {
			t.Errorf("segment %s of %d amounts scored", ent, r.Counts.Tested)
		}
		for _, b := range r.Bands {
			if b.Scored {
				pairs++
				if b.PAdjusted < b.P {
					t.Errorf("%s %s: adjusted p %v below p %v", ent, b.Range, b.PAdjusted, b.P)
				}
			}
			if !b.Flagged {
				continue
			}
			flagged++
			if ent != "E07" || b.Range != "4500:5000" {
				t.Errorf("flagged: %s %s (count %d)", ent, b.Range, b.Count)
				continue
			}
			drillCmd = b.Drill
			if b.Count != int64(len(want)) {
				t.Errorf("E07 4500:5000 counts %d, the ledger holds %d", b.Count, len(want))
			}
		}
	}
	if pairs != st.Pairs || flagged != st.Flagged || st.FlaggedSegments != 1 || st.Rows[0].Rank != 1 || *st.Rows[0].Segment["entity"] != "E07" {
		t.Errorf("pairs %d (listed %d), flagged %d (listed %d), flagged segments %d, first %v", st.Pairs, pairs, st.Flagged, flagged, st.FlaggedSegments, *st.Rows[0].Segment["entity"])
	}
	wantDrill := fmt.Sprintf("leadline drill --db %s --range 4500:5000 --segment entity=E07", db)
	if drillCmd != wantDrill {
		t.Fatalf("drill command %q, want %q", drillCmd, wantDrill)
	}
	if doc.Counts.Rows != 40452 || doc.Counts.Tested+doc.Counts.Zero+doc.Counts.OtherSign != 40452 {
		t.Errorf("whole selection counts %+v", doc.Counts)
	}

	// The drill command lists exactly the records of E07 in [4,500, 5,000).
	export := filepath.Join(dir, "e07.csv")
	args := append(strings.Fields(drillCmd)[1:], "--out", export)
	cmd(args...)
	f, err := os.Open(export)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	ri, ok := col["ref"]
	if !ok {
		t.Fatalf("no ref column in the export: %v", recs[0])
	}
	var got []string
	for _, r := range recs[1:] {
		got = append(got, r[ri])
	}
	sort.Strings(got)
	if strings.Join(got, ",") != strings.Join(want, ",") {
		t.Errorf("drill lists %d records, the ledger holds %d of E07 in [4500, 5000)", len(got), len(want))
	}

	// Text: the adjustment, the ranking and the drill of the flagged range.
	text := cmd("ranges", "--db", db, "--width", "500", "--to", "20000", "--by", "entity")
	for _, s := range []string{
		"Segments by entity: 21 with rows; 20 with at least 1,000 tested amounts scored on the bands above, 1 with fewer (300 amounts) not scored.",
		fmt.Sprintf("Flags Holm-adjusted over all %s scored (segment, band) pairs of the segments at 5%%", fmtInt(st.Pairs)),
		"1 flagged in 1 segment(s)",
		"Inflated ranges per flagged segment",
		"  E07:\n    4,500.00 to 5,000.00",
		wantDrill,
	} {
		if !strings.Contains(text, s) {
			t.Errorf("text lacks %q:\n%s", s, text)
		}
	}
	if !strings.Contains(text, "   1  E07 ") {
		t.Errorf("E07 not ranked first:\n%s", text)
	}

	// CSV: the whole selection's bands, then each scored segment's.
	c := cmd("ranges", "--db", db, "--width", "500", "--to", "20000", "--by", "entity", "--format", "csv")
	rows, err := csv.NewReader(strings.NewReader(c)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(rows[0], ",") != "entity,from,to,count,expected,ratio,z,p,p_adjusted,flagged,note,range,drill" {
		t.Errorf("CSV header %v", rows[0])
	}
	seen := map[string]int{}
	for _, r := range rows[1:] {
		seen[r[0]]++
		if r[0] == "E07" && r[11] == "4500:5000" && (r[9] != "true" || r[12] != wantDrill) {
			t.Errorf("CSV row %v", r)
		}
	}
	if len(seen) != 21 || seen["(all)"] != 40 || seen["E07"] != 40 || seen["TINY"] != 0 {
		t.Errorf("CSV rows per segment: %v", seen)
	}

	// The stored run keeps the options and the segments.
	stored := cmd("sql", "--db", db, "--format", "csv", fmt.Sprintf(
		"SELECT kind, json_extract_string(params, '$.by[0]'), json_extract(params, '$.min_segment'), json_extract(result, '$.segments.flagged') FROM runs WHERE run_id = %d", doc.RunID))
	if !strings.Contains(stored, "ranges,entity,1000,1") {
		t.Errorf("stored run: %s", stored)
	}
}

func fmtInt(n int) string {
	s := fmt.Sprint(n)
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	return s
}

// TestRangesByFlags: --by and --min-segment are refused with --counts
// (count-sql --test ranges counts no segments), --min-segment without
// --by, an empty --by, and a --min-segment below 1.
func TestRangesByFlags(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--by", "entity", "--counts", "c.csv", "--count-query", "q.sql"}, "--by: ranges --counts scores the whole selection only"},
		{[]string{"--by", "entity", "--min-segment", "50", "--counts", "c.csv", "--count-query", "q.sql"}, "--by: ranges --counts"},
		{[]string{"--min-segment", "50"}, "--min-segment goes with --by"},
		{[]string{"--by", ""}, "--by: give a column name"},
		{[]string{"--by", "entity", "--min-segment", "0"}, "--min-segment 0: give 1 or more"},
		{[]string{"--by", "entity", "--top", "-1"}, "--top -1"},
	} {
		code, _, stderr := runCmd(append([]string{"ranges"}, c.args...)...)
		if code == 0 || !strings.Contains(stderr, c.want) {
			t.Errorf("ranges %v: exit %d, %q; want an error with %q", c.args, code, stderr, c.want)
		}
	}
}
