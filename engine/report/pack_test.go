package report

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/pack"
	"github.com/leadline/leadline/engine/workspace"
)

// TestPackRunWritesReport runs a real pack over the generated ledger: the
// output folder gets report.html through the writer this package registers,
// the manifest lists it, and every number of the report equals its place
// in results.json or manifest.json.
func TestPackRunWritesReport(t *testing.T) {
	d := sharedDemo(t)
	ctx := context.Background()
	dir := t.TempDir()
	packFile := filepath.Join(dir, "test.toml")
	src := fmt.Sprintf(`[pack]
name = "report-test"
client = "Test client"
period = "2025"
workspace = "ws.duckdb"

[[source]]
name = "general ledger"
files = [%q]

[source.columns]
amount = "amount"
entity = "entity"
counterparty = "counterparty"
doc_id = "doc_id"
posted = "posted"
user_id = "user_id"

[battery]
tests = ["first", "second", "first_two", "summation"]
segments = ["entity", "user_id"]
min_segment_rows = 1000

[limits]
values = [1000, 5000, 10000]
width = 0.10

[ranges]
per_decade = 20

[duplicates]
tests = ["same_amount", "spread"]
top = 5

[[extract]]
name = "limit_bands"
from = "limits"
top = 1
max_rows = 30

[[check]]
name = "large"
title = "Entries of 100,000 or more"
sql = "SELECT doc_id, entity, amount FROM ledger WHERE abs(amount) >= 100000 ORDER BY abs(amount) DESC, doc_id, row_id"
`, filepath.Join(d.dir, "ledger.csv"))
	if err := os.WriteFile(packFile, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	p, err := pack.Read(packFile)
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	res, err := pack.Run(ctx, p, pack.RunOptions{Out: out})
	if err != nil {
		t.Fatal(err)
	}
	listed := false
	for _, o := range res.Outputs {
		if o.Path == FileName {
			listed = true
		}
	}
	if !listed {
		t.Errorf("the manifest does not list %s: %v", FileName, res.Outputs)
	}
	doc, err := os.ReadFile(filepath.Join(out, FileName))
	if err != nil {
		t.Fatal(err)
	}
	nums, sections, _ := parsePage(t, doc)
	for _, id := range []string{"summary", "completeness", "digits", "runs", "segments", "limits", "ranges", "duplicates", "drill", "checks", "manifest"} {
		if s := sections[id]; s == nil || attr(s, "data-status") != "shown" {
			t.Errorf("section %s not shown", id)
		}
	}
	// Both segmentations of the pack are ranked.
	for _, by := range []string{"By entity:", "By user_id:"} {
		if !strings.Contains(textOf(sections["segments"]), by) {
			t.Errorf("segment ranking %q missing", by)
		}
	}
	// The workbook has the native charts of the first-digit and first-two
	// digits tests, on sheets of their own, reading those sheets' cells.
	parts := zipParts(t, filepath.Join(out, output.WorkbookFile))
	charts := 0
	for name, x := range parts {
		if strings.HasPrefix(name, "xl/charts/chart") {
			charts++
			if !strings.Contains(x, "<barChart>") || !strings.Contains(x, "<lineChart>") {
				t.Errorf("%s is not a column chart with lines", name)
			}
		}
	}
	wb := parts["xl/workbook.xml"]
	if charts != 2 || !strings.Contains(wb, `name="chart_first"`) || !strings.Contains(wb, `name="chart_first_two"`) {
		t.Errorf("workbook: %d charts; chart sheets in workbook.xml: %v %v", charts, strings.Contains(wb, `name="chart_first"`), strings.Contains(wb, `name="chart_first_two"`))
	}
	if !strings.Contains(textOf(sections["summary"]), "Key findings of the pack run") {
		t.Error("the pack's key findings are missing")
	}
	files := map[string]any{}
	for _, name := range []string{output.ResultsFile, output.ManifestFile} {
		b, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		if files[name], err = decodeNumbers(b); err != nil {
			t.Fatal(err)
		}
	}
	resolve := func(src string) (any, error) {
		name, ptr, ok := strings.Cut(src, "#")
		doc, known := files[name]
		if !ok || !known {
			return nil, fmt.Errorf("unknown source")
		}
		return pointer(doc, ptr)
	}
	if n := checkNumbers(t, nums, resolve); n < 100 {
		t.Errorf("only %d numbers checked", n)
	}
	if keep := os.Getenv("LEADLINE_REPORT_KEEP"); keep != "" {
		os.WriteFile(filepath.Join(keep, "report-pack.html"), doc, 0o644)
	}
	// The pack's report (extracts, checks, manifest) fits the page at
	// 1024 and 1400 px and in A4 print, measured in Chromium.
	t.Run("fits the page", func(t *testing.T) {
		checkFits(t, browserOrSkip(t), filepath.Join(out, FileName))
	})
	// The same run, reported later from the pack's workspace (the pack run
	// is stored there as a run of kind pack), shows the same sections, the
	// manifest read from the output folder.
	ws, err := workspace.Open(ctx, filepath.Join(dir, "ws.duckdb"), workspace.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	m, err := FromWorkspace(ctx, ws, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if m.Limits == nil || m.Ranges == nil || m.Duplicates == nil || m.Drills == nil || m.Manifest == nil || len(m.Findings) == 0 {
		t.Errorf("report from the workspace after a pack run: limits %v ranges %v duplicates %v extracts %v manifest %v findings %d",
			m.Limits != nil, m.Ranges != nil, m.Duplicates != nil, m.Drills != nil, m.Manifest != nil, len(m.Findings))
	}
	for _, r := range m.Runs {
		if r.Stale {
			t.Errorf("run %d (%s) marked stale: a pack run loads inside itself", r.ID, r.Kind)
		}
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	nums, _, _ = parsePage(t, buf.Bytes())
	runDocs := map[string]any{}
	resolve = func(src string) (any, error) {
		name, ptr, _ := strings.Cut(src, "#")
		if name == output.ManifestFile {
			return pointer(files[name], ptr)
		}
		doc, ok := runDocs[name]
		if !ok {
			var result string
			if err := ws.Conn.QueryRowContext(ctx, "SELECT result FROM runs WHERE run_id = ?", strings.TrimPrefix(name, "run/")).Scan(&result); err != nil {
				return nil, err
			}
			if doc, err = decodeNumbers([]byte(result)); err != nil {
				return nil, err
			}
			runDocs[name] = doc
		}
		return pointer(doc, ptr)
	}
	var runNums []marked
	for _, n := range nums {
		if strings.HasPrefix(n.src, "run/") || strings.HasPrefix(n.src, output.ManifestFile) {
			runNums = append(runNums, n)
		}
	}
	if n := checkNumbers(t, runNums, resolve); n < 100 {
		t.Errorf("only %d numbers of the stored pack run checked", n)
	}
}
