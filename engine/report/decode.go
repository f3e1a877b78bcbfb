package report

import (
	"encoding/json"
	"fmt"
	"html/template"
	"sort"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/sensitivity"
)

// resolvePointer returns the JSON value at an RFC 6901 pointer.
func resolvePointer(raw json.RawMessage, ptr string) (json.RawMessage, error) {
	if ptr == "" {
		return raw, nil
	}
	if !strings.HasPrefix(ptr, "/") {
		return nil, fmt.Errorf("JSON pointer %q does not start with /", ptr)
	}
	cur := raw
	for _, tok := range strings.Split(ptr[1:], "/") {
		tok = strings.ReplaceAll(strings.ReplaceAll(tok, "~1", "/"), "~0", "~")
		trimmed := strings.TrimSpace(string(cur))
		switch {
		case strings.HasPrefix(trimmed, "{"):
			var obj map[string]json.RawMessage
			if err := json.Unmarshal(cur, &obj); err != nil {
				return nil, err
			}
			v, ok := obj[tok]
			if !ok {
				return nil, fmt.Errorf("JSON pointer %q: no key %q", ptr, tok)
			}
			cur = v
		case strings.HasPrefix(trimmed, "["):
			var arr []json.RawMessage
			if err := json.Unmarshal(cur, &arr); err != nil {
				return nil, err
			}
			i, err := strconv.Atoi(tok)
			if err != nil || i < 0 || i >= len(arr) {
				return nil, fmt.Errorf("JSON pointer %q: bad index %q", ptr, tok)
			}
			cur = arr[i]
		default:
			return nil, fmt.Errorf("JSON pointer %q: %q is not inside an object or array", ptr, tok)
		}
	}
	return cur, nil
}

// found is a JSON object found by findObjects, with its pointer.
type found struct {
	ptr   string
	depth int
	n     *node
}

// findObjects returns the objects of the document for which match holds,
// not looking inside a match, in document order.
func findObjects(n *node, ptr string, depth int, match func(*node) bool, out *[]found) {
	switch n.kind {
	case 'o':
		if match(n) {
			*out = append(*out, found{ptr, depth, n})
			return
		}
		for i, k := range n.keys {
			findObjects(n.vals[i], ptr+"/"+escapePointer(k), depth+1, match, out)
		}
	case 'a':
		for i, it := range n.items {
			findObjects(it, ptr+"/"+strconv.Itoa(i), depth+1, match, out)
		}
	}
}

func hasKeys(n *node, keys ...string) bool {
	for _, k := range keys {
		if n.get(k) == nil {
			return false
		}
	}
	return true
}

func isDigitResult(n *node) bool {
	t := n.get("test")
	return t != nil && t.kind == 's' && hasKeys(n, "bins", "mad", "n")
}

// shallowest keeps the matches at the smallest depth.
func shallowest(fs []found) []found {
	if len(fs) == 0 {
		return nil
	}
	min := fs[0].depth
	for _, f := range fs {
		if f.depth < min {
			min = f.depth
		}
	}
	var out []found
	for _, f := range fs {
		if f.depth == min {
			out = append(out, f)
		}
	}
	return out
}

// topFacts lists the scalars at the top of a document (and one level into
// plain objects) as facts.
func topFacts(root *node, r ref, skip ...string) []Fact {
	var facts []Fact
	sk := map[string]bool{}
	for _, s := range skip {
		sk[s] = true
	}
	for i, k := range root.keys {
		if sk[k] {
			continue
		}
		v := root.vals[i]
		if v.scalar() {
			facts = append(facts, Fact{Label: humanLabel(k), Value: v.cell(r, k)})
		} else if v.kind == 'o' {
			for j, k2 := range v.keys {
				if v.vals[j].scalar() {
					facts = append(facts, Fact{Label: humanLabel(k + " " + k2), Value: v.vals[j].cell(r.At(k), k2)})
				}
			}
		}
	}
	return facts
}

