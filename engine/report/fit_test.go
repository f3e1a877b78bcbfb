package report

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/report/pagefit"
)

// browserOrSkip returns Debian's chromium, or skips the test when it is
// absent; LEADLINE_REQUIRE_BROWSER=1 (set by .ci/run) makes that a failure.
func browserOrSkip(t *testing.T) string {
	t.Helper()
	b := pagefit.Browser()
	if b == "" {
		if os.Getenv("LEADLINE_REQUIRE_BROWSER") == "1" {
			t.Fatal("chromium is not installed and LEADLINE_REQUIRE_BROWSER=1: apt-get install chromium")
		}
		t.Skip("chromium is not installed, so the report's width is not measured in a browser (apt-get install chromium; LEADLINE_REQUIRE_BROWSER=1 makes this a failure)")
	}
	return b
}

// checkFits measures the report at path at 1024 px, 1400 px and in A4
// portrait print, and fails naming every element wider than the page.
func checkFits(t *testing.T, browser, path string) {
	t.Helper()
	over, err := pagefit.Check(context.Background(), browser, path, pagefit.Modes)
	if err != nil {
		t.Fatal(err)
	}
	for _, o := range over {
		t.Errorf("wider than the page: %s", o)
	}
}

// TestReportFitsThePage: the report of a workspace with every kind of run
// fits the page on screen at 1024 and 1400 px and in A4 portrait print
// (measured in Chromium; the pack run's own report is measured in
// TestPackRunWritesReport).
func TestReportFitsThePage(t *testing.T) {
	b := browserOrSkip(t)
	d := sharedDemo(t)
	m, err := FromWorkspace(context.Background(), d.ws, Options{Now: time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "report.html")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	checkFits(t, b, path)
}
