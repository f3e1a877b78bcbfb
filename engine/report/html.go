package report

import (
	"bytes"
	"context"
	_ "embed"
	"encoding/json"
	"fmt"
	"html/template"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/sensitivity"
	"github.com/leadline/leadline/engine/workspace"
)

//go:embed report.html.tmpl
var pageTemplate string

//go:embed style.css
var pageCSS string

// section is one numbered section of the page.
type section struct {
	ID     string
	Number int
	Title  string
	Absent string
	D      any
}

// page is what the template receives.
type page struct {
	M        *Model
	CSS      template.CSS
	Caution  string
	Sections []section
	Charts   int
}

// glance is one row of the summary's at-a-glance table.
type glance struct {
	What    string
	Result  template.HTML
	Flags   template.HTML
	Flagged bool
	Anchor  string
	Section int
}

type summaryData struct {
	M       *Model
	Caution string
	Glance  []glance
}

var tmpl = template.Must(template.New("report").Funcs(template.FuncMap{
	"fmtTime":    fmtTime,
	"params":     paramsHTML,
	"deref":      derefAny,
	"capitalise": capitalise,
	"numf":       numHTML,
	"madFmt":     madFormat,
	"pctFmt":     pctFormat,
	"conformity": conformityText,
	"binLabel": func(r benford.Result, bin int) string {
		return r.Test.Label(bin)
	},
	"flaggedBins": flaggedBins,
	"notable":     notableStretches,
	"digitChart": func(t DigitTest) template.HTML {
		return template.HTML(digitChart(t.ID, &t.Result, stretchesOf(&t.Result)))
	},
	"diffChart": func(t DigitTest) template.HTML {
		return template.HTML(diffChart(t.ID+"-runs", &t.Result, stretchesOf(&t.Result)))
	},
	"inc": func(i int) int { return i + 1 },
	"detectionAt": func(r sensitivity.Row, j int) float64 {
		if j < len(r.Detection) {
			return r.Detection[j]
		}
		return 0
	},
	"compactAmount": compactAmount,
	"len64":         func(g []duplicates.Group) int64 { return int64(len(g)) },
	"dupColumns":    dupColumns,
	"dupCell":       dupCell,
	"dupRefs": func(t duplicates.TestResult) bool {
		for _, g := range t.Groups {
			if g.Ref != "" {
				return true
			}
		}
		return false
	},
}).Parse(pageTemplate))

// Write renders the model as one self-contained HTML page.
func Write(w io.Writer, m *Model) error {
	if m.absent == nil {
		m.absent = map[string]string{}
		m.explainAbsent()
	}
	m.markPopulations()
	p := &page{M: m, CSS: template.CSS(pageCSS), Caution: Caution}
	n := 0
	add := func(id, title string, absent string, d any) {
		n++
		p.Sections = append(p.Sections, section{ID: id, Number: n, Title: title, Absent: absent, D: d})
	}
	add("summary", "Job summary", "", summaryData{M: m, Caution: Caution, Glance: m.glance()})
	if m.Completeness != nil {
		add("completeness", "Completeness of the data loaded", "", m.Completeness)
	} else {
		add("completeness", "Completeness of the data loaded", "Not run: no load log was read.", nil)
	}
	add("digits", "Digit tests", m.absent["digits"], m.Digits)
	add("runs", "Runs test: surplus and shortfall stretches", m.absent["runs"], m.Digits)
	add("segments", "Segment ranking", m.absent["segments"], m.Segments)
	add("limits", "Limit probe: amounts just below limits", m.absent["limits"], m.Limits)
	add("ranges", "Amount ranges", m.absent["ranges"], m.Ranges)
	add("duplicates", "Duplicate groups", m.absent["duplicates"], m.Duplicates)
	add("drill", "Drill-down extracts", m.absent["drill"], m.Drills)
	if m.Followup != nil {
		add("followup", "Follow-up returned by the team", "", m.Followup)
	}
	if len(m.Sensitivity) > 0 {
		add("sensitivity", "Sensitivity: what the tests would have detected", "", m.Sensitivity)
	}
	if len(m.Compares) > 0 {
		add("compare", "Comparisons of two count sets", "", m.Compares)
	}
	if len(m.Checks) > 0 {
		add("checks", "Journal-entry checks", "", m.Checks)
	} else {
		add("checks", "Journal-entry checks", m.absent["checks"], nil)
	}
	add("manifest", "Manifest", m.absent["manifest"], m.Manifest)
	if len(m.Others) > 0 {
		add("other", "Other stored runs", "", m.Others)
	}
	p.Charts = m.chartCount()
	var buf bytes.Buffer
	if err := tmpl.ExecuteTemplate(&buf, "report", p); err != nil {
		return fmt.Errorf("report: rendering: %w", err)
	}
	_, err := w.Write(wrapTables(buf.Bytes()))
	return err
}

