package main

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/leadline/leadline/fixtures"
)

// section returns the HTML of the report section with the given id.
func section(t *testing.T, page, id string) string {
	t.Helper()
	start := strings.Index(page, `<section class="report-section" id="`+id+`"`)
	if start < 0 {
		t.Fatalf("no section %s in the report", id)
	}
	end := strings.Index(page[start:], "</section>")
	return page[start : start+end]
}

// TestReportRunSets: a pack run, then a later ad-hoc scan of the first-two
// digits only on amounts of at least 50. The default report is the pack's
// set: its whole battery, and the later scan named as not part of the set
// with its settings, never mixed in. --set latest is the ad-hoc scan: the
// other tests say "not run in this set" with the command that runs them on
// the same population. Naming both runs shows the first and names the
// second.
func TestReportRunSets(t *testing.T) {
	dir := t.TempDir()
	ledger := filepath.Join(dir, "ledger.csv")
	if _, err := fixtures.WriteCSV(ledger, fixtures.Config{Rows: 20_000, Seed: 3, Plants: true}); err != nil {
		t.Fatal(err)
	}
	db := filepath.Join(dir, "ws.duckdb")
	packFile := filepath.Join(dir, "p.toml")
	src := fmt.Sprintf(`[pack]
name = "set-test"
client = "Test client"
period = "2025"
workspace = %q

[[source]]
name = "general ledger"
files = [%q]

[battery]
segments = ["entity"]

[limits]
values = [1000, 5000]

[[check]]
name = "large"
title = "Entries of 100,000 or more"
sql = "SELECT doc_id, entity, amount FROM ledger WHERE abs(amount) >= 100000 ORDER BY abs(amount) DESC, doc_id, row_id"
`, db, ledger)
	if err := os.WriteFile(packFile, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, _, errs := runCmd("run", packFile, "--out", filepath.Join(dir, "out")); code != 0 {
		t.Fatalf("run: %s", errs)
	}
	if code, _, errs := runCmd("scan", "--db", db, "--tests", "first_two", "--min", "50"); code != 0 {
		t.Fatalf("scan: %s", errs)
	}
	report := func(args ...string) string {
		t.Helper()
		out := filepath.Join(dir, "r.html")
		os.Remove(out)
		if code, _, errs := runCmd(append([]string{"report", "--db", db, "--out", out}, args...)...); code != 0 {
			t.Fatalf("report %v: %s", args, errs)
		}
		b, err := os.ReadFile(out)
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	runIDs := regexp.MustCompile(`data-run="(\d+)"`)

	// The default: the pack's set.
	page := report()
	sum := section(t, page, "summary")
	if !strings.Contains(sum, `data-set="pack"`) || !strings.Contains(sum, "the latest pack run (run 1)") {
		t.Errorf("the header does not name the pack set")
	}
	if !strings.Contains(sum, "Stored runs not part of this set") {
		t.Fatal("the later scan is not named as outside the set")
	}
	left := sum[strings.Index(sum, "Stored runs not part of this set"):]
	m := runIDs.FindAllStringSubmatch(left, -1)
	if len(m) != 1 || !strings.Contains(left, "(scan, ") || !strings.Contains(left, "positive amounts of at least 50, all rows") ||
		!strings.Contains(left, "--runs "+m[0][1]) {
		t.Errorf("the later scan in the left-out list: %v, %q", m, left)
	}
	digits := section(t, page, "digits")
	for _, test := range []string{"first", "second", "first_two", "first_three", "last_two", "summation", "second_order"} {
		if !strings.Contains(digits, `data-test="`+test+`"`) {
			t.Errorf("the pack's battery lost the %s test", test)
		}
	}
	if strings.Contains(digits, "not run in this set") || !strings.Contains(digits, "positive amounts of at least 10, all rows") {
		t.Errorf("the digit section of the pack set: missing tests listed or population not the pack's")
	}
	// A section of another population says so at its head.
	lim := section(t, page, "limits")
	if !strings.Contains(lim, "Population tested:") || !strings.Contains(lim, "a different population from the digit tests") {
		t.Errorf("the limit probe (no segments, the battery by entity) does not say its population differs")
	}
	// Journal-entry checks in their own section, with their SQL.
	checks := section(t, page, "checks")
	if !strings.Contains(checks, "Entries of 100,000 or more") || !strings.Contains(checks, "SELECT doc_id, entity, amount FROM ledger WHERE abs(amount) &gt;= 100000") {
		t.Errorf("the checks section lacks the check or its SQL")
	}
	if strings.Contains(page, `id="other"`) {
		t.Error("the checks still sit under other stored runs")
	}

	// The latest set: the ad-hoc scan alone for the digit tests.
	page = report("--set", "latest")
	digits = section(t, page, "digits")
	if !strings.Contains(digits, `data-test="first_two"`) || strings.Contains(digits, `data-test="first"`) {
		t.Errorf("latest set: the digit section does not show the first-two test alone")
	}
	want := "leadline scan --db " + db + " --tests first --min 50"
	if !strings.Contains(digits, "not run in this set") || !strings.Contains(digits, want) {
		t.Errorf("latest set: a test not run does not give %q", want)
	}
	if s := section(t, page, "limits"); !strings.Contains(s, "Not run in this set") || !strings.Contains(s, "leadline limits --db "+db+" --min 50") {
		t.Errorf("latest set: the limit section does not say it was not run with this population")
	}
	if !strings.Contains(section(t, page, "summary"), "a pack run: its results are shown by the report of the pack set") {
		t.Error("latest set: the pack run is not named as outside the set")
	}

	// Both runs named: the pack's digit tests are shown, the scan named.
	scanID := m[0][1]
	page = report("--runs", "1,"+scanID)
	if !strings.Contains(page, "Run "+scanID+" (scan) is not shown: this report already shows the digit tests from run 1") {
		t.Error("two runs of the digit tests named: the second is not named as left out")
	}
}
