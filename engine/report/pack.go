package report

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"html/template"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/reconcile"
)

// FileName is the report's name inside a pack run's output folder.
const FileName = "report.html"

// Every pack run writes the report and adds the digit charts to its
// workbook: the report registers itself with engine/output. A binary gets
// this by importing engine/report (the leadline command does).
func init() {
	output.Register(output.WriterFunc{Label: "HTML report", Fn: writePackReport})
	output.RegisterXLSXHook(digitChartsHook)
}

// writePackReport is the output writer: it builds the report from the run
// in memory (its steps are not all stored as runs of their own when the
// writers run) and writes DIR/report.html.
func writePackReport(ctx context.Context, dir string, run *output.Run) ([]string, error) {
	m, err := FromRun(run, Options{})
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		return nil, err
	}
	if err := os.WriteFile(filepath.Join(dir, FileName), buf.Bytes(), 0o644); err != nil {
		return nil, fmt.Errorf("writing the report: %w", err)
	}
	return []string{FileName}, nil
}

// packDocBase is the source of a pack run's numbers in its output folder.
const packDocBase = output.ResultsFile + "#"

// FromRun assembles the report model of a pack run from the run itself (as
// written to results.json and manifest.json). Numbers carry their place in
// results.json as their source ("results.json#/results/limits/rows/0/below").
func FromRun(run *output.Run, opts Options) (*Model, error) {
	var doc bytes.Buffer
	if err := output.WriteJSON(&doc, run); err != nil {
		return nil, err
	}
	title := opts.Title
	if title == "" {
		title = "leadline report"
		if run.Pack.Name != "" {
			title += ": " + run.Pack.Name
		}
	}
	m := &Model{Title: title, GeneratedAt: opts.Now, absent: map[string]string{}}
	r := &Run{Kind: KindPack}
	if man := run.Manifest; man != nil {
		m.ToolVersion, m.DuckDB, m.Workspace = man.ToolVersion, man.DuckDBVersion, man.Workspace
		r.ID, r.StartedAt, r.FinishedAt, r.ToolVersion = man.Run.RunID, man.Run.StartedAt, man.Run.FinishedAt, man.ToolVersion
		if m.GeneratedAt.IsZero() {
			m.GeneratedAt = man.Run.FinishedAt
		}
		if p, err := json.Marshal(man.Parameters); err == nil {
			r.Params = p
		}
		mdoc, err := json.Marshal(man)
		if err != nil {
			return nil, err
		}
		ms, err := manifestFrom(nil, mdoc, output.ManifestFile+"#", "The files of the output folder, with their sizes and SHA-256, are listed in manifest.json, written after this report.")
		if err != nil {
			return nil, err
		}
		m.Manifest = ms
	}
	if m.GeneratedAt.IsZero() {
		m.GeneratedAt = time.Now()
	}
	if len(r.Params) == 0 {
		r.Params = json.RawMessage(`{}`)
	}
	r.Result = doc.Bytes()
	m.Runs = []Run{*r}
	if err := m.addPackDoc(r, r.Result, packDocBase); err != nil {
		return nil, err
	}
	if err := m.completenessFromTables(r.Result, packDocBase); err != nil {
		return nil, err
	}
	if err := m.followupFromDoc(r.Result, packDocBase); err != nil {
		return nil, err
	}
	m.Set = &RunSet{Name: SetPack, How: "this pack run"}
	m.explainAbsent()
	return m, nil
}

