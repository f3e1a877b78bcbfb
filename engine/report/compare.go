package report

import (
	"encoding/json"
	"fmt"
	"html/template"

	"github.com/leadline/leadline/engine/compare"
)

// KindCompare is the run kind of leadline compare.
const KindCompare = compare.Kind

// CompareSection is one stored comparison of two count sets.
type CompareSection struct {
	Run      *Run
	Ref      ref
	Report   compare.Report
	Tests    []compareTestView
	Segments []compareSegmentsView
}

// compareSegmentsView is one test's segment comparison (compare --by):
// its flagged segments, up to compareBinRows.
type compareSegmentsView struct {
	S       compare.SegmentTest
	R       ref
	Flagged []compareSegmentView
}

type compareSegmentView struct {
	C compare.SegmentChange
	R ref
}

// compareTestView is one test of a comparison with the sources of its
// numbers, and its flagged bins (up to compareBinRows) for the table.
type compareTestView struct {
	T       compare.TestResult
	R       ref
	Changed []compareBinView
}

type compareBinView struct {
	B compare.BinChange
	R ref
}

// compareBinRows bounds the flagged bins shown per test.
const compareBinRows = 12

// addCompare adds a stored comparison.
func (m *Model) addCompare(r *Run, doc json.RawMessage, base string) error {
	var rep compare.Report
	if err := json.Unmarshal(doc, &rep); err != nil {
		return err
	}
	if rep.Kind != compare.Kind || len(rep.Tests) == 0 {
		return fmt.Errorf("no compared tests in the document")
	}
	s := &CompareSection{Run: r, Ref: srcRef(base, "", "compare"), Report: rep}
	for i, t := range rep.Tests {
		v := compareTestView{T: t, R: s.Ref.At("tests").AtField(i, t.Test)}
		lo, _ := t.Test.Bins()
		for _, bin := range t.Changed {
			b := t.Bins[bin-lo]
			if !b.Flagged || len(v.Changed) == compareBinRows {
				continue
			}
			v.Changed = append(v.Changed, compareBinView{B: b, R: v.R.At("bins").AtField(bin-lo, b.Label)})
		}
		s.Tests = append(s.Tests, v)
	}
	for i, st := range rep.Segments {
		v := compareSegmentsView{S: st, R: s.Ref.At("segments").AtField(i, st.Test)}
		for j, c := range st.Segments {
			if !c.Flagged || len(v.Flagged) == compareBinRows {
				continue
			}
			v.Flagged = append(v.Flagged, compareSegmentView{C: c, R: v.R.At("segments").AtField(j, c.Segment)})
		}
		s.Segments = append(s.Segments, v)
	}
	m.Compares = append(m.Compares, s)
	return nil
}