// wrapTables puts every table of the page in a box of its own, which
// scrolls sideways on a screen narrower than the table instead of
// widening the page (the page's text never holds a raw "<table": the
// template escapes it).
func wrapTables(page []byte) []byte {
	page = bytes.ReplaceAll(page, []byte("<table"), []byte(`<div class="table-wrap"><table`))
	return bytes.ReplaceAll(page, []byte("</table>"), []byte("</table></div>"))
}

// markPopulations names, at the head of each section whose population
// differs from the digit tests' (or the first section's), the difference,
// so that sections of different populations are never read as one.
func (m *Model) markPopulations() {
	type named struct {
		what string
		p    *PopLine
	}
	var all []named
	if m.Digits != nil {
		all = append(all, named{"the digit tests", &m.Digits.PopLine})
	}
	if m.Segments != nil {
		all = append(all, named{"the segment ranking", &m.Segments.PopLine})
	}
	if m.Limits != nil {
		all = append(all, named{"the limit probe", &m.Limits.PopLine})
	}
	if m.Ranges != nil {
		all = append(all, named{"the amount ranges", &m.Ranges.PopLine})
	}
	if m.Duplicates != nil {
		all = append(all, named{"the duplicate tests", &m.Duplicates.PopLine})
	}
	var ref *named
	for i := range all {
		if all[i].p.pop.Known {
			ref = &all[i]
			break
		}
	}
	if ref == nil {
		return
	}
	for _, n := range all {
		n.p.PopDiffers = ""
		if n.p != ref.p && n.p.pop.Known && !n.p.pop.same(ref.p.pop) {
			n.p.PopDiffers = "a different population from " + ref.what
		}
	}
}

// WriteFile assembles the report from the workspace and writes it to path
// (through a temporary file, so that a failed report leaves no half file).
// This is the call a pack run makes after its runs are stored.
func WriteFile(ctx context.Context, ws *workspace.Workspace, path string, opts Options) error {
	m, err := FromWorkspace(ctx, ws, opts)
	if err != nil {
		return err
	}
	dir := filepath.Dir(path)
	tmp, err := os.CreateTemp(dir, ".report-*.html")
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	defer os.Remove(tmp.Name())
	if err := Write(tmp, m); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return fmt.Errorf("report: writing %s: %w", path, err)
	}
	if err := os.Chmod(tmp.Name(), 0o644); err != nil {
		return err
	}
	if err := os.Rename(tmp.Name(), path); err != nil {
		return fmt.Errorf("report: writing %s: %w", path, err)
	}
	return nil
}

// chartCount is the number of charts the page draws.
func (m *Model) chartCount() int {
	n := 0
	if m.Digits != nil {
		for _, t := range m.Digits.Tests {
			n++
			if t.Result.Runs != nil {
				n++
			}
		}
	}
	if m.Limits != nil {
		n++
	}
	if m.Ranges != nil {
		n++
	}
	return n
}