// addPackDoc reads a pack run's document (output.Run as JSON): each step's
// result under "results", the key findings, the extract and check tables.
func (m *Model) addPackDoc(r *Run, doc json.RawMessage, base string) error {
	root, err := parseOrdered(doc)
	if err != nil {
		return err
	}
	if p := root.get("pack"); p != nil {
		for _, k := range []string{"name", "client", "period", "file", "sha256"} {
			if v := p.get(k); v != nil && v.kind == 's' && v.str != "" {
				m.Pack = append(m.Pack, Fact{Label: k, Value: template.HTML(template.HTMLEscapeString(v.str))})
			}
		}
	}
	if s := root.get("summary"); s != nil {
		if f := s.get("findings"); f != nil {
			for _, it := range f.items {
				if t := it.get("text"); t != nil && t.kind == 's' {
					m.Findings = append(m.Findings, t.str)
				}
			}
		}
		if n := s.get("notes"); n != nil {
			for _, it := range n.items {
				if it.kind == 's' {
					m.Notes = append(m.Notes, it.str)
				}
			}
		}
	}
	if strings.HasPrefix(base, "run/") && m.Manifest == nil {
		// A stored pack run: its manifest is in the output folder.
		var params struct {
			Out string `json:"out"`
		}
		if json.Unmarshal(r.Params, &params) == nil && params.Out != "" {
			if b, err := os.ReadFile(filepath.Join(params.Out, output.ManifestFile)); err == nil {
				ms, err := manifestFrom(r, b, output.ManifestFile+"#", "Read from "+filepath.Join(params.Out, output.ManifestFile)+".")
				if err == nil {
					m.Manifest = ms
				}
			}
		}
	}
	if res := root.get("results"); res != nil {
		for i, key := range res.keys {
			v := res.vals[i]
			kb := base + "/results/" + escapePointer(key)
			if e := v.get("error"); e != nil && e.kind == 's' {
				m.Notes = append(m.Notes, fmt.Sprintf("Step %s did not complete: %s", key, e.str))
				continue
			}
			raw, err := resolvePointer(doc, "/results/"+escapePointer(key))
			if err != nil {
				return err
			}
			var stepErr error
			switch key {
			case "completeness", "extracts", "checks", "journal", "reconciliation":
				// Shown from the tables below (completeness: from the
				// workspace, or from the tables for a pack's own report).
			case "limits":
				stepErr = m.addLimits(r, raw, kb)
			case "ranges":
				stepErr = m.addRanges(r, raw, kb)
			case "duplicates":
				stepErr = m.addDuplicates(r, raw, kb)
			case "battery_segments":
				stepErr = m.addSegmentations(r, raw, kb)
			default:
				var fs []found
				findObjects(v, "", 0, isDigitResult, &fs)
				if len(fs) > 0 {
					stepErr = m.addScan(r, raw, kb)
				} else {
					g, err := genericFrom(r, "Step "+key, raw, srcRef(kb, "", key))
					if err != nil {
						return err
					}
					m.Others = append(m.Others, g)
				}
			}
			if stepErr != nil {
				m.Notes = append(m.Notes, fmt.Sprintf("The result of step %s could not be read for the report: %v", key, stepErr))
			}
		}
	}
	// Extract and check tables; the checks' SQL is in the pack's
	// parameters.
	checkDefs := packChecks(r.Params)
	if tables := root.get("tables"); tables != nil {
		for i, t := range tables.items {
			sec := t.get("section")
			if sec == nil || sec.kind != 's' || (sec.str != "extract" && sec.str != "check") {
				continue
			}
			g := tableFromOutput(r, t, srcRef(base, "/tables/"+strconv.Itoa(i), ""), maxExtractRows)
			if sec.str == "extract" {
				trimFollowupColumns(g)
				if m.Drills == nil {
					m.Drills = &DrillSection{}
				}
				m.Drills.Extracts = append(m.Drills.Extracts, g)
			} else {
				name := ""
				if n := t.get("name"); n != nil {
					name = strings.TrimPrefix(n.str, "check_")
				}
				c := &CheckSection{Run: r, Name: name, Table: g}
				if def, ok := checkDefs[name]; ok {
					c.SQL = strings.TrimSpace(def.SQL)
					for _, k := range sortedKeys(def.Params) {
						c.Params = append(c.Params, Fact{Label: "$" + k, Value: template.HTML(template.HTMLEscapeString(fmt.Sprint(def.Params[k])))})
					}
				}
				m.Checks = append(m.Checks, c)
			}
		}
	}
	return nil
}

// checkDef is a journal-entry check as the pack defines it.
type checkDef struct {
	Name   string         `json:"name"`
	SQL    string         `json:"sql"`
	Params map[string]any `json:"params"`
}

// packChecks reads the checks' definitions from a pack run's parameters
// (stored: {"parameters": {"checks": [...]}}; in memory: {"checks": [...]}).
func packChecks(params json.RawMessage) map[string]checkDef {
	var doc struct {
		Checks     []checkDef `json:"checks"`
		Parameters struct {
			Checks []checkDef `json:"checks"`
		} `json:"parameters"`
	}
	out := map[string]checkDef{}
	if json.Unmarshal(params, &doc) != nil {
		return out
	}
	for _, c := range append(doc.Checks, doc.Parameters.Checks...) {
		out[c.Name] = c
	}
	return out
}

// maxExtractRows bounds the rows of an extract or check shown.
const maxExtractRows = 25