// addScan reads a battery run (battery.Report). A document of another
// shape still shows its digit tests: the shallowest digit-test results in it.
func (m *Model) addScan(r *Run, doc json.RawMessage, base string) error {
	var rep battery.Report
	if err := json.Unmarshal(doc, &rep); err == nil && len(rep.Tests) > 0 {
		sec := &DigitSection{Run: r}
		for i, res := range rep.Tests {
			sec.Tests = append(sec.Tests, DigitTest{Ref: srcRef(base, fmt.Sprintf("/tests/%d", i), string(res.Test)), Result: res, ID: fmt.Sprintf("r%d-%s", r.ID, res.Test)})
		}
		R := srcRef(base, "", "scan")
		X := R.At("exclusions")
		sec.PopLine = popLine(makePop(rep.Params.Spec, rep.Params.By, true))
		sec.Missing = m.missingTests(rep.Params, sec.pop)
		sec.Meta = []Fact{
			{"rows in the ledger", R.F("rows", rep.Rows, "int")},
			{"amounts tested", R.F("tested", rep.Tested, "int")},
		}
		if in := rep.Input; in != nil {
			I := R.At("input")
			sec.Meta = append(sec.Meta,
				Fact{"rows read by the loads", I.F("rows_read", in.RowsRead, "int")},
				Fact{"rows rejected at load", I.F("rows_rejected", in.RowsRejected, "int")},
				Fact{"share rejected at load", template.HTML(template.HTMLEscapeString(fmt.Sprintf("%.2f%%", 100*in.RejectedShare)))})
		}
		if rep.CurrencyNote != "" {
			sec.Meta = append(sec.Meta, Fact{"currencies", template.HTML(template.HTMLEscapeString(rep.CurrencyNote))})
		}
		sec.Meta = append(sec.Meta, []Fact{
			{"left out: zero", X.F("zero", rep.Exclusions.Zero, "int")},
			{"left out: of the other sign", X.F("other_sign", rep.Exclusions.OtherSign, "int")},
			{"left out: below the minimum", X.F("below_min", rep.Exclusions.BelowMin, "int")},
		}...)
		if rep.Exclusions.Filtered > 0 {
			sec.Meta = append(sec.Meta, Fact{"left out by the filter", X.F("filtered", rep.Exclusions.Filtered, "int")})
		}
		if rep.Duplication != nil {
			sec.Duplication = rep.Duplication
			sec.DupRef = R.At("duplication")
		}
		m.Digits = sec
		if rep.Segments != nil && len(rep.Segments.Rankings) > 0 {
			m.addSegments(r, rep.Segments, R.At("segments"))
			m.Segments.PopLine = sec.PopLine
		}
		return nil
	}
	root, err := parseOrdered(doc)
	if err != nil {
		return err
	}
	var fs []found
	findObjects(root, "", 0, isDigitResult, &fs)
	top := shallowest(fs)
	if len(top) == 0 {
		return fmt.Errorf("no digit-test results in the scan")
	}
	sec := &DigitSection{Run: r}
	for _, f := range top {
		raw, err := resolvePointer(doc, f.ptr)
		if err != nil {
			return err
		}
		var res benford.Result
		if err := json.Unmarshal(raw, &res); err != nil {
			return fmt.Errorf("digit test at %s: %w", f.ptr, err)
		}
		sec.Tests = append(sec.Tests, DigitTest{Ref: srcRef(base, f.ptr, string(res.Test)), Result: res, ID: fmt.Sprintf("r%d-%s", r.ID, res.Test)})
	}
	sort.SliceStable(sec.Tests, func(i, j int) bool { return testOrder(sec.Tests[i].Result.Test) < testOrder(sec.Tests[j].Result.Test) })
	m.Digits = sec
	return nil
}

func testOrder(t benford.Test) int {
	for i, x := range benford.AllTests() {
		if x == t {
			return i
		}
	}
	return len(benford.AllTests())
}

// maxSegmentRows bounds the segment ranking shown.
const maxSegmentRows = 40

// addSegments adds the segment ranking of one segmentation of a battery
// run: the first-two digits ranking when it was run, else the first.
func (m *Model) addSegments(r *Run, segs *battery.Segments, R ref) {
	if len(segs.Rankings) == 0 {
		return
	}
	pick := 0
	for i, rk := range segs.Rankings {
		if rk.Test == benford.FirstTwo {
			pick = i
		}
	}
	rk := segs.Rankings[pick]
	g := &SegmentGroup{Ref: R, RankRef: R.At("rankings").AtField(pick, rk.Test), Segments: *segs, Ranking: rk}
	by := strings.Join(segs.By, "+")
	rr := g.RankRef.At("rows")
	for i, row := range rk.Rows {
		if i == maxSegmentRows {
			g.Hidden = len(rk.Rows) - i
			break
		}
		g.Rows = append(g.Rows, SegmentRow{Ref: ref{Src: rr.At(i).Src, Field: fmt.Sprintf("segments.%s.%s.%s", by, rk.Test, row.Segment)}, Row: row})
	}
	for i, o := range segs.Rankings {
		if i != pick {
			g.Others = append(g.Others, o.Test.Name())
		}
	}
	if m.Segments == nil || m.Segments.Run != r {
		m.Segments = &SegmentSection{Run: r}
	}
	for _, old := range m.Segments.Groups {
		if strings.Join(old.Segments.By, "+") == by {
			return // already shown (a pack's first segmentation is in both documents)
		}
	}
	m.Segments.Groups = append(m.Segments.Groups, g)
}

