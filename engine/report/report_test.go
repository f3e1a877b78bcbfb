package report

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
	"golang.org/x/net/html"
)

// marked is one number of the report with its markup.
type marked struct {
	field, src, value, text string
}

// parsePage parses the HTML (with a real HTML5 parser) and returns the
// marked numbers, the sections by id, and the root node.
func parsePage(t *testing.T, doc []byte) (nums []marked, sections map[string]*html.Node, root *html.Node) {
	t.Helper()
	root, err := html.Parse(bytes.NewReader(doc))
	if err != nil {
		t.Fatal(err)
	}
	sections = map[string]*html.Node{}
	var walk func(n *html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode {
			if src := attr(n, "data-src"); src != "" {
				nums = append(nums, marked{attr(n, "data-field"), src, attr(n, "data-value"), textOf(n)})
			}
			if n.Data == "section" && attr(n, "data-section") != "" {
				sections[attr(n, "data-section")] = n
			}
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(root)
	return nums, sections, root
}

func attr(n *html.Node, key string) string {
	for _, a := range n.Attr {
		if a.Key == key {
			return a.Val
		}
	}
	return ""
}

func hasClass(n *html.Node, c string) bool {
	for _, x := range strings.Fields(attr(n, "class")) {
		if x == c {
			return true
		}
	}
	return false
}

func textOf(n *html.Node) string {
	var b strings.Builder
	var walk func(*html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.TextNode {
			b.WriteString(n.Data)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(n)
	return b.String()
}

// findAll returns the elements under n for which match holds.
func findAll(n *html.Node, match func(*html.Node) bool) []*html.Node {
	var out []*html.Node
	var walk func(*html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode && match(n) {
			out = append(out, n)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(n)
	return out
}

// pointer resolves an RFC 6901 pointer over a document decoded with
// UseNumber (written independently of the package's resolvePointer).
func pointer(doc any, ptr string) (any, error) {
	if ptr == "" {
		return doc, nil
	}
	cur := doc
	for _, tok := range strings.Split(strings.TrimPrefix(ptr, "/"), "/") {
		tok = strings.ReplaceAll(strings.ReplaceAll(tok, "~1", "/"), "~0", "~")
		switch c := cur.(type) {
		case map[string]any:
			v, ok := c[tok]
			if !ok {
				return nil, fmt.Errorf("no key %q", tok)
			}
			cur = v
		case []any:
			i, err := strconv.Atoi(tok)
			if err != nil || i < 0 || i >= len(c) {
				return nil, fmt.Errorf("bad index %q", tok)
			}
			cur = c[i]
		default:
			return nil, fmt.Errorf("%q inside a scalar", tok)
		}
	}
	return cur, nil
}

// parseShown reads the number as displayed ("1,234", "−4.52%", "3.20e-05")
// and returns its value (percentages divided by 100) and half a unit of
// its last displayed digit.
func parseShown(s string) (v, tol float64, err error) {
	if s == PUnderflow {
		return 0, 1e-300, nil // an underflowed p-value: stored as 0
	}
	s = strings.TrimSpace(strings.ReplaceAll(strings.ReplaceAll(s, ",", ""), "−", "-"))
	scale := 1.0
	if strings.HasSuffix(s, "%") {
		s, scale = strings.TrimSuffix(s, "%"), 0.01
	}
	mant, exp, hasExp := strings.Cut(strings.ToLower(s), "e")
	v, err = strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, 0, err
	}
	dec := 0
	if i := strings.IndexByte(mant, '.'); i >= 0 {
		dec = len(mant) - i - 1
	}
	tol = 0.5 * math.Pow(10, -float64(dec))
	if hasExp {
		e, _ := strconv.Atoi(exp)
		tol *= math.Pow(10, float64(e))
	}
	return v * scale, tol * scale * (1 + 1e-9), nil
}

// demoSource resolves the sources of a report made from the shared
// workspace: stored runs, and the load report for the completeness tables.
func demoSource(t *testing.T, d *demo) func(src string) (any, error) {
	ctx := context.Background()
	runDocs := map[int64]any{}
	files := map[string]map[string]any{}
	for _, f := range d.load.Files {
		files[strconv.FormatInt(f.FileID, 10)] = map[string]any{
			"rows_read": f.RowsRead, "rows_loaded": f.RowsLoaded, "rows_rejected": f.RowsRejected,
			"size_bytes": f.SizeBytes, "sum_positive": f.Positive, "sum_negative": f.Negative, "net": f.Net,
		}
	}
	ents := map[string]map[string]any{}
	for _, e := range d.load.Entities {
		ents[e.Entity] = map[string]any{"rows": e.Rows, "sum_positive": e.Positive, "sum_negative": e.Negative, "net": e.Net}
	}
	rejects := map[string]map[string]any{}
	for _, f := range d.load.Files {
		for _, r := range f.RejectReasons {
			first := int64(0)
			if r.FirstLine != nil {
				first = *r.FirstLine
			}
			rejects[fmt.Sprintf("%d/%s", f.FileID, r.Reason)] = map[string]any{"rows": r.Rows, "first_line": first}
		}
	}
	unesc := func(s string) string { return strings.ReplaceAll(strings.ReplaceAll(s, "~1", "/"), "~0", "~") }
	return func(src string) (any, error) {
		switch {
		case strings.HasPrefix(src, "run/"):
			idText, ptr, _ := strings.Cut(strings.TrimPrefix(src, "run/"), "#")
			id, _ := strconv.ParseInt(idText, 10, 64)
			doc, ok := runDocs[id]
			if !ok {
				var result string
				if err := d.ws.Conn.QueryRowContext(ctx, "SELECT result FROM runs WHERE run_id = ?", id).Scan(&result); err != nil {
					return nil, err
				}
				var err error
				if doc, err = decodeNumbers([]byte(result)); err != nil {
					return nil, err
				}
				runDocs[id] = doc
			}
			return pointer(doc, ptr)
		case strings.HasPrefix(src, "files/*/"):
			col := strings.TrimPrefix(src, "files/*/")
			var sum int64
			for _, f := range files {
				sum += f[col].(int64)
			}
			return sum, nil
		case src == "ledger/rows":
			return d.load.RowsLoaded, nil
		case strings.HasPrefix(src, "files/"):
			p := strings.Split(src, "/")
			return files[p[1]][p[2]], nil
		case strings.HasPrefix(src, "entities/"):
			p := strings.Split(src, "/")
			return ents[unesc(p[1])][p[2]], nil
		case strings.HasPrefix(src, "rejects/"):
			rest := strings.TrimPrefix(src, "rejects/")
			i := strings.LastIndexByte(rest, '/')
			return rejects[unesc(rest[:i])][rest[i+1:]], nil
		}
		return nil, fmt.Errorf("unknown source")
	}
}

func decodeNumbers(b []byte) (any, error) {
	var doc any
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.UseNumber()
	err := dec.Decode(&doc)
	return doc, err
}

// checkNumbers checks every marked number against its source: data-value
// must equal the stored value exactly, and the text shown must be that
// value rounded as displayed.
func checkNumbers(t *testing.T, nums []marked, resolve func(src string) (any, error)) (checked int) {
	t.Helper()
	for _, n := range nums {
		want, err := resolve(n.src)
		if err != nil || want == nil {
			t.Errorf("%s: source %s not found: %v", n.field, n.src, err)
			continue
		}
		var wantText string
		switch w := want.(type) {
		case json.Number:
			wantText = w.String()
			f, _ := w.Float64()
			// data-value is the shortest round-trip form of the float64.
			if got, err := strconv.ParseFloat(n.value, 64); err != nil || got != f {
				t.Errorf("%s (%s): data-value %q, stored %s", n.field, n.src, n.value, wantText)
			}
		case string:
			wantText = w
			if n.value != w {
				t.Errorf("%s (%s): data-value %q, stored %q", n.field, n.src, n.value, w)
			}
		case int64:
			wantText = strconv.FormatInt(w, 10)
			if n.value != wantText {
				t.Errorf("%s (%s): data-value %q, load report %s", n.field, n.src, n.value, wantText)
			}
		default:
			t.Errorf("%s (%s): stored value %v (%T) is not a number", n.field, n.src, want, want)
			continue
		}
		// The text shown is the value, rounded as displayed.
		shown, tol, err := parseShown(n.text)
		if err != nil {
			t.Errorf("%s (%s): shown %q does not read as a number: %v", n.field, n.src, n.text, err)
			continue
		}
		exact, _ := strconv.ParseFloat(wantText, 64)
		if math.Abs(shown-exact) > tol+1e-12*math.Abs(exact) {
			t.Errorf("%s (%s): shown %q, stored %s", n.field, n.src, n.text, wantText)
		}
		checked++
	}
	return checked
}

func TestReportNumbersMatchStoredResults(t *testing.T) {
	d := sharedDemo(t)
	ctx := context.Background()
	m, err := FromWorkspace(ctx, d.ws, Options{Now: time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	if dir := os.Getenv("LEADLINE_REPORT_KEEP"); dir != "" {
		os.WriteFile(filepath.Join(dir, "report-test.html"), buf.Bytes(), 0o644)
	}
	nums, sections, _ := parsePage(t, buf.Bytes())
	checked := checkNumbers(t, nums, demoSource(t, d))
	// Not vacuous: the page shows hundreds of numbers, and the key ones.
	if checked < 300 {
		t.Errorf("only %d numbers checked", checked)
	}
	fields := map[string]bool{}
	segmentRows := map[string]bool{}
	for _, n := range nums {
		fields[n.field] = true
		if strings.HasPrefix(n.field, "segments.entity.first_two.") && strings.HasSuffix(n.field, ".excess_mad") {
			segmentRows[n.field] = true
		}
	}
	if len(segmentRows) != 5 {
		t.Errorf("%d entities ranked in the report, want the 5 of the ledger", len(segmentRows))
	}
	rangeSegs := map[string]bool{}
	for _, n := range nums {
		if strings.HasPrefix(n.field, "ranges.segments.rows.") && strings.HasSuffix(n.field, ".counts.tested") {
			rangeSegs[n.field] = true
		}
	}
	if len(rangeSegs) != 5 {
		t.Errorf("%d entities in the range table's segment ranking, want the 5 of the ledger", len(rangeSegs))
	}
	for _, f := range []string{
		"first.mad", "first.n", "first.chi2", "first.p_value", "first.ks_d", "first.excess_mad",
		"first_two.mad", "first_two.runs.runs", "first_two.runs.expected", "first_three.mad",
		"summation.mad", "files.1.rows_read", "files.1.rows_rejected", "files.1.net", "total.rows_loaded",
		"limits.flagged", "ranges.flagged", "ranges.segments.pairs", "duplicates.records_tested",
		"scan.tested", "scan.duplication.distinct", "scan.segments.ranked", "second_order.mad",
		"sensitivity.n", "sensitivity.rows.limit probe flags the limit.detection.2",
	} {
		if !fields[f] {
			t.Errorf("no number marked %q", f)
		}
	}
	for _, id := range []string{"summary", "completeness", "digits", "runs", "segments", "limits", "ranges", "duplicates", "sensitivity"} {
		s := sections[id]
		if s == nil {
			t.Errorf("section %s missing", id)
			continue
		}
		if attr(s, "data-status") != "shown" {
			t.Errorf("section %s: status %q, want shown", id, attr(s, "data-status"))
		}
	}
	// No drill run, no pack run: said plainly.
	for _, id := range []string{"drill", "manifest"} {
		s := sections[id]
		if s == nil {
			t.Errorf("section %s missing", id)
			continue
		}
		if attr(s, "data-status") != "not-run" || !strings.Contains(textOf(s), "Not run") {
			t.Errorf("section %s: want a plain 'Not run', got status %q: %q", id, attr(s, "data-status"), textOf(s))
		}
	}
	if !strings.Contains(textOf(sections["summary"]), "signals for follow-up, never proof") {
		t.Error("the caution is missing from the summary")
	}
}

// TestReportCharts checks the charts of the page against the results:
// one digit chart per test with one bar per bin and one marker per
// flagged bin, a runs chart per test with a runs test.
func TestReportCharts(t *testing.T) {
	d := sharedDemo(t)
	m, err := FromWorkspace(context.Background(), d.ws, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	_, _, root := parsePage(t, buf.Bytes())
	charts := findAll(root, func(n *html.Node) bool { return n.Data == "svg" && hasClass(n, "chart") })
	metaCharts := findAll(root, func(n *html.Node) bool { return n.Data == "meta" && attr(n, "name") == "leadline-charts" })
	if len(metaCharts) != 1 || attr(metaCharts[0], "content") != strconv.Itoa(len(charts)) {
		t.Errorf("meta leadline-charts does not match the %d charts drawn", len(charts))
	}
	byID := map[string]*html.Node{}
	for _, c := range charts {
		byID[attr(c, "id")] = c
	}
	withRuns := 0
	for _, r := range d.tests {
		id := fmt.Sprintf("r%d-%s", d.scanID, r.Test)
		c := byID[id]
		if c == nil {
			t.Errorf("no chart %s", id)
			continue
		}
		bars := findAll(c, func(n *html.Node) bool { return n.Data == "rect" && hasClass(n, "bar") })
		flaggedBars := findAll(c, func(n *html.Node) bool { return n.Data == "rect" && hasClass(n, "flagged") })
		markers := findAll(c, func(n *html.Node) bool { return hasClass(n, "flag-marker") })
		if len(bars) != len(r.Bins) || len(flaggedBars) != r.Flagged || len(markers) != r.Flagged {
			t.Errorf("%s: %d bars, %d flagged, %d markers; want %d, %d, %d", id, len(bars), len(flaggedBars), len(markers), len(r.Bins), r.Flagged, r.Flagged)
		}
		for i, b := range bars {
			if attr(b, "data-bin") != r.Bins[i].Label || hasClass(b, "flagged") != r.Bins[i].Flagged {
				t.Errorf("%s: bar %d is bin %q flagged %v, want %q %v", id, i, attr(b, "data-bin"), hasClass(b, "flagged"), r.Bins[i].Label, r.Bins[i].Flagged)
				break
			}
		}
		if r.Runs != nil {
			withRuns++
			if byID[id+"-runs"] == nil {
				t.Errorf("no runs chart for %s", r.Test)
			}
			shaded := findAll(c, func(n *html.Node) bool { return hasClass(n, "stretch") })
			if len(shaded) != len(notableStretches(r.Runs)) {
				t.Errorf("%s: %d stretches shaded, want %d", id, len(shaded), len(notableStretches(r.Runs)))
			}
		}
	}
	if want := len(d.tests) + withRuns + 2; len(charts) != want {
		t.Errorf("%d charts, want %d (digit tests, runs tests, limits, ranges)", len(charts), want)
	}
	if withRuns == 0 {
		t.Error("no digit test with a runs test: the runs section went untested")
	}
}

// TestReportSelfContained: nothing in the page points outside it.
func TestReportSelfContained(t *testing.T) {
	d := sharedDemo(t)
	path := filepath.Join(t.TempDir(), "r.html")
	if err := WriteFile(context.Background(), d.ws, path, Options{}); err != nil {
		t.Fatal(err)
	}
	doc, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	_, _, root := parsePage(t, doc)
	for _, n := range findAll(root, func(*html.Node) bool { return true }) {
		if n.Data == "script" || n.Data == "link" || n.Data == "img" || n.Data == "iframe" {
			t.Errorf("external-capable element <%s>", n.Data)
		}
		for _, a := range n.Attr {
			if (a.Key == "src" || a.Key == "href" || strings.HasSuffix(a.Key, "href")) && !strings.HasPrefix(a.Val, "#") {
				t.Errorf("<%s %s=%q> points outside the page", n.Data, a.Key, a.Val)
			}
		}
	}
	if bytes.Contains(doc, []byte("url(http")) || bytes.Contains(doc, []byte("@import")) || bytes.Contains(doc, []byte("@font-face")) {
		t.Error("the CSS fetches something")
	}
}

// TestReportSelectedRuns: with run ids, only those runs are shown and the
// others say so.
func TestReportSelectedRuns(t *testing.T) {
	d := sharedDemo(t)
	ctx := context.Background()
	m, err := FromWorkspace(ctx, d.ws, Options{RunIDs: []int64{d.runIDs["limits"]}})
	if err != nil {
		t.Fatal(err)
	}
	if m.Limits == nil || m.Digits != nil || m.Ranges != nil || m.Duplicates != nil || len(m.Runs) != 1 {
		t.Fatalf("selected the limits run only, got digits %v ranges %v dups %v runs %d", m.Digits != nil, m.Ranges != nil, m.Duplicates != nil, len(m.Runs))
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	_, sections, _ := parsePage(t, buf.Bytes())
	if s := sections["digits"]; s == nil || !strings.Contains(textOf(s), "none of the runs named for this report") {
		t.Error("the digits section does not say why it is not shown")
	}
	if _, err := FromWorkspace(ctx, d.ws, Options{RunIDs: []int64{999999}}); err == nil || !strings.Contains(err.Error(), "no run 999999") {
		t.Errorf("an unknown run id: got %v", err)
	}
}

// TestReportEmptyWorkspace: a fresh workspace gives a report in which every
// section says it was not run.
func TestReportEmptyWorkspace(t *testing.T) {
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	m, err := FromWorkspace(ctx, ws, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	_, sections, _ := parsePage(t, buf.Bytes())
	for _, id := range []string{"digits", "runs", "segments", "limits", "ranges", "duplicates", "drill", "manifest"} {
		s := sections[id]
		if s == nil || attr(s, "data-status") != "not-run" || !strings.Contains(textOf(s), "Not run") {
			t.Errorf("section %s: want 'Not run'", id)
		}
	}
	if s := sections["completeness"]; s == nil || !strings.Contains(textOf(s), "nothing has been loaded") {
		t.Error("the completeness section does not say nothing was loaded")
	}
}

// TestReportStaleRun: a run stored before the latest load is marked, and
// runs stored after it are not.
func TestReportStaleRun(t *testing.T) {
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	before, err := saveRun(ctx, ws, "notes", map[string]any{"n": 1})
	if err != nil {
		t.Fatal(err)
	}
	csv := filepath.Join(t.TempDir(), "small.csv")
	if err := os.WriteFile(csv, []byte("amount\n12.50\n99.99\nN/A\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := load.Load(ctx, ws, []string{csv}, load.Options{MaxRejects: "100%"}); err != nil {
		t.Fatal(err)
	}
	after, err := saveRun(ctx, ws, "notes2", map[string]any{"n": 2})
	if err != nil {
		t.Fatal(err)
	}
	m, err := FromWorkspace(ctx, ws, Options{})
	if err != nil {
		t.Fatal(err)
	}
	stale := map[int64]bool{}
	for _, r := range m.Runs {
		stale[r.ID] = r.Stale
	}
	if !stale[before] || stale[after] {
		t.Errorf("stale: run before the load %v, after %v; want true, false", stale[before], stale[after])
	}
	if len(m.Notes) != 1 || !strings.Contains(m.Notes[0], fmt.Sprintf("Run %d", before)) {
		t.Errorf("notes %q", m.Notes)
	}
	c := m.Completeness
	if c == nil || c.RowsRead != 3 || c.RowsLoaded != 2 || c.RowsRejected != 1 || !c.Balanced || len(c.Reasons) != 1 {
		t.Errorf("completeness of a 3-row file with one bad amount: %+v", c)
	}
}
