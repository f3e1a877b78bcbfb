package report

import (
	"context"
	_ "embed"
	"encoding/json"
	"fmt"
	"html/template"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/workspace"
)

// The follow-up section: what the engagement team returned in the
// follow-up columns of the exports (leadline followup), by status, by
// flagged item and per record.

//go:embed followup.html.tmpl
var followupTemplate string

func init() {
	template.Must(tmpl.New("followup").Parse(followupTemplate))
}

// FollowupSection is the follow-up read back: a sentence of counts by
// status and one table per follow-up table (engine/followup.Tables).
type FollowupSection struct {
	Summary string
	Tables  []*GenericSection
}

// maxFollowupRows bounds the rows of a follow-up table shown; the
// workbook and tables/ of a pack run hold them all.
const maxFollowupRows = 200

// followupFromWorkspace reads the workspace's follow-up (its current
// state, which may be newer than any stored run).
func (m *Model) followupFromWorkspace(ctx context.Context, ws *workspace.Workspace) error {
	tables, st, err := followup.LoadTables(ctx, ws)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if st == nil {
		return nil
	}
	var docs []*node
	for _, t := range tables {
		b, err := json.Marshal(t)
		if err != nil {
			return err
		}
		n, err := parseOrdered(b)
		if err != nil {
			return err
		}
		docs = append(docs, n)
	}
	m.setFollowup(docs, func(i int) ref { return srcRef("workspace:"+tables[i].Name+"#", "", "") })
	return nil
}

// followupFromDoc reads the follow-up tables of a pack run's document.
func (m *Model) followupFromDoc(doc json.RawMessage, base string) error {
	root, err := parseOrdered(doc)
	if err != nil {
		return err
	}
	tables := root.get("tables")
	if tables == nil {
		return nil
	}
	var docs []*node
	var at []int
	for i, t := range tables.items {
		if sec := t.get("section"); sec != nil && sec.kind == 's' && sec.str == followup.Section {
			docs = append(docs, t)
			at = append(at, i)
		}
	}
	m.setFollowup(docs, func(i int) ref { return srcRef(base, "/tables/"+strconv.Itoa(at[i]), "") })
	return nil
}

func (m *Model) setFollowup(tables []*node, refOf func(i int) ref) {
	if len(tables) == 0 {
		return
	}
	s := &FollowupSection{}
	for i, t := range tables {
		s.Tables = append(s.Tables, tableFromOutput(nil, t, refOf(i), maxFollowupRows))
		if name := t.get("name"); name != nil && name.str == "followup_status" {
			s.Summary = statusSentence(t)
		}
	}
	m.Followup = s
}

// statusSentence says the records returned by status: "10 records
// returned: explained 1, exception 1, (not entered) 8".
func statusSentence(t *node) string {
	rows := t.get("rows")
	if rows == nil {
		return ""
	}
	var total int64
	var parts []string
	for _, r := range rows.items {
		if len(r.items) < 2 {
			continue
		}
		n, _ := r.items[1].num.Int64()
		total += n
		parts = append(parts, fmt.Sprintf("%s %d", r.items[0].str, n))
	}
	return fmt.Sprintf("%d record(s) returned with follow-up columns: %s.", total, strings.Join(parts, ", "))
}

// trimFollowupColumns leaves out of an extract's table the follow-up
// columns when every row shown has them empty: they are there for the
// team to fill in the CSV and the workbook, and would only widen the page.
func trimFollowupColumns(g *GenericSection) {
	for ti := range g.Tables {
		t := &g.Tables[ti]
		drop := map[int]bool{}
		for j, c := range t.Columns {
			for _, f := range followup.Columns {
				if c == humanLabel(f) {
					drop[j] = true
				}
			}
		}
		for _, r := range t.Rows {
			for j := range drop {
				if j < len(r) && r[j] != "" {
					delete(drop, j)
				}
			}
		}
		if len(drop) == 0 {
			continue
		}
		keep := func(n int) []int {
			var out []int
			for j := 0; j < n; j++ {
				if !drop[j] {
					out = append(out, j)
				}
			}
			return out
		}(len(t.Columns))
		var cols []string
		var num []bool
		for _, j := range keep {
			cols = append(cols, t.Columns[j])
			if j < len(t.Num) {
				num = append(num, t.Num[j])
			}
		}
		for ri, r := range t.Rows {
			var nr []template.HTML
			for _, j := range keep {
				if j < len(r) {
					nr = append(nr, r[j])
				}
			}
			t.Rows[ri] = nr
		}
		t.Columns, t.Num = cols, num
		g.Facts = append(g.Facts, Fact{Label: "follow-up columns", Value: template.HTML(template.HTMLEscapeString(
			"empty here; fill them in the CSV or the workbook sheet and read the file back with leadline followup"))})
	}
}