// addSegmentations adds the rankings of a pack's further segmentations
// (its battery_segments result: segmentation name -> battery.Segments).
func (m *Model) addSegmentations(r *Run, doc json.RawMessage, base string) error {
	var all map[string]*battery.Segments
	if err := json.Unmarshal(doc, &all); err != nil {
		return err
	}
	for _, k := range sortedKeys(all) {
		if all[k] != nil {
			m.addSegments(r, all[k], srcRef(base, "/"+escapePointer(k), "segments"))
		}
	}
	return nil
}

// maxLimitRows bounds the limit table.
const maxLimitRows = 30

// addLimits reads a limit-probe run (limits.Report).
func (m *Model) addLimits(r *Run, doc json.RawMessage, base string) error {
	var rep limits.Report
	if err := json.Unmarshal(doc, &rep); err != nil {
		return err
	}
	sec := &LimitSection{Run: r, Ref: srcRef(base, "", "limits"), Report: rep, PopLine: popLine(makePop(rep.Population, rep.By, true))}
	var tested []LimitRow
	for i, row := range rep.Rows {
		seg := segmentLabel(row.Segment)
		lr := LimitRow{Ref: srcRef(base, fmt.Sprintf("/rows/%d", i), fmt.Sprintf("limits.%s.%s", seg, strconv.FormatFloat(row.Limit, 'f', -1, 64))), Segment: seg, Row: row}
		lr.Drill = row.Drill
		if lr.Drill == "" && row.Range != "" {
			lr.Drill = ranges.DrillCommand(m.Workspace, row.Range, rep.Population, segmentArgs(row.Segment))
		}
		if row.Status == limits.StatusTested {
			tested = append(tested, lr)
		}
	}
	sort.SliceStable(tested, func(i, j int) bool { return tested[i].Row.Rank < tested[j].Row.Rank })
	if len(tested) > maxLimitRows {
		tested = tested[:maxLimitRows]
	}
	sec.Rows = tested
	sec.Hidden = len(rep.Rows) - len(tested)
	sec.Chart = template.HTML(limitChart(fmt.Sprintf("r%d-limits", r.ID), tested))
	m.Limits = sec
	return nil
}

// segmentLabel writes a limit row's segment: "all" for the whole
// selection, else "column = value" pairs.
func segmentLabel(seg map[string]*string) string {
	if seg == nil {
		return "all"
	}
	var parts []string
	for _, k := range sortedKeys(seg) {
		v := "(blank)"
		if seg[k] != nil {
			v = *seg[k]
		}
		parts = append(parts, k+" = "+v)
	}
	return strings.Join(parts, ", ")
}

// segmentArgs writes a segment as the drill command's COLUMN=VALUE
// arguments (a blank value as COLUMN=).
func segmentArgs(seg map[string]*string) []string {
	var out []string
	for _, k := range sortedKeys(seg) {
		v := ""
		if seg[k] != nil {
			v = *seg[k]
		}
		out = append(out, k+"="+v)
	}
	return out
}