// glance lists the headline of each section that ran.
func (m *Model) glance() []glance {
	var g []glance
	if c := m.Completeness; c != nil && len(c.Files) > 0 {
		status := "balanced"
		if !c.Balanced {
			status = "does not balance"
		}
		g = append(g, glance{What: "Completeness", Anchor: "completeness", Section: 2, Flagged: !c.Balanced,
			Result: template.HTML(fmt.Sprintf("%s: %s rows loaded from %d files, %s rejected", status,
				c.TotalRef().F("rows_loaded", c.RowsLoaded, "int"), len(c.Files),
				c.TotalRef().F("rows_rejected", c.RowsRejected, "int"))),
			Flags: c.TotalRef().F("rows_rejected", c.RowsRejected, "int")})
		if r := c.Reconciliation; r != nil {
			g = append(g, glance{What: "Reconciliation with " + r.Control.Name, Anchor: "completeness", Section: 2, Flagged: !r.Ties,
				Result: template.HTML(template.HTMLEscapeString(r.Verdict)), Flags: template.HTML(fmt.Sprint(r.KeysDiffering))})
		}
		if j := c.Journal; j != nil {
			for _, ch := range j.Checks {
				flags := ""
				if ch.Status != "not possible" {
					flags = fmt.Sprint(ch.Count)
				}
				g = append(g, glance{What: ch.Title, Anchor: "completeness", Section: 2, Flagged: ch.Status == "found",
					Result: template.HTML(template.HTMLEscapeString(ch.Outcome())), Flags: template.HTML(flags)})
			}
		}
	}
	if d := m.Digits; d != nil {
		for _, t := range d.Tests {
			r := t.Result
			res := fmt.Sprintf("N %s, MAD %s (%s)", t.Ref.F("n", r.N, "int"), t.Ref.F("mad", r.MAD, madFormat(r.Test)), conformityText(r.Conformity))
			if r.Test != benford.Summation && r.N > 0 {
				res += ", excess MAD " + string(t.Ref.F("excess_mad", r.ExcessMAD, madFormat(r.Test)))
			}
			if r.Severity != "" {
				res += ", " + template.HTMLEscapeString(r.Severity)
			}
			g = append(g, glance{What: capitalise(r.Test.Name()), Anchor: "test-" + string(r.Test), Section: 3, Flagged: r.Flagged > 0,
				Result: template.HTML(res), Flags: t.Ref.F("flagged", r.Flagged, "int")})
		}
		for _, t := range d.Tests {
			if u := t.Result.Runs; u != nil {
				rr := t.Ref.At("runs")
				g = append(g, glance{What: "Runs test, " + t.Result.Test.Name(), Anchor: "runs-" + string(t.Result.Test), Section: 4,
					Flagged: u.P < 0.05,
					Result:  template.HTML(fmt.Sprintf("%s runs, %s expected, p %s", rr.F("runs", u.Runs, "int"), rr.F("expected", u.Expected, "sf"), rr.F("p", u.P, "p"))),
				})
			}
		}
	}
	if s := m.Segments; s != nil {
		for _, sg := range s.Groups {
			if len(sg.Rows) == 0 {
				continue
			}
			top := sg.Rows[0]
			g = append(g, glance{What: "Segments by " + strings.Join(sg.Segments.By, "+") + ", " + sg.Ranking.Test.Name(), Anchor: "segments", Section: 5,
				Result: template.HTML(fmt.Sprintf("%s segments ranked; first: %s (excess MAD %s)", sg.Ref.F("ranked", sg.Segments.Ranked, "int"),
					template.HTMLEscapeString(top.Row.Segment), top.Ref.F("excess_mad", top.Row.ExcessMAD, madFormat(sg.Ranking.Test))))})
		}
	}
	if l := m.Limits; l != nil {
		rep := l.Report
		g = append(g, glance{What: "Limit probe", Anchor: "limits", Section: 6, Flagged: rep.Flagged > 0,
			Result: template.HTML(fmt.Sprintf("%s of %s limit and segment pairs tested flagged (limits: %s)",
				l.Ref.F("flagged", rep.Flagged, "int"), l.Ref.F("tested", rep.Tested, "int"), template.HTMLEscapeString(rep.LimitSource))),
			Flags: l.Ref.F("flagged", rep.Flagged, "int")})
	}
	if r := m.Ranges; r != nil {
		rep := r.Report
		g = append(g, glance{What: "Amount ranges", Anchor: "ranges", Section: 7, Flagged: rep.Flagged > 0,
			Result: template.HTML(fmt.Sprintf("%s of %s bands scored flagged, %d inflated stretches", r.Ref.F("flagged", rep.Flagged, "int"), r.Ref.F("scored", rep.Scored, "int"), len(rep.Stretches))),
			Flags:  r.Ref.F("flagged", rep.Flagged, "int")})
	}
	if d := m.Duplicates; d != nil {
		for i, t := range d.Result.Tests {
			tr := d.Ref.At("tests").AtField(i, t.Test)
			res := template.HTML("skipped: " + template.HTMLEscapeString(t.Reason))
			if t.Status == "ok" {
				res = template.HTML(fmt.Sprintf("%s groups, %s records", tr.F("groups_total", t.GroupsTotal, "int"), tr.F("records_total", t.RecordsTotal, "int")))
			}
			g = append(g, glance{What: "Duplicates: " + t.Title, Anchor: "duplicates", Section: 8, Result: res})
		}
	}
	return g
}