// tableFromOutput renders one output.Table (as JSON) as a generic section.
func tableFromOutput(r *Run, t *node, base ref, maxRows int) *GenericSection {
	str := func(k string) string {
		if v := t.get(k); v != nil && v.kind == 's' {
			return v.str
		}
		return ""
	}
	g := &GenericSection{Run: r, Title: str("title")}
	if g.Title == "" {
		g.Title = str("name")
	}
	if n := str("note"); n != "" {
		g.Facts = append(g.Facts, Fact{Label: "note", Value: template.HTML(template.HTMLEscapeString(n))})
	}
	if v := t.get("rows_total"); v != nil && v.kind == 'n' {
		g.Facts = append(g.Facts, Fact{Label: "rows", Value: v.cell(base, "rows_total")})
	}
	gt := GenericTable{Title: str("name")}
	var names, kinds []string
	if cols := t.get("columns"); cols != nil {
		for _, c := range cols.items {
			name, kind := "", ""
			if n := c.get("name"); n != nil {
				name = n.str
			}
			if k := c.get("kind"); k != nil {
				kind = k.str
			}
			names, kinds = append(names, name), append(kinds, kind)
			gt.Columns = append(gt.Columns, humanLabel(name))
			gt.Num = append(gt.Num, kind == "count" || kind == "money" || kind == "number" || kind == "percent" || kind == "proportion")
		}
	}
	if rows := t.get("rows"); rows != nil {
		rr := base.At("rows")
		for i, row := range rows.items {
			if i == maxRows {
				gt.More = len(rows.items) - i
				break
			}
			cells := make([]template.HTML, len(row.items))
			for j, c := range row.items {
				if c.scalar() {
					name, kind := "", ""
					if j < len(names) {
						name, kind = names[j], kinds[j]
					}
					cells[j] = c.typedCell(rr.At(i), strconv.Itoa(j), name, kind)
				}
			}
			gt.Rows = append(gt.Rows, cells)
		}
	}
	g.Tables = []GenericTable{gt}
	return g
}

// completenessFromTables fills the completeness section of a pack run's
// report from its inputs, rejects and entities tables.
func (m *Model) completenessFromTables(doc json.RawMessage, base string) error {
	root, err := parseOrdered(doc)
	if err != nil {
		return err
	}
	tables := root.get("tables")
	if tables == nil {
		return nil
	}
	c := &Completeness{Balanced: true}
	found := false
	for ti, t := range tables.items {
		name := t.get("name")
		if name == nil {
			continue
		}
		var cols []string
		if cs := t.get("columns"); cs != nil {
			for _, col := range cs.items {
				if n := col.get("name"); n != nil {
					cols = append(cols, n.str)
				}
			}
		}
		rows := t.get("rows")
		if rows == nil {
			continue
		}
		tb := fmt.Sprintf("%s/tables/%d/rows", base, ti)
		for ri, row := range rows.items {
			get := func(col string) *node {
				for j, c := range cols {
					if c == col && j < len(row.items) {
						return row.items[j]
					}
				}
				return &node{kind: 'z'}
			}
			cell := func(col string) string {
				for j, c := range cols {
					if c == col {
						return fmt.Sprintf("%s/%d/%d", tb, ri, j)
					}
				}
				return ""
			}
			switch name.str {
			case "inputs":
				found = true
				f := FileRow{
					Source: get("source").str, Name: get("file").str, Format: get("format").str, SHA256: get("sha256").str,
					SizeBytes: nodeInt(get("size_bytes")), RowsRead: nodeInt(get("rows_read")), RowsLoaded: nodeInt(get("rows_loaded")),
					RowsRejected: nodeInt(get("rows_rejected")), Positive: nodeText(get("sum_positive")), Negative: nodeText(get("sum_negative")), Net: nodeText(get("net")),
					src: cell,
				}
				f.Balanced = f.RowsRead == f.RowsLoaded+f.RowsRejected
				if !f.Balanced {
					c.Balanced = false
				}
				c.RowsRead += f.RowsRead
				c.RowsLoaded += f.RowsLoaded
				c.RowsRejected += f.RowsRejected
				f.Path = f.Name
				c.Files = append(c.Files, f)
			case "rejects":
				c.Reasons = append(c.Reasons, ReasonRow{File: get("file").str, Reason: get("reason").str, Rows: nodeInt(get("rows")), FirstLine: nodeInt(get("first_line")),
					src: cell})
			case "input_currencies":
				c.Currencies = append(c.Currencies, currencyRowFromTable(get, cell))
			case "entities":
				c.Entities = append(c.Entities, EntityRow{Entity: get("entity").str, Currency: get("currency").str, Rows: nodeInt(get("rows")), Positive: nodeText(get("sum_positive")),
					Negative: nodeText(get("sum_negative")), Net: nodeText(get("net")), src: cell})
			}
		}
	}
	if found {
		c.totals = srcRef(base, "/summary/completeness", "total")
		m.Completeness = c
		if raw, err := resolvePointer(doc, "/results/journal"); err == nil {
			c.Journal = &journal.Summary{}
			if err := json.Unmarshal(raw, c.Journal); err != nil {
				return fmt.Errorf("reading the journal checks: %w", err)
			}
		}
		if raw, err := resolvePointer(doc, "/results/reconciliation"); err == nil {
			c.Reconciliation = &reconcile.Result{}
			if err := json.Unmarshal(raw, c.Reconciliation); err != nil {
				return fmt.Errorf("reading the reconciliation: %w", err)
			}
		}
	}
	return nil
}

func nodeInt(n *node) int64 {
	if n == nil || n.kind != 'n' {
		return 0
	}
	v, _ := n.num.Int64()
	return v
}

func nodeText(n *node) string {
	if n == nil {
		return ""
	}
	switch n.kind {
	case 's':
		return n.str
	case 'n':
		return n.num.String()
	}
	return ""
}
