package main

import (
	"encoding/csv"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/fixtures"
)

// The manager's round trip on the command line: drill --sample draws a
// monetary-unit sample of a bin's records and prints its method, seed,
// interval, population count and total, writes them beside the file, and
// stores the draw (the same seed writes the same file, another seed
// another); two rows of the sample are filled by hand and one row naming no
// record is added; leadline followup stores the two, refuses the third
// naming its line, and exits non-zero; the report shows the sample's method
// and seed and the follow-up by status.
func TestSampleFollowupReport(t *testing.T) {
	dir := t.TempDir()
	gl := filepath.Join(dir, "gl.csv")
	if _, err := fixtures.WriteCSV(gl, fixtures.Config{Rows: 5000, Seed: 4, Plants: true}); err != nil {
		t.Fatal(err)
	}
	db := filepath.Join(dir, "ws.duckdb")
	if code, _, stderr := runCmd("load", "--db", db, gl); code != 0 {
		t.Fatal(stderr)
	}
	out := filepath.Join(dir, "vouch.csv")
	drawArgs := []string{"drill", "--db", db, "--test", "first", "--bin", "1", "--sample", "monetary", "--sample-size", "8", "--seed", "9"}
	code, stdout, stderr := runCmd(append(drawArgs, "--out", out)...)
	if code != 0 {
		t.Fatal(stderr)
	}
	for _, re := range []string{`Population: [0-9,]+ records`, `monetary-unit .*seed 9, 8 record\(s\) asked`, `Sampling interval [0-9,.]+, random start [0-9,.]+`, `Stored as run [0-9]+`} {
		if !regexp.MustCompile(re).MatchString(stdout) {
			t.Errorf("drill --sample output lacks %s:\n%s", re, stdout)
		}
	}
	var meta struct {
		Records int64 `json:"records"`
		Sample  struct {
			Method            string `json:"method"`
			Seed              int64  `json:"seed"`
			Interval          string `json:"interval"`
			PopulationRecords int64  `json:"population_records"`
			Selected          int    `json:"selected"`
		} `json:"sample"`
	}
	b, err := os.ReadFile(filepath.Join(dir, "vouch.sample.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &meta); err != nil {
		t.Fatal(err)
	}
	if meta.Sample.Method != "monetary" || meta.Sample.Seed != 9 || meta.Sample.Interval == "" || meta.Sample.PopulationRecords != meta.Records || meta.Records == 0 {
		t.Fatalf("sample record %s", b)
	}
	first, _ := os.ReadFile(out)
	again := filepath.Join(dir, "again.csv")
	if code, _, stderr := runCmd(append(drawArgs, "--out", again)...); code != 0 {
		t.Fatal(stderr)
	}
	other := filepath.Join(dir, "other.csv")
	otherArgs := append(append([]string(nil), drawArgs...), "--out", other)
	otherArgs[len(otherArgs)-3] = "10"
	if code, _, stderr := runCmd(otherArgs...); code != 0 {
		t.Fatal(stderr)
	}
	second, _ := os.ReadFile(again)
	third, _ := os.ReadFile(other)
	if string(first) != string(second) {
		t.Error("the same seed wrote another sample")
	}
	if string(first) == string(third) {
		t.Error("seeds 9 and 10 wrote the same sample")
	}

	// The team fills two rows and adds one naming no record.
	fh, _ := os.Open(out)
	recs, err := csv.NewReader(fh).ReadAll()
	fh.Close()
	if err != nil || len(recs) != meta.Sample.Selected+1 || meta.Sample.Selected < 3 {
		t.Fatalf("%d rows in %s, %d selected: %v", len(recs), out, meta.Sample.Selected, err)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	recs[1][col[followup.Status]], recs[1][col[followup.Note]], recs[1][col[followup.ReviewedOn]] = "explained", "contract price list", "2026-01-20"
	recs[2][col[followup.Status]], recs[2][col[followup.Note]] = "exception", "no approval on file"
	bad := append([]string(nil), recs[3]...)
	bad[col["file_name"]] = "other.csv"
	recs = append(recs, bad)
	returned := filepath.Join(dir, "returned.csv")
	fh, _ = os.Create(returned)
	csv.NewWriter(fh).WriteAll(recs)
	fh.Close()
	code, stdout, stderr = runCmd("followup", "--db", db, returned)
	if code == 0 || !strings.Contains(stderr, "1 returned row(s) refused") {
		t.Errorf("followup with a refused row: exit %d, %s", code, stderr)
	}
	wantLine := regexp.MustCompile(`refused: .*returned\.csv line ` + strconv.Itoa(len(recs)) + `: no loaded file is named "other\.csv"`)
	if !strings.Contains(stdout, strconv.Itoa(len(recs)-1)+" rows read = "+strconv.Itoa(len(recs)-2)+" stored + 1 refused") || !wantLine.MatchString(stdout) {
		t.Errorf("followup output:\n%s", stdout)
	}

	page := filepath.Join(dir, "report.html")
	if code, _, stderr := runCmd("report", "--db", db, "--out", page); code != 0 {
		t.Fatal(stderr)
	}
	html, _ := os.ReadFile(page)
	plain := strings.Join(strings.Fields(regexp.MustCompile(`<[^>]+>`).ReplaceAllString(string(html), " ")), " ")
	if !regexp.MustCompile(`sample\.method monetary sample\.seed 9 `).MatchString(plain) {
		t.Errorf("the report does not show the sample's method and seed")
	}
	fu := section(t, string(html), "followup")
	fuPlain := strings.Join(strings.Fields(regexp.MustCompile(`<[^>]+>`).ReplaceAllString(fu, " ")), " ")
	for _, s := range []string{"explained 1", "exception 1", followup.NotEntered + " " + strconv.Itoa(meta.Sample.Selected-2), "contract price list", "no approval on file", "no loaded file is named"} {
		if !strings.Contains(fuPlain, s) {
			t.Errorf("the follow-up section lacks %q:\n%s", s, fuPlain)
		}
	}
}