func fmtTime(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.UTC().Format("2006-01-02 15:04:05")
}

// paramsHTML writes a run's parameters as a readable nested list: keys
// in words, lists joined, SQL and paths in code, times as dates.
func paramsHTML(raw json.RawMessage) template.HTML {
	root, err := parseOrdered(raw)
	if err != nil {
		return template.HTML("<code>" + template.HTMLEscapeString(string(raw)) + "</code>")
	}
	var b strings.Builder
	writeParams(&b, root)
	return template.HTML(b.String())
}

// sqlEntries reads an array of objects that each carry a name and SQL
// (a pack's checks) as their names.
func sqlEntries(n *node) ([]string, bool) {
	var names []string
	for _, it := range n.items {
		name, sql := it.get("name"), it.get("sql")
		if it.kind != 'o' || name == nil || sql == nil || name.kind != 's' {
			return nil, false
		}
		names = append(names, name.str)
	}
	return names, len(names) > 0
}

func writeParams(b *strings.Builder, n *node) {
	esc := template.HTMLEscapeString
	switch n.kind {
	case 'o':
		if len(n.keys) == 0 {
			b.WriteString("none")
			return
		}
		b.WriteString(`<ul class="params">`)
		for i, k := range n.keys {
			b.WriteString(`<li><span class="pk">` + esc(humanLabel(k)) + `:</span> `)
			writeParams(b, n.vals[i])
			b.WriteString("</li>")
		}
		b.WriteString("</ul>")
	case 'a':
		if len(n.items) == 0 {
			b.WriteString("none")
			return
		}
		scalars := true
		for _, it := range n.items {
			if !it.scalar() {
				scalars = false
			}
		}
		if scalars {
			for i, it := range n.items {
				if i > 0 {
					b.WriteString(", ")
				}
				writeParams(b, it)
			}
			return
		}
		if names, ok := sqlEntries(n); ok {
			// Checks: their SQL is shown with their rows.
			b.WriteString(esc(strings.Join(names, ", ")) + ` <span class="pk">(each with its SQL under Journal-entry checks)</span>`)
			return
		}
		b.WriteString(`<ol class="params">`)
		for _, it := range n.items {
			b.WriteString("<li>")
			writeParams(b, it)
			b.WriteString("</li>")
		}
		b.WriteString("</ol>")
	case 's':
		v := strings.TrimSpace(n.str)
		switch {
		case strings.Contains(v, "\n") || len(v) > 60 && strings.ContainsAny(v, " ()"):
			b.WriteString(`<pre class="sql"><code>` + esc(v) + `</code></pre>`)
		case strings.ContainsAny(v, "/=<>'") || len(v) == 64 && strings.Trim(v, "0123456789abcdef") == "":
			b.WriteString(`<code class="pv">` + esc(v) + `</code>`)
		default:
			b.WriteString(esc(dateText(v)))
		}
	case 'n':
		b.WriteString(esc(n.num.String())) // as given: ids and settings unformatted
	case 'b':
		if n.b {
			b.WriteString("yes")
		} else {
			b.WriteString("no")
		}
	case 'z':
		b.WriteString("none")
	}
}

// madFormat: a MAD is a statistic like the others, to four significant
// figures whatever the test.
func madFormat(benford.Test) string { return "sf" }

func pctFormat(t benford.Test) string {
	if t == benford.FirstThree {
		return "pct:4"
	}
	if t.K() > 20 {
		return "pct:3"
	}
	return "pct:2"
}

func conformityText(c string) string {
	switch c {
	case benford.Close, benford.Acceptable, benford.Marginal:
		return c + " conformity"
	case benford.Nonconforming:
		return "nonconformity"
	case "":
		return "not given"
	}
	return c
}

