package countsql

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/workspace"
)

// bandVariant is one limits or ranges run counted both ways.
type bandVariant struct {
	name  string
	spec  Spec     // the band query's options (Engine, Table and Amount set by the test)
	local []string // limits: the local run's --by (names of spec.By)
}

func bandVariants() []bandVariant {
	ent := []Segment{{Name: "entity", Column: "entity"}}
	return []bandVariant{
		{name: "limits_round", spec: Spec{Test: TestLimits}},
		{name: "limits_given_entity", spec: Spec{Test: TestLimits, Limits: []float64{1000, 2500, 5000, 10000}, By: ent}, local: []string{"entity"}},
		{name: "limits_both_min0_entity_month", spec: Spec{Test: TestLimits, Width: 0.05, Signs: "both", Min: "0",
			By: []Segment{{Name: "entity", Column: "entity"}, {Name: "month", Column: "posted", Month: true}}}, local: []string{"entity", "month"}},
		// counted by entity, probed on the whole selection: the files'
		// segments are added together
		{name: "limits_both_where", spec: Spec{Test: TestLimits, Signs: "both", Min: "0.5", Where: "posted >= '2025-03-01'", By: ent}},
		{name: "ranges_log", spec: Spec{Test: TestRanges}},
		{name: "ranges_fixed", spec: Spec{Test: TestRanges, Layout: &ranges.Layout{Width: 500, To: 20000}}},
		{name: "ranges_fixed_open_negative", spec: Spec{Test: TestRanges, Layout: &ranges.Layout{Width: 1000, From: 100}, Signs: "negative", Where: "posted <> '2025-04-15'"}},
		{name: "ranges_log20_both_where", spec: Spec{Test: TestRanges, Layout: &ranges.Layout{PerDecade: 20}, Signs: "both", Min: "0.5", Where: "posted < '2025-12-01'"}},
		{name: "ranges_fixed_both_min0", spec: Spec{Test: TestRanges, Layout: &ranges.Layout{Width: 250, To: 5000}, Signs: "both", Min: "0"}},
	}
}

// bandLocal runs the variant's test on the workspace as leadline limits
// or leadline ranges does, as a JSON document with the drill commands
// left out (they differ by design: a command locally, the engine's query
// on counts).
func bandLocal(t *testing.T, ws *workspace.Workspace, v bandVariant) string {
	t.Helper()
	s := v.spec.WithDefaults()
	pop := population.Spec{Where: s.Where, Signs: s.Signs, Min: s.Min}
	ctx := context.Background()
	if s.Test == TestLimits {
		rep, err := limits.Run(ctx, ws, limits.Options{Spec: pop, Limits: s.Limits, Width: s.Width, By: v.local})
		if err != nil {
			t.Fatal(err)
		}
		if rep.Tested == 0 || (len(v.local) > 0 && rep.Segments < 2) {
			t.Fatalf("the local probe tested %d pairs in %d segments: the comparison would prove little", rep.Tested, rep.Segments)
		}
		return limitsDoc(t, rep)
	}
	rep, err := ranges.Run(ctx, ws, ranges.Options{Spec: pop, Layout: *s.Layout})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Scored == 0 {
		t.Fatalf("the local range table scored no band: the comparison would prove little")
	}
	return rangesDoc(t, rep)
}

func limitsDoc(t *testing.T, rep *limits.Report) string {
	c := *rep
	c.RunID, c.AmountType = 0, ""
	c.Rows = append([]limits.Row(nil), rep.Rows...)
	for i := range c.Rows {
		c.Rows[i].Drill = ""
	}
	b, err := json.MarshalIndent(&c, "", " ")
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func rangesDoc(t *testing.T, rep *ranges.Report) string {
	c := *rep
	c.RunID, c.AmountType = 0, ""
	c.Bands = append([]ranges.Row(nil), rep.Bands...)
	for i := range c.Bands {
		c.Bands[i].Drill = ""
	}
	c.Stretches = append([]ranges.Stretch{}, rep.Stretches...)
	for i := range c.Stretches {
		c.Stretches[i].Drill = ""
	}
	b, err := json.MarshalIndent(&c, "", " ")
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// bandCounts reads the count files as leadline limits --counts or ranges
// --counts does, and returns the document (drill queries left out) and
// the report's drill queries with the amounts each must list.
func bandCounts(t *testing.T, q string, files []string, v bandVariant) (string, []drillCheck) {
	t.Helper()
	qp := filepath.Join(t.TempDir(), "query.sql")
	if err := os.WriteFile(qp, []byte(q), 0o644); err != nil {
		t.Fatal(err)
	}
	var doc string
	var src *Source
	var drills []drillCheck
	if v.spec.Test == TestLimits {
		rep, s, err := Limits(qp, files, limits.Options{By: v.local})
		if err != nil {
			t.Fatal(err)
		}
		doc, src = limitsDoc(t, rep), s
		for _, r := range rep.Rows {
			drills = append(drills, drillCheck{r.Drill, r.Below})
		}
	} else {
		rep, s, err := Ranges(qp, files)
		if err != nil {
			t.Fatal(err)
		}
		doc, src = rangesDoc(t, rep), s
		spec, err := ReadQuery(q)
		if err != nil {
			t.Fatal(err)
		}
		for _, b := range rep.Bands {
			if b.Flagged {
				drills = append(drills, drillCheck{b.Drill, b.Count})
			}
			// every band's records, flagged or not
			rq, err := RecordsQuery(spec, b.From, b.To, nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			drills = append(drills, drillCheck{rq, b.Count})
		}
		for _, s := range rep.Stretches {
			drills = append(drills, drillCheck{s.Drill, s.Count})
		}
	}
	if len(src.Files) != len(files) || src.QuerySHA256 != SHA256([]byte(q)) {
		t.Fatalf("provenance %+v does not name the %d files and the query's hash", src, len(files))
	}
	return doc, drills
}

// drillCheck is a drill-down query and the records it must list.
type drillCheck struct {
	query string
	want  int64
}

// sameDocs asserts two documents are equal, showing where they part.
func sameDocs(t *testing.T, local, counts string) {
	t.Helper()
	if local == counts {
		return
	}
	a, b := strings.Split(local, "\n"), strings.Split(counts, "\n")
	for i := 0; i < len(a) && i < len(b); i++ {
		if a[i] != b[i] {
			lo := max(0, i-8)
			t.Fatalf("documents differ at line %d:\nlocal:\n%s\ncounts:\n%s", i+1, strings.Join(a[lo:min(len(a), i+3)], "\n"), strings.Join(b[lo:min(len(b), i+3)], "\n"))
		}
	}
	t.Fatalf("documents differ in length: %d lines locally, %d from counts", len(a), len(b))
}
