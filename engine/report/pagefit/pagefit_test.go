package pagefit

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// needBrowser skips the test when chromium is absent, unless
// LEADLINE_REQUIRE_BROWSER=1 (CI) makes that a failure.
func needBrowser(t *testing.T) string {
	t.Helper()
	b := Browser()
	if b == "" {
		if os.Getenv("LEADLINE_REQUIRE_BROWSER") == "1" {
			t.Fatal("chromium is not installed and LEADLINE_REQUIRE_BROWSER=1: apt-get install chromium")
		}
		t.Skip("chromium is not installed: the page is not measured in a browser (apt-get install chromium; LEADLINE_REQUIRE_BROWSER=1 makes this a failure)")
	}
	return b
}

// TestCheckFindsOverflow: the measurement can fail. A page whose table is
// wider than every mode is reported in each; the same table in a box that
// scrolls sideways passes on screen but not in print, where nothing
// scrolls; a page that wraps passes everywhere.
func TestCheckFindsOverflow(t *testing.T) {
	b := needBrowser(t)
	dir := t.TempDir()
	write := func(name, body string) string {
		p := filepath.Join(dir, name)
		page := `<!DOCTYPE html><html><head><meta charset="utf-8"><style>body{margin:0} .wrap{overflow-x:auto}</style></head><body><section id="s">` + body + `</section></body></html>`
		if err := os.WriteFile(p, []byte(page), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	wide := `<table id="wide"><tr><td style="white-space:nowrap">` + strings.Repeat("wide cell ", 300) + `</td></tr></table>`
	ctx := context.Background()

	got, err := Check(ctx, b, write("wide.html", wide), Modes)
	if err != nil {
		t.Fatal(err)
	}
	modes := map[string]bool{}
	for _, o := range got {
		modes[o.Mode] = true
		if !strings.Contains(o.Element, "table#wide") || !strings.Contains(o.Element, "section #s") {
			t.Errorf("overflow not named by the outermost element: %s", o)
		}
	}
	for _, m := range Modes {
		if !modes[m.Name] {
			t.Errorf("%s: the over-wide table was not found (%v)", m.Name, got)
		}
	}

	got, err = Check(ctx, b, write("scroll.html", `<div class="wrap">`+wide+`</div>`), Modes)
	if err != nil {
		t.Fatal(err)
	}
	for _, o := range got {
		if o.Mode != "A4 portrait print" {
			t.Errorf("a table inside a fitting scroll box counted on screen: %s", o)
		}
	}
	if len(got) == 0 {
		t.Error("print: a table cut off inside a scroll box was not found")
	}

	got, err = Check(ctx, b, write("fits.html", `<p>`+strings.Repeat("text that wraps ", 300)+`</p>`), Modes)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) > 0 {
		t.Errorf("a page of wrapping text overflows: %v", got)
	}
}