// compareTemplate renders the comparisons (section "compare").
const compareTemplate = `{{define "compare"}}
<p>Two bin-count tables set side by side. Per test: Pearson's chi-square test that both sides share one distribution over the bins (simulated from tables with the same totals when cells expect few amounts), the bins whose share changed beyond chance for the test as a whole (exact binomial p-value of each bin given its total, adjusted by Holm's step-down) and by a material amount, and each side's conformity to Benford's law.</p>
{{range .}}{{$R := .Ref}}{{$rep := .Report}}
<h3>{{$rep.Left.Label}} against {{$rep.Right.Label}}</h3>
{{template "runref" .Run}}
<table class="facts">
<tr><th>left</th><td>{{$rep.Left.Label}}: {{($R.At "left").F "tested" $rep.Left.Tested "int"}} amounts tested{{if $rep.Left.RunID}} (run {{$rep.Left.RunID}}){{end}}</td></tr>
<tr><th>right</th><td>{{$rep.Right.Label}}: {{($R.At "right").F "tested" $rep.Right.Tested "int"}} amounts tested{{if $rep.Right.RunID}} (run {{$rep.Right.RunID}}){{end}}</td></tr>
<tr><th>bin flag</th><td>Holm-adjusted p below {{($R.At "options").F "alpha" $rep.Options.Alpha "pct:0"}} and a change of at least {{($R.At "options").F "min_excess" $rep.Options.MinExcess "pct:0"}} of the bin's share</td></tr>
</table>
{{range $rep.Notes}}<p class="note">{{.}}</p>{{end}}
<table><thead><tr><th>test</th><th class="n">left N</th><th class="n">right N</th><th class="n">chi-square</th><th class="n">df</th><th class="n">p</th><th>p from</th><th class="n">bins flagged</th><th class="n">left MAD</th><th>left conformity</th><th class="n">right MAD</th><th>right conformity</th></tr></thead><tbody>
{{range .Tests}}{{$t := .T}}{{$r := .R}}{{$h := $r.At "homogeneity"}}<tr{{if $t.Flagged}} class="flagged"{{end}}><td>{{$t.Test.Name}}</td><td class="n">{{$r.F "left_n" $t.LeftN "int"}}</td><td class="n">{{$r.F "right_n" $t.RightN "int"}}</td><td class="n">{{$h.F "chi2" $t.Homogeneity.Chi2 "f:2"}}</td><td class="n">{{$h.F "df" $t.Homogeneity.DF "int"}}</td><td class="n">{{$h.F "p" $t.Homogeneity.P "p"}}</td><td>{{$t.Homogeneity.Method}}</td><td class="n">{{$r.F "flagged" $t.Flagged "int"}}</td><td class="n">{{if $t.Left}}{{($r.At "left").F "mad" $t.Left.MAD "f:5"}}{{end}}</td><td>{{if $t.Left}}{{conformity $t.Left.Conformity}} ({{$t.Left.Severity}}){{end}}</td><td class="n">{{if $t.Right}}{{($r.At "right").F "mad" $t.Right.MAD "f:5"}}{{end}}</td><td>{{if $t.Right}}{{conformity $t.Right.Conformity}} ({{$t.Right.Severity}}){{if $t.ConformityChanged}} <span class="tag flag">changed</span>{{end}}{{end}}</td></tr>
{{end}}</tbody></table>
{{range .Tests}}{{$t := .T}}{{if .Changed}}<h4>{{$t.Test.Name}}: bins whose share changed</h4>
<table><thead><tr><th>bin</th><th class="n">left</th><th class="n">right</th><th class="n">left share</th><th class="n">right share</th><th class="n">change</th><th class="n">z</th><th class="n">adjusted p</th></tr></thead><tbody>
{{range .Changed}}{{$b := .B}}{{$r := .R}}<tr class="flagged{{if le $b.Diff 0.0}} shortfall{{end}}"><td>{{$b.Label}}</td><td class="n">{{$r.F "left" $b.Left "int"}}</td><td class="n">{{$r.F "right" $b.Right "int"}}</td><td class="n">{{$r.F "left_share" $b.LeftShare "pct:2"}}</td><td class="n">{{$r.F "right_share" $b.RightShare "pct:2"}}</td><td class="n">{{$r.F "diff" $b.Diff "pct:2"}}</td><td class="n">{{$r.F "z" $b.Z "f:2"}}</td><td class="n">{{$r.F "p_adjusted" $b.PAdjusted "p"}}</td></tr>
{{end}}</tbody></table>
{{if lt (len .Changed) $t.Flagged}}<p class="more">{{len .Changed}} of {{$t.Flagged}} flagged bins shown; the run's JSON has every bin.</p>{{end}}{{end}}{{end}}
{{if .Segments}}<h4>Segments by {{range $i, $b := $rep.By}}{{if $i}}, {{end}}{{$b}}{{end}}</h4>
<p>Each segment with at least {{$R.F "min_segment" $rep.MinSegment "int"}} amounts on both sides, compared by its own homogeneity test; flagged when the p-value, adjusted by Holm's step-down over the segments, is below {{($R.At "options").F "alpha" $rep.Options.Alpha "pct:0"}} and a bin's share moved by the materiality margin.{{if $rep.SegmentsOneSide}} {{$rep.SegmentsOneSide}} segment(s) found on one side only are left out.{{end}}{{if $rep.SegmentsTooSmall}} {{$rep.SegmentsTooSmall}} segment(s) smaller on a side are left out.{{end}}</p>
<table><thead><tr><th>test</th><th class="n">segments compared</th><th class="n">changed</th></tr></thead><tbody>
{{range .Segments}}<tr{{if .S.Flagged}} class="flagged"{{end}}><td>{{.S.Test.Name}}</td><td class="n">{{.R.F "compared" .S.Compared "int"}}</td><td class="n">{{.R.F "flagged" .S.Flagged "int"}}</td></tr>
{{end}}</tbody></table>
{{range .Segments}}{{if .Flagged}}<h4>{{.S.Test.Name}}: segments whose distribution changed</h4>
<table><thead><tr><th>segment</th><th class="n">left N</th><th class="n">right N</th><th class="n">chi-square</th><th class="n">adjusted p</th><th class="n">material bins</th><th class="n">left MAD</th><th class="n">right MAD</th></tr></thead><tbody>
{{range .Flagged}}{{$c := .C}}{{$r := .R}}<tr class="flagged"><td>{{$c.Segment}}</td><td class="n">{{$r.F "left_n" $c.LeftN "int"}}</td><td class="n">{{$r.F "right_n" $c.RightN "int"}}</td><td class="n">{{($r.At "homogeneity").F "chi2" $c.Homogeneity.Chi2 "sf"}}</td><td class="n">{{$r.F "p_adjusted" $c.PAdjusted "p"}}</td><td class="n">{{$r.F "material_bins" $c.MaterialBins "int"}}</td><td class="n">{{$r.F "left_mad" $c.LeftMAD "sf"}}</td><td class="n">{{$r.F "right_mad" $c.RightMAD "sf"}}</td></tr>
{{end}}</tbody></table>{{if lt (len .Flagged) .S.Flagged}}<p class="more">{{len .Flagged}} of {{.S.Flagged}} changed segments shown; the run's JSON has every segment.</p>{{end}}{{end}}{{end}}{{end}}
{{end}}{{end}}`

// The section's template joins the page's at start-up.
var _ = template.Must(tmpl.New("compare").Parse(compareTemplate))
