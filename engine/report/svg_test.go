package report

import (
	"encoding/xml"
	"io"
	"math"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/ranges"
)

// svgElem is an element of a chart, read back with encoding/xml (the
// charts are SVG, so they must be well-formed XML).
type svgElem struct {
	name  string
	attrs map[string]string
}

func (e svgElem) class(c string) bool {
	for _, x := range strings.Fields(e.attrs["class"]) {
		if x == c {
			return true
		}
	}
	return false
}

func readSVG(t *testing.T, s string) []svgElem {
	t.Helper()
	dec := xml.NewDecoder(strings.NewReader(s))
	var out []svgElem
	depth := 0
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("chart is not well-formed XML: %v", err)
		}
		switch x := tok.(type) {
		case xml.StartElement:
			depth++
			e := svgElem{name: x.Name.Local, attrs: map[string]string{}}
			for _, a := range x.Attr {
				e.attrs[a.Name.Local] = a.Value
			}
			out = append(out, e)
		case xml.EndElement:
			depth--
		}
	}
	if depth != 0 || len(out) == 0 || out[0].name != "svg" {
		t.Fatalf("chart is not one <svg> element")
	}
	return out
}

func count(es []svgElem, pred func(svgElem) bool) int {
	n := 0
	for _, e := range es {
		if pred(e) {
			n++
		}
	}
	return n
}

// counts with planted surpluses: bins of the first-two digits test drawn
// to Benford's proportions for N = 20,000, then bins 48 and 49 inflated (a
// pile below 5,000) and bins 50-52 drained.
func plantedFirstTwo() []int64 {
	exp := benford.Expected(benford.FirstTwo)
	c := make([]int64, len(exp))
	for i, p := range exp {
		c[i] = int64(math.Round(20000 * p))
	}
	c[48-10] += 150
	c[49-10] += 220
	c[50-10] -= 60
	c[51-10] -= 50
	c[52-10] -= 40
	return c
}

func TestDigitChartMarks(t *testing.T) {
	for _, tc := range []struct {
		test   benford.Test
		counts []int64
	}{
		{benford.FirstDigit, []int64{4000, 1500, 1200, 850, 750, 650, 520, 480, 440}},
		{benford.SecondDigit, []int64{1200, 1130, 1090, 1040, 1300, 970, 940, 910, 880, 700}},
		{benford.FirstTwo, plantedFirstTwo()},
		{benford.LastTwo, func() []int64 {
			c := make([]int64, 100)
			for i := range c {
				c[i] = 100
			}
			c[0], c[50] = 260, 180
			return c
		}()},
	} {
		r, err := benford.Analyze(tc.test, tc.counts)
		if err != nil {
			t.Fatal(err)
		}
		if r.Flagged == 0 {
			t.Fatalf("%s: the test data should flag some bins", tc.test)
		}
		stretches := stretchesOf(&r)
		es := readSVG(t, digitChart("c-"+string(tc.test), &r, stretches))
		k := len(r.Bins)
		bars := count(es, func(e svgElem) bool { return e.name == "rect" && e.class("bar") })
		flagged := count(es, func(e svgElem) bool { return e.name == "rect" && e.class("flagged") })
		markers := count(es, func(e svgElem) bool { return e.class("flag-marker") })
		points := count(es, func(e svgElem) bool { return e.class("exp-pt") })
		if bars != k || flagged != r.Flagged || markers != r.Flagged || points != k {
			t.Errorf("%s: %d bars, %d flagged, %d markers, %d expected points; want %d, %d, %d, %d",
				tc.test, bars, flagged, markers, points, k, r.Flagged, r.Flagged, k)
		}
		// Bars in bin order, flagged exactly where the result says.
		i := 0
		for _, e := range es {
			if e.name == "rect" && e.class("bar") {
				if e.attrs["data-bin"] != r.Bins[i].Label || e.class("flagged") != r.Bins[i].Flagged {
					t.Errorf("%s: bar %d: bin %q flagged %v; want %q %v", tc.test, i, e.attrs["data-bin"], e.class("flagged"), r.Bins[i].Label, r.Bins[i].Flagged)
				}
				i++
			}
		}
		for _, c := range []string{"bounds-band", "bound-upper", "bound-lower", "expected"} {
			if count(es, func(e svgElem) bool { return e.class(c) }) != 1 {
				t.Errorf("%s: want one %s", tc.test, c)
			}
		}
		// One bound segment per bin, above and below.
		for _, e := range es {
			if (e.class("bound-upper") || e.class("bound-lower") || e.class("bounds-band")) && strings.Count(e.attrs["d"], "M") != k {
				t.Errorf("%s: %s has %d segments, want %d", tc.test, e.attrs["class"], strings.Count(e.attrs["d"], "M"), k)
			}
		}
		if got := count(es, func(e svgElem) bool { return e.class("stretch") }); got != len(stretches) {
			t.Errorf("%s: %d stretches shaded, want %d", tc.test, got, len(stretches))
		}
		// Accessible name and description.
		if count(es, func(e svgElem) bool { return e.name == "title" }) < k+1 || count(es, func(e svgElem) bool { return e.name == "desc" }) != 1 || es[0].attrs["role"] != "img" {
			t.Errorf("%s: the chart lacks its title, description or per-bar titles", tc.test)
		}
	}
}