// addRanges reads an amount-range run (ranges.Report).
func (m *Model) addRanges(r *Run, doc json.RawMessage, base string) error {
	var rep ranges.Report
	if err := json.Unmarshal(doc, &rep); err != nil {
		return err
	}
	if len(rep.Bands) == 0 {
		return fmt.Errorf("no bands in the run")
	}
	sec := &RangeSection{Run: r, Ref: srcRef(base, "", "ranges"), Report: rep, PopLine: popLine(makePop(rep.Population, nil, false))}
	for i, b := range rep.Bands {
		row := RangeRow{Ref: srcRef(base, fmt.Sprintf("/bands/%d", i), "ranges."+strconv.FormatFloat(b.From, 'f', -1, 64)), Row: b}
		sec.Bands = append(sec.Bands, row)
		if b.Flagged {
			sec.Flagged = append(sec.Flagged, row)
		}
	}
	for _, st := range rep.Stretches {
		d := st.Drill
		if d == "" && st.Range != "" {
			d = ranges.DrillCommand(m.Workspace, st.Range, rep.Population, nil)
		}
		sec.Drills = append(sec.Drills, d)
	}
	sec.Chart = template.HTML(rangeChart(fmt.Sprintf("r%d-ranges", r.ID), sec.Bands))
	if st := rep.Segments; st != nil {
		sec.SegRef = sec.Ref.At("segments")
		sec.SegBy = strings.Join(st.By, ", ")
		for i, sr := range st.Rows {
			if i == MaxRangeSegments {
				break
			}
			row := RangeSegment{Ref: sec.SegRef.At("rows").AtField(i, sr.Label), Row: sr}
			if len(sr.Stretches) > 0 {
				s := sr.Stretches[0]
				row.Drill = s.Drill
				if row.Drill == "" && s.Range != "" {
					row.Drill = ranges.DrillCommand(m.Workspace, s.Range, rep.Population, segmentArgs(sr.Segment))
				}
			}
			sec.Segments = append(sec.Segments, row)
		}
	}
	m.Ranges = sec
	return nil
}

// addDuplicates reads a duplicates run.
func (m *Model) addDuplicates(r *Run, doc json.RawMessage, base string) error {
	var res duplicates.Result
	if err := json.Unmarshal(doc, &res); err != nil {
		return err
	}
	if len(res.Tests) == 0 {
		return fmt.Errorf("no duplicate tests in the run")
	}
	m.Duplicates = &DuplicateSection{Run: r, Ref: srcRef(base, "", "duplicates"), Result: res, PopLine: popLine(makePop(res.Options.Spec, nil, false))}
	if m.Workspace != "" && m.Workspace != ranges.DefaultWorkspace {
		m.Duplicates.DB = "--db " + ranges.ShellQuote(m.Workspace) + " "
	}
	return nil
}

// addSensitivity reads a sensitivity study (sensitivity.Result).
func (m *Model) addSensitivity(r *Run, doc json.RawMessage, base string) error {
	var res sensitivity.Result
	if err := json.Unmarshal(doc, &res); err != nil {
		return err
	}
	if len(res.Rows) == 0 || len(res.Rates) == 0 {
		return fmt.Errorf("no signals in the study")
	}
	o := res.Options
	what := o.Kind
	switch o.Kind {
	case sensitivity.Uniform:
		what = fmt.Sprintf("amounts uniform between %s and %s", compactAmount(o.From), compactAmount(o.To))
	case sensitivity.BelowLimit:
		what = fmt.Sprintf("amounts uniform just below %s (within %s%%)", compactAmount(o.Limit), trimZeros(fmt.Sprintf("%.2f", o.Width*100)))
	case sensitivity.Repeated:
		what = fmt.Sprintf("the amount %s again and again", compactAmount(o.Amount))
	case sensitivity.Rounded:
		what = "amounts rounded to whole hundreds"
	}
	m.Sensitivity = append(m.Sensitivity, &SensitivitySection{Run: r, Ref: srcRef(base, "", "sensitivity"), Result: res, What: what})
	return nil
}

// addDrill adds a drill-down extract, shown as stored.
func (m *Model) addDrill(r *Run, doc json.RawMessage, base, title string) error {
	g, err := genericFrom(r, title, doc, srcRef(base, "", fmt.Sprintf("drill.%d", r.ID)))
	if err != nil {
		return err
	}
	if m.Drills == nil {
		m.Drills = &DrillSection{}
	}
	m.Drills.Extracts = append(m.Drills.Extracts, g)
	return nil
}

func popLine(p runPop) PopLine { return PopLine{Pop: p.words(), pop: p} }

// missingTests lists the digit tests (and number duplication) the battery
// did not run, each with the scan command that runs it on the same
// population.
func (m *Model) missingTests(o battery.Options, pop runPop) []MissingTest {
	if len(o.Tests) == 0 && !o.Duplication {
		return nil // every test ran
	}
	ran := map[string]bool{}
	for _, t := range o.Tests {
		ran[string(t)] = true
	}
	if o.Duplication {
		ran["duplication"] = true
	}
	var out []MissingTest
	add := func(key, name string) {
		if !ran[key] {
			out = append(out, MissingTest{Name: name, Cmd: "leadline scan " + dbArg(m.Workspace) + "--tests " + key + pop.flags(KindScan)})
		}
	}
	for _, t := range benford.AllTests() {
		add(string(t), capitalise(t.Name()))
	}
	add("duplication", "Number duplication")
	return out
}