// indexedBin is a bin with its index in the result's bins.
type indexedBin struct {
	Index int
	Bin   benford.Bin
}

// flaggedBins returns the flagged bins, largest Z first, at most max.
func flaggedBins(r benford.Result, max int) []indexedBin {
	var out []indexedBin
	for i, b := range r.Bins {
		if b.Flagged {
			out = append(out, indexedBin{i, b})
		}
	}
	sort.SliceStable(out, func(i, j int) bool {
		if out[i].Bin.Z != out[j].Bin.Z {
			return out[i].Bin.Z > out[j].Bin.Z
		}
		return out[i].Bin.Diff > out[j].Bin.Diff
	})
	if len(out) > max {
		out = out[:max]
	}
	return out
}

// indexedStretch is a runs-test stretch with its index in the result.
type indexedStretch struct {
	Index int
	S     benford.Stretch
}

// Stretches shown and shaded: the largest few of each kind that span two
// bins or more.
const notablePerKind = 3

// notableStretches picks the largest surplus and shortfall stretches of
// two bins or more (Stretches are ordered largest first within each kind).
func notableStretches(u *benford.Runs) []indexedStretch {
	var out []indexedStretch
	if u == nil {
		return nil
	}
	n := map[string]int{}
	for i, s := range u.Stretches {
		if s.Bins < 2 || n[s.Kind] >= notablePerKind {
			continue
		}
		n[s.Kind]++
		out = append(out, indexedStretch{i, s})
	}
	return out
}

func stretchesOf(r *benford.Result) []benford.Stretch {
	var out []benford.Stretch
	for _, s := range notableStretches(r.Runs) {
		out = append(out, s.S)
	}
	return out
}

// dupColumn is one column of a duplicate-group table.
type dupColumn struct {
	Key   string
	Title string
	Num   bool
}

var dupAllColumns = []dupColumn{
	{"amount", "amount", true}, {"counterparty", "counterparty", false}, {"doc_id", "document", false},
	{"posted", "posted", false}, {"first_posted", "first posted", false}, {"last_posted", "last posted", false},
	{"records", "records", true}, {"documents", "documents", true}, {"amounts", "distinct amounts", true},
	{"counterparties", "counterparties", true}, {"min_amount", "smallest", true}, {"max_amount", "largest", true},
	{"largest", "largest", true}, {"second", "second largest", true}, {"rsf", "relative size factor", true},
	{"excess", "excess", true}, {"total", "total", true},
}

// dupFields reads a group's fields by JSON name.
func dupFields(g duplicates.Group) map[string]any {
	return map[string]any{
		"amount": g.Amount, "counterparty": g.Counterparty, "doc_id": g.DocID, "posted": g.Posted,
		"first_posted": g.FirstPosted, "last_posted": g.LastPosted, "records": g.Records,
		"documents": g.Documents, "amounts": g.Amounts, "counterparties": g.Counterparties,
		"min_amount": g.MinAmount, "max_amount": g.MaxAmount, "largest": g.Largest, "second": g.Second,
		"rsf": g.RSF, "excess": g.Excess, "total": g.Total,
	}
}

func isZero(v any) bool {
	switch x := v.(type) {
	case string:
		return x == ""
	case int64:
		return x == 0
	case float64:
		return x == 0
	}
	return v == nil
}

// dupColumns returns the columns any group of the test fills.
func dupColumns(t duplicates.TestResult) []dupColumn {
	var out []dupColumn
	for _, c := range dupAllColumns {
		for _, g := range t.Groups {
			if !isZero(dupFields(g)[c.Key]) || c.Key == "records" || c.Key == "total" {
				out = append(out, c)
				break
			}
		}
	}
	return out
}

// dupCell marks up one field of a group.
func dupCell(r ref, g duplicates.Group, key string) template.HTML {
	v := dupFields(g)[key]
	switch x := v.(type) {
	case int64:
		return r.F(key, x, "int")
	case float64:
		return r.F(key, x, "f:2")
	case string:
		if decimalText.MatchString(x) {
			return r.F(key, x, "money")
		}
		return template.HTML(template.HTMLEscapeString(x))
	}
	return ""
}