// The planted pile below 5,000 shows as a shaded surplus stretch over bins
// 48-49 on the first-two chart and in the runs chart.
func TestRunsStretchesShaded(t *testing.T) {
	r, err := benford.Analyze(benford.FirstTwo, plantedFirstTwo())
	if err != nil {
		t.Fatal(err)
	}
	var found bool
	for _, s := range notableStretches(r.Runs) {
		if s.S.Kind == benford.Surplus && s.S.From <= 48 && s.S.To >= 49 {
			found = true
		}
	}
	if !found {
		t.Fatalf("the planted surplus at 48-49 is not among the notable stretches: %+v", r.Runs.Stretches[:3])
	}
	for _, svg := range []string{digitChart("a", &r, stretchesOf(&r)), diffChart("b", &r, stretchesOf(&r))} {
		es := readSVG(t, svg)
		ok := false
		for _, e := range es {
			if e.class("stretch") && e.class("surplus") && e.attrs["data-from"] <= "48" && e.attrs["data-to"] >= "49" {
				ok = true
			}
		}
		if !ok {
			t.Error("no shaded surplus stretch over bins 48-49")
		}
	}
	es := readSVG(t, diffChart("b", &r, nil))
	over := count(es, func(e svgElem) bool { return e.class("bar") && e.class("over") })
	under := count(es, func(e svgElem) bool { return e.class("bar") && e.class("under") })
	if over != r.Runs.Overs || under != r.Runs.Unders {
		t.Errorf("runs chart: %d over, %d under; want %d, %d", over, under, r.Runs.Overs, r.Runs.Unders)
	}
}

func TestRangeAndLimitCharts(t *testing.T) {
	var rows []RangeRow
	for i := 0; i < 30; i++ {
		b := benford.Band{From: float64(100 * (i + 1)), To: float64(100 * (i + 2)), Count: int64(300 - 5*i), Expected: float64(300 - 5*i), Scored: i > 0}
		if i == 12 {
			b.Count, b.Flagged = 520, true
		}
		rows = append(rows, RangeRow{Row: ranges.Row{Band: b}})
	}
	es := readSVG(t, rangeChart("rg", rows))
	if n := count(es, func(e svgElem) bool { return e.class("bar") }); n != 30 {
		t.Errorf("%d bars, want 30", n)
	}
	if n := count(es, func(e svgElem) bool { return e.class("flag-marker") }); n != 1 {
		t.Errorf("%d markers, want 1", n)
	}
	// The unscored first band breaks the expected line: 29 points.
	if n := count(es, func(e svgElem) bool { return e.class("exp-pt") }); n != 29 {
		t.Errorf("%d expected points, want 29", n)
	}
	lr := []LimitRow{{Segment: "all"}, {Segment: "all"}}
	lr[0].Row.LimitResult = benford.LimitProbe(5000, 0.1, 400, 200)
	lr[0].Row.Flagged = true
	lr[1].Row.LimitResult = benford.LimitProbe(1000, 0.1, 220, 200)
	es = readSVG(t, limitChart("lm", lr))
	if n := count(es, func(e svgElem) bool { return e.class("dot") }); n != 2 {
		t.Errorf("%d dots, want 2", n)
	}
	if n := count(es, func(e svgElem) bool { return e.class("flag-marker") }); n != 1 {
		t.Errorf("%d flagged markers, want 1", n)
	}
}

func TestEmptyResultChart(t *testing.T) {
	r, err := benford.Analyze(benford.FirstDigit, make([]int64, 9))
	if err != nil {
		t.Fatal(err)
	}
	es := readSVG(t, digitChart("e", &r, nil))
	if n := count(es, func(e svgElem) bool { return e.class("bar") }); n != 9 {
		t.Errorf("%d bars for an empty test, want 9 (of height 0)", n)
	}
}

func TestFormats(t *testing.T) {
	for _, c := range []struct {
		v    any
		kind string
		want string
	}{
		{int64(1234567), "int", "1,234,567"},
		{int64(-12), "int", "−12"},
		{0.04521, "pct:2", "4.52%"},
		{-0.00812, "pct:3", "−0.812%"},
		{0.0012345, "f:5", "0.00123"},
		{1905.0, "f:2", "1,905.00"},
		{3.2e-5, "p", "3.200e-05"}, // four significant figures, as the terminal writes it (numfmt.P)
		{0.0217, "p", "0.02170"},
		{0.0001234, "sf", "0.0001234"},
		{0.0, "p", "< 1e-300"}, // underflowed, as the terminal and the workbook write it
		{"-1234567.89", "money", "−1,234,567.89"},
		{"12.50", "money", "12.50"},
		{"12.5", "money", "12.50"},
		{"1200", "money", "1,200.00"},
		{"0.125", "money", "0.125"}, // exact: a decimal beyond the second is kept
		{1905.5, "money", "1,905.50"},
		{int64(1400), "money", "1,400.00"},
		{int64(1400), "id", "1400"},
		{int64(123141), "id", "123141"},
		{12.3456, "sf", "12.35"},
		{0.005, "pct:~", "0.5%"},
		{0.07, "pct:~", "7%"},
		{math.NaN(), "f:2", "n/a"},
	} {
		if got := formatValue(c.v, c.kind); got != c.want {
			t.Errorf("formatValue(%v, %s) = %q, want %q", c.v, c.kind, got, c.want)
		}
	}
	for _, c := range []struct {
		max  float64
		want float64
	}{{0.33, 0.1}, {0.045, 0.01}, {1.0, 0.2}, {12, 2.5}, {480, 100}} {
		if got := niceStep(c.max, 5); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("niceStep(%v) = %v, want %v", c.max, got, c.want)
		}
	}
}
