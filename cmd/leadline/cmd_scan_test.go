package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/fixtures"
)

// TestScanCommand runs load and scan as a user would and checks the three
// output formats and the stored run.
func TestScanCommand(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ws.duckdb")
	var b strings.Builder
	b.WriteString("amount,entity\n")
	cents := fixtures.LogUniformAmounts(6000, 10, 1e5, 9)
	for i, c := range cents {
		fmt.Fprintf(&b, "%d.%02d,%s\n", c/100, c%100, []string{"A", "B", "C"}[i%3])
	}
	b.WriteString("-12.50,A\n0,B\n")
	csvPath := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(csvPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := func(args ...string) string {
		t.Helper()
		var out, errs bytes.Buffer
		if code := run(context.Background(), args, &env{stdout: &out, stderr: &errs}); code != 0 {
			t.Fatalf("leadline %s exited %d: %s", strings.Join(args, " "), code, errs.String())
		}
		return out.String()
	}
	cmd("load", "--db", db, csvPath)

	var doc struct {
		RunID      int64 `json:"run_id"`
		Rows       int64 `json:"rows"`
		Tested     int64 `json:"tested"`
		Exclusions struct {
			Zero      int64 `json:"zero"`
			OtherSign int64 `json:"other_sign"`
			BelowMin  int64 `json:"below_min"`
		} `json:"exclusions"`
		Tests []struct {
			Test       string  `json:"test"`
			N          int64   `json:"n"`
			MAD        float64 `json:"mad"`
			Conformity string  `json:"conformity"`
			DF         int     `json:"df"`
			Bins       []struct {
				Bin     int   `json:"bin"`
				Count   int64 `json:"count"`
				Flagged bool  `json:"flagged"`
			} `json:"bins"`
			Runs *struct {
				Runs int `json:"runs"`
			} `json:"runs"`
		} `json:"tests"`
		Duplication *struct {
			Top []struct{ Amount string } `json:"top"`
		} `json:"duplication"`
		Segments *struct {
			Rankings []struct {
				Test string `json:"test"`
				Rows []struct {
					Segment string `json:"segment"`
				} `json:"rows"`
			} `json:"rankings"`
		} `json:"segments"`
	}
	out := cmd("scan", "--db", db, "--by", "entity", "--min-segment", "1000", "--format", "json")
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("scan --format json: %v\n%s", err, out)
	}
	var below int64
	for _, c := range cents {
		if c < 1000 {
			below++
		}
	}
	if doc.Rows != 6002 || doc.Tested != 6000-below || doc.Exclusions.Zero != 1 || doc.Exclusions.OtherSign != 1 || doc.Exclusions.BelowMin != below {
		t.Errorf("rows %d tested %d exclusions %+v (want 6002 rows, %d below 10)", doc.Rows, doc.Tested, doc.Exclusions, below)
	}
	if len(doc.Tests) != 7 || doc.Duplication == nil || doc.Segments == nil || len(doc.Segments.Rankings) != 7 {
		t.Fatalf("scan JSON: %d tests, duplication %v, segments %v", len(doc.Tests), doc.Duplication != nil, doc.Segments != nil)
	}
	for _, r := range doc.Tests {
		if r.Test == "first_two" && (len(r.Bins) != 90 || r.DF != 89 || r.Runs == nil || r.N != doc.Tested) {
			t.Errorf("first_two: %d bins, df %d, runs %v, n %d", len(r.Bins), r.DF, r.Runs, r.N)
		}
	}
	if got := len(doc.Segments.Rankings[0].Rows); got != 3 {
		t.Errorf("first ranking has %d segments, want 3", got)
	}

	// The run is stored with the document printed.
	stored := cmd("sql", "--db", db, "--format", "csv", fmt.Sprintf("SELECT kind, json_extract(result, '$.tested') FROM runs WHERE run_id = %d", doc.RunID))
	if !strings.Contains(stored, "scan,"+fmt.Sprint(doc.Tested)) {
		t.Errorf("stored run: %q", stored)
	}

	// CSV: long format.
	out = cmd("scan", "--db", db, "--tests", "first,duplication", "--format", "csv")
	recs, err := csv.NewReader(strings.NewReader(out)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(recs[0], ",") != "run_id,test,segment,bin,label,count,amount,actual,expected,z,lower,upper,flagged,outside_goodman" {
		t.Errorf("CSV header %v", recs[0])
	}
	if len(recs) != 1+9+20 || recs[1][1] != "first" || recs[10][1] != "duplication" {
		t.Errorf("CSV: %d rows, first %v, tenth %v", len(recs), recs[1], recs[min(10, len(recs)-1)])
	}

	// Text.
	out = cmd("scan", "--db", db, "--tests", "first_two")
	for _, want := range []string{"First-two digits test (N ", "MAD ", "Runs test: ", "Left out: 1 zero, 1 negative", "never proof of fraud"} {
		if !strings.Contains(out, want) {
			t.Errorf("text output lacks %q:\n%s", want, out)
		}
	}
}

// TestScanSegmentFlagsAcrossSegments: a ranking of 30 entities whose
// amounts follow Benford's law and one whose invoices pile up below
// 5,000 states over how many segments its flags were adjusted, flags the
// piled-up entity (bin flag and local surplus, adjusted p-values below
// 5%), and no other segment shows a flag whose adjusted p-value is 5% or
// more.
func TestScanSegmentFlagsAcrossSegments(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ws.duckdb")
	var b strings.Builder
	b.WriteString("amount,entity\n")
	cents := fixtures.LogUniformAmounts(31*2000, 10, 1e5, 17)
	for i, c := range cents {
		e := fmt.Sprintf("E%02d", i%31)
		if e == "E07" && i%5 == 0 {
			c = 450000 + int64(i)%50000 // one in five of E07's amounts in [4,500, 5,000)
		}
		fmt.Fprintf(&b, "%d.%02d,%s\n", c/100, c%100, e)
	}
	csvPath := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(csvPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := func(args ...string) string { t.Helper(); return runOK(t, args...) }
	cmd("load", "--db", db, csvPath)
	var doc struct {
		Segments struct {
			Rankings []struct {
				Test         string `json:"test"`
				AdjustedOver int    `json:"adjusted_over"`
				Rows         []struct {
					Segment        string   `json:"segment"`
					Flagged        int      `json:"flagged"`
					PSegments      float64  `json:"p_segments"`
					LocalFlagged   *int     `json:"local_flagged"`
					LocalPSegments *float64 `json:"local_p_segments"`
				} `json:"rows"`
			} `json:"rankings"`
		} `json:"segments"`
	}
	out := cmd("scan", "--db", db, "--tests", "first_two", "--by", "entity", "--format", "json")
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Segments.Rankings) != 1 {
		t.Fatalf("%d rankings", len(doc.Segments.Rankings))
	}
	rk := doc.Segments.Rankings[0]
	if rk.AdjustedOver != 31 || len(rk.Rows) != 31 {
		t.Fatalf("ranking adjusted over %d segments, %d rows; want 31", rk.AdjustedOver, len(rk.Rows))
	}
	for _, r := range rk.Rows {
		if r.Segment == "E07" {
			if r.Flagged == 0 || r.PSegments >= 0.05 || r.LocalFlagged == nil || *r.LocalFlagged == 0 || *r.LocalPSegments >= 0.05 {
				t.Errorf("E07 (amounts piled below 5,000): %+v; want flagged bins and a local surplus, adjusted p below 5%%", r)
			}
			continue
		}
		if r.Flagged > 0 && r.PSegments >= 0.05 {
			t.Errorf("%s: %d bins flagged with p_segments %v", r.Segment, r.Flagged, r.PSegments)
		}
		if r.LocalFlagged != nil && *r.LocalFlagged > 0 && *r.LocalPSegments >= 0.05 {
			t.Errorf("%s: %d local stretches flagged with local_p_segments %v", r.Segment, *r.LocalFlagged, *r.LocalPSegments)
		}
	}
	text := cmd("scan", "--db", db, "--tests", "first_two", "--by", "entity")
	if !strings.Contains(text, "Flags adjusted over the 31 segments ranked (Holm)") {
		t.Errorf("text output does not say over how many segments the flags were adjusted:\n%s", text)
	}
}
