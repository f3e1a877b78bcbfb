package report

import (
	"fmt"
	"html"
	"math"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
)

// Colours (Okabe-Ito palette, safe for the common colour-vision
// deficiencies) and the house's greys. The CSS uses the same values.
const (
	colBlue     = "#0072B2" // observed
	colOrange   = "#E69F00" // flagged
	colVermil   = "#D55E00" // flag markers
	colSky      = "#56B4E9" // shortfall
	colInk      = "#1a1a1a" // expected, axes, text
	colGrey     = "#6b6b6b" // bounds
	colGridLine = "#dddddd"
)

// Chart geometry, in SVG user units (the SVG scales to the page width).
const (
	chartW      = 800.0
	chartH      = 330.0
	marginL     = 62.0
	marginR     = 14.0
	marginT     = 40.0
	marginB     = 48.0
	legendY     = 14.0
	tickTarget  = 5
	markerSize  = 5.0
	maxBinTitle = 100 // bins above this many get shorter titles
)

// span is a stretch of consecutive bins (indices into the chart's bins,
// inclusive) to shade behind the bars.
type span struct {
	From, To int
	Kind     string // benford.Surplus or benford.Shortfall
	Label    string
}

// binChart is a bar chart over ordered bins: observed values as bars, an
// expected value per bin as a line with markers, optional lower and upper
// bounds drawn as a dashed band, flagged bins hatched and marked, and
// optional stretches shaded behind.
type binChart struct {
	ID       string // unique within the document: prefixes pattern ids
	Title    string // <title>: the accessible name
	Desc     string // <desc>: what the chart shows in words
	Labels   []string
	Actual   []float64
	Expected []float64 // nil: no expected line
	Lower    []float64 // nil: no bounds
	Upper    []float64
	Flagged  []bool
	Spans    []span
	Percent  bool   // y values are proportions shown as percentages
	YTitle   string // axis title
	XTitle   string
	Names    [3]string // legend names: observed, expected, bounds
	BinTitle func(i int) string
}

// svgWriter accumulates SVG text.
type svgWriter struct{ strings.Builder }

func (w *svgWriter) printf(format string, a ...any) { fmt.Fprintf(w, format, a...) }

// num formats a coordinate compactly.
func num(v float64) string {
	if math.Abs(v-math.Round(v)) < 1e-9 {
		return strconv.FormatFloat(math.Round(v), 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'f', 2, 64)
}

func esc(s string) string { return html.EscapeString(s) }

// niceStep returns a step of 1, 2, 2.5 or 5 times a power of ten that
// divides [0, max] into about n intervals.
func niceStep(max float64, n int) float64 {
	if !(max > 0) || math.IsInf(max, 0) {
		return 1
	}
	raw := max / float64(n)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*p >= raw {
			return m * p
		}
	}
	return 10 * p
}

// tickLabel formats an axis value.
func tickLabel(v, step float64, percent bool) string {
	if percent {
		v *= 100
		step *= 100
	}
	dec := 0
	if step < 1 {
		dec = int(math.Ceil(-math.Log10(step) - 1e-9))
		if math.Abs(step*math.Pow(10, float64(dec))-math.Round(step*math.Pow(10, float64(dec)))) > 1e-6 {
			dec++
		}
	}
	s := strconv.FormatFloat(v, 'f', dec, 64)
	if strings.HasPrefix(s, "-") {
		if strings.Trim(s, "-0.") == "" {
			s = s[1:]
		} else {
			s = "−" + s[1:]
		}
	}
	if percent {
		return s + "%"
	}
	return numfmt.Group(s)
}

// labelEvery returns how often an x label is written for k bins.
func labelEvery(k int) int {
	switch {
	case k <= 20:
		return 1
	case k <= 100:
		return 5
	case k <= 200:
		return 10
	default:
		return 50
	}
}

// nextEvery is the next label spacing after e in 1, 2, 5, 10, 20, 50...
func nextEvery(e int) int {
	p := 1
	for p*10 <= e {
		p *= 10
	}
	switch m := e / p; {
	case m < 2:
		return 2 * p
	case m < 5:
		return 5 * p
	}
	return 10 * p
}

// svgOpen writes the <svg> element with its accessible name and
// description, and the patterns used for hatching and shading.
func svgOpen(w *svgWriter, id, class, title, desc string, height float64) {
	w.printf(`<svg class="chart %s" id="%s" xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %s %s" role="img" aria-labelledby="%s-t %s-d" preserveAspectRatio="xMidYMid meet">`,
		class, esc(id), num(chartW), num(height), esc(id), esc(id))
	w.printf(`<title id="%s-t">%s</title><desc id="%s-d">%s</desc>`, esc(id), esc(title), esc(id), esc(desc))
	w.printf(`<defs>`)
	// Flagged bars: orange with dark diagonal hatching (reads in greyscale).
	w.printf(`<pattern id="%s-hatch" patternUnits="userSpaceOnUse" width="6" height="6" patternTransform="rotate(45)"><rect width="6" height="6" fill="%s"/><line x1="0" y1="0" x2="0" y2="6" stroke="%s" stroke-width="2.2"/></pattern>`,
		esc(id), colOrange, colInk)
	// Surplus stretches: sparse diagonal lines; shortfall: dots.
	w.printf(`<pattern id="%s-surplus" patternUnits="userSpaceOnUse" width="8" height="8" patternTransform="rotate(-45)"><rect width="8" height="8" fill="%s" fill-opacity="0.10"/><line x1="0" y1="0" x2="0" y2="8" stroke="%s" stroke-opacity="0.35" stroke-width="1"/></pattern>`,
		esc(id), colOrange, colVermil)
	w.printf(`<pattern id="%s-shortfall" patternUnits="userSpaceOnUse" width="7" height="7"><rect width="7" height="7" fill="%s" fill-opacity="0.12"/><circle cx="3.5" cy="3.5" r="1" fill="%s" fill-opacity="0.45"/></pattern>`,
		esc(id), colSky, colBlue)
	w.printf(`</defs>`)
}

// markerPath returns a triangle pointing up (surplus) or down (shortfall)
// centred on x with its base or tip at y.
func markerPath(x, y float64, up bool) string {
	s := markerSize
	if up {
		return fmt.Sprintf("M%s %sL%s %sL%s %sZ", num(x), num(y-2*s), num(x-s), num(y), num(x+s), num(y))
	}
	return fmt.Sprintf("M%s %sL%s %sL%s %sZ", num(x), num(y), num(x-s), num(y-2*s), num(x+s), num(y-2*s))
}

// legendItem writes one legend entry at x and returns the x after it.
func legendItem(w *svgWriter, x float64, swatch, label string) float64 {
	w.printf(`<g class="legend-item" transform="translate(%s %s)">%s<text x="20" y="4" class="legend-text">%s</text></g>`,
		num(x), num(legendY), swatch, esc(label))
	return x + 30 + 6.9*float64(len([]rune(label)))
}

// render draws the chart as an SVG string.
func (c *binChart) render() string {
	k := len(c.Actual)
	var w svgWriter
	svgOpen(&w, c.ID, "bin-chart", c.Title, c.Desc, chartH)
	if k == 0 {
		w.printf(`<text x="%s" y="%s" text-anchor="middle" class="empty">no bins</text></svg>`, num(chartW/2), num(chartH/2))
		return w.String()
	}
	plotW := chartW - marginL - marginR
	plotH := chartH - marginT - marginB
	slot := plotW / float64(k)
	barW := slot * 0.72
	if k > 100 {
		barW = slot * 0.9
	}
	yMax := 0.0
	for i := 0; i < k; i++ {
		yMax = math.Max(yMax, c.Actual[i])
		if c.Expected != nil && !math.IsNaN(c.Expected[i]) {
			yMax = math.Max(yMax, c.Expected[i])
		}
		if c.Upper != nil {
			yMax = math.Max(yMax, c.Upper[i])
		}
	}
	if !(yMax > 0) {
		yMax = 1
	}
	step := niceStep(yMax*1.08, tickTarget)
	top := math.Ceil(yMax*1.08/step-1e-9) * step
	// Markers sit above the bars; keep room for them.
	top = math.Max(top, yMax+step*0.25)
	if top/step > 8 {
		step = niceStep(top, tickTarget)
		top = math.Ceil(top/step-1e-9) * step
	}
	x0 := func(i int) float64 { return marginL + slot*float64(i) }
	xc := func(i int) float64 { return x0(i) + slot/2 }
	y := func(v float64) float64 { return marginT + plotH*(1-v/top) }

	// Shaded stretches, behind everything.
	for _, s := range c.Spans {
		if s.From < 0 || s.To >= k || s.From > s.To {
			continue
		}
		fill := "surplus"
		if s.Kind == benford.Shortfall {
			fill = "shortfall"
		}
		w.printf(`<rect class="stretch %s" data-from="%s" data-to="%s" x="%s" y="%s" width="%s" height="%s" fill="url(#%s-%s)"><title>%s</title></rect>`,
			fill, esc(c.Labels[s.From]), esc(c.Labels[s.To]), num(x0(s.From)), num(marginT), num(slot*float64(s.To-s.From+1)), num(plotH), esc(c.ID), fill, esc(s.Label))
	}
	// Grid and y axis.
	w.printf(`<g class="axis y-axis">`)
	for v := 0.0; v <= top+step/1000; v += step {
		w.printf(`<line class="grid" x1="%s" x2="%s" y1="%s" y2="%s" stroke="%s" stroke-width="1"/>`, num(marginL), num(chartW-marginR), num(y(v)), num(y(v)), colGridLine)
		w.printf(`<text x="%s" y="%s" text-anchor="end" class="tick">%s</text>`, num(marginL-6), num(y(v)+4), esc(tickLabel(v, step, c.Percent)))
	}
	if c.YTitle != "" {
		w.printf(`<text class="axis-title" transform="translate(14 %s) rotate(-90)" text-anchor="middle">%s</text>`, num(marginT+plotH/2), esc(c.YTitle))
	}
	w.printf(`</g>`)
	// Bounds: per bin a light band between lower and upper, its edges
	// dashed (one path each, a subpath per bin, no joins between bins).
	if c.Lower != nil && c.Upper != nil {
		var up, lo, band strings.Builder
		for i := 0; i < k; i++ {
			yu, yl := y(c.Upper[i]), y(math.Max(c.Lower[i], 0))
			fmt.Fprintf(&up, "M%s %sH%s", num(x0(i)), num(yu), num(x0(i)+slot))
			fmt.Fprintf(&lo, "M%s %sH%s", num(x0(i)), num(yl), num(x0(i)+slot))
			fmt.Fprintf(&band, "M%s %sH%sV%sH%sZ", num(x0(i)), num(yu), num(x0(i)+slot), num(yl), num(x0(i)))
		}
		w.printf(`<path class="bounds-band" d="%s" fill="%s" fill-opacity="0.13" stroke="none"/>`, band.String(), colGrey)
		w.printf(`<path class="bound bound-upper" d="%s" fill="none" stroke="%s" stroke-width="1.1" stroke-dasharray="4 3"/>`, up.String(), colGrey)
		w.printf(`<path class="bound bound-lower" d="%s" fill="none" stroke="%s" stroke-width="1.1" stroke-dasharray="4 3"/>`, lo.String(), colGrey)
	}
	// Bars.
	w.printf(`<g class="bars">`)
	for i := 0; i < k; i++ {
		v := math.Max(c.Actual[i], 0)
		cls, fill := "bar", colBlue
		if c.Flagged != nil && c.Flagged[i] {
			// Hatching needs a few pixels of width to show; thin bars are
			// filled plain orange and rely on their marker.
			cls, fill = "bar flagged", "url(#"+esc(c.ID)+"-hatch)"
			if barW < 4 {
				fill = colOrange
			}
		}
		title := ""
		if c.BinTitle != nil {
			title = "<title>" + esc(c.BinTitle(i)) + "</title>"
		}
		h := y(0) - y(v)
		w.printf(`<rect class="%s" data-bin="%s" x="%s" y="%s" width="%s" height="%s" fill="%s">%s</rect>`,
			cls, esc(c.Labels[i]), num(xc(i)-barW/2), num(y(v)), num(barW), num(h), fill, title)
	}
	w.printf(`</g>`)
	// Expected: a line through the bin centres, with points when few bins.
	if c.Expected != nil {
		// A NaN expected value (a bin not scored) breaks the line.
		var p strings.Builder
		pen := false
		for i := 0; i < k; i++ {
			if math.IsNaN(c.Expected[i]) {
				pen = false
				continue
			}
			cmd := "L"
			if !pen {
				cmd = "M"
			}
			pen = true
			p.WriteString(cmd + num(xc(i)) + " " + num(y(c.Expected[i])))
		}
		w.printf(`<path class="expected" d="%s" fill="none" stroke="%s" stroke-width="1.6"/>`, p.String(), colInk)
		if k <= 100 {
			w.printf(`<g class="expected-points">`)
			r := math.Min(3.2, slot*0.28)
			for i := 0; i < k; i++ {
				if math.IsNaN(c.Expected[i]) {
					continue
				}
				w.printf(`<circle class="exp-pt" data-bin="%s" cx="%s" cy="%s" r="%s" fill="#ffffff" stroke="%s" stroke-width="1.2"/>`,
					esc(c.Labels[i]), num(xc(i)), num(y(c.Expected[i])), num(r), colInk)
			}
			w.printf(`</g>`)
		}
	}
	// Flag markers: a triangle above each flagged bar, pointing up for a
	// surplus and down for a shortfall.
	w.printf(`<g class="flag-markers">`)
	for i := 0; i < k; i++ {
		if c.Flagged == nil || !c.Flagged[i] {
			continue
		}
		upDir := c.Expected == nil || math.IsNaN(c.Expected[i]) || c.Actual[i] > c.Expected[i]
		base := c.Actual[i]
		if c.Upper != nil {
			base = math.Max(base, c.Upper[i])
		}
		if c.Expected != nil && !math.IsNaN(c.Expected[i]) {
			base = math.Max(base, c.Expected[i])
		}
		w.printf(`<path class="flag-marker" data-bin="%s" d="%s" fill="%s" stroke="%s" stroke-width="0.6"/>`,
			esc(c.Labels[i]), markerPath(xc(i), y(base)-3, upDir), colVermil, colInk)
	}
	w.printf(`</g>`)
	// X axis: labels far enough apart not to overlap.
	every := labelEvery(k)
	longest := 0
	for _, l := range c.Labels {
		longest = max(longest, len([]rune(l)))
	}
	for float64(every)*slot < 6.6*float64(longest)+6 && every < k {
		every = nextEvery(every)
	}
	w.printf(`<g class="axis x-axis"><line x1="%s" x2="%s" y1="%s" y2="%s" stroke="%s" stroke-width="1"/>`, num(marginL), num(chartW-marginR), num(y(0)), num(y(0)), colInk)
	for i := 0; i < k; i++ {
		if i%every != 0 && !(every > 1 && i == k-1 && k <= 100) {
			continue
		}
		if half := 3.3 * float64(len([]rune(c.Labels[i]))); xc(i)+half > chartW || xc(i)-half < 0 {
			continue // would be cut off at the edge
		}
		w.printf(`<text x="%s" y="%s" text-anchor="middle" class="tick">%s</text>`, num(xc(i)), num(y(0)+15), esc(c.Labels[i]))
	}
	if c.XTitle != "" {
		w.printf(`<text class="axis-title" x="%s" y="%s" text-anchor="middle">%s</text>`, num(marginL+plotW/2), num(chartH-8), esc(c.XTitle))
	}
	w.printf(`</g>`)
	// Legend.
	w.printf(`<g class="legend">`)
	x := marginL
	names := c.Names
	if names[0] == "" {
		names = [3]string{"observed", "expected", "95% bounds"}
	}
	x = legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="%s"/>`, colBlue), names[0])
	if c.Expected != nil {
		x = legendItem(&w, x, fmt.Sprintf(`<line x1="0" x2="14" y1="-1" y2="-1" stroke="%s" stroke-width="1.6"/><circle cx="7" cy="-1" r="3" fill="#fff" stroke="%s"/>`, colInk, colInk), names[1])
	}
	if c.Lower != nil {
		x = legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="%s" fill-opacity="0.13" stroke="%s" stroke-dasharray="4 3"/>`, colGrey, colGrey), names[2])
	}
	if c.Flagged != nil {
		x = legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="url(#%s-hatch)"/>`, esc(c.ID)), "flagged")
	}
	if len(c.Spans) > 0 {
		x = legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="url(#%s-surplus)" stroke="%s" stroke-width="0.5"/>`, esc(c.ID), colGrey), "surplus stretch")
		legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="url(#%s-shortfall)" stroke="%s" stroke-width="0.5"/>`, esc(c.ID), colGrey), "shortfall stretch")
	}
	w.printf(`</g></svg>`)
	return w.String()
}

// pct formats a proportion as a percentage for titles.
func pct(v float64, dec int) string {
	return strconv.FormatFloat(v*100, 'f', dec, 64) + "%"
}

// digitChart returns the chart of a digit test: observed against expected
// proportion per bin, 95% bounds, flagged bins hatched and marked, and the
// given runs-test stretches shaded.
func digitChart(id string, r *benford.Result, stretches []benford.Stretch) string {
	k := len(r.Bins)
	c := &binChart{
		ID: id, Percent: true,
		Labels: make([]string, k), Actual: make([]float64, k), Expected: make([]float64, k),
		Lower: make([]float64, k), Upper: make([]float64, k), Flagged: make([]bool, k),
		YTitle: "share of amounts", XTitle: binAxisTitle(r.Test),
	}
	if r.Test == benford.Summation {
		c.YTitle = "share of total amount"
		c.Names = [3]string{"observed", "expected", "flag threshold"}
	}
	var flagged []string
	for i, b := range r.Bins {
		c.Labels[i], c.Actual[i], c.Expected[i], c.Lower[i], c.Upper[i], c.Flagged[i] = b.Label, b.Actual, b.Expected, b.Lower, b.Upper, b.Flagged
		if b.Flagged {
			flagged = append(flagged, b.Label)
		}
	}
	bins := r.Bins
	dec := 2
	if k > 100 {
		dec = 3
	}
	c.BinTitle = func(i int) string {
		b := bins[i]
		s := fmt.Sprintf("bin %s: observed %s, expected %s", b.Label, pct(b.Actual, dec), pct(b.Expected, dec))
		if k <= maxBinTitle {
			s += fmt.Sprintf(", count %d, Z %.2f", b.Count, b.Z)
		}
		if b.Flagged {
			s += ", flagged"
		}
		return s
	}
	lo := indexOfBins(r)
	for _, s := range stretches {
		from, to := s.From-lo, s.To-lo
		c.Spans = append(c.Spans, span{From: from, To: to, Kind: s.Kind,
			Label: fmt.Sprintf("%s stretch, bins %d to %d, %+.2f%% of amounts", s.Kind, s.From, s.To, s.Excess*100)})
	}
	c.Title = fmt.Sprintf("%s: observed and expected proportions per bin", capitalise(r.Test.Name()))
	c.Desc = fmt.Sprintf("%d bins, %d amounts; bars show the observed proportion, the line the proportion expected under Benford's law, the dashed band the 95%% bounds. %d bins flagged", k, r.N, len(flagged))
	if r.Test == benford.Summation {
		c.Desc = fmt.Sprintf("%d bins; bars show each bin's share of the total absolute amount, the line the expected share (1/90), the dashed line the flag threshold. %d bins flagged", k, len(flagged))
	}
	if len(flagged) > 0 {
		if len(flagged) > 20 {
			c.Desc += ", among them " + strings.Join(flagged[:20], ", ") + " …"
		} else {
			c.Desc += ": " + strings.Join(flagged, ", ")
		}
	}
	c.Desc += "."
	if len(c.Spans) > 0 {
		c.Desc += fmt.Sprintf(" %d runs-test stretches shaded.", len(c.Spans))
	}
	return c.render()
}

// indexOfBins returns the bin number of the first bin.
func indexOfBins(r *benford.Result) int {
	if len(r.Bins) > 0 {
		return r.Bins[0].Bin
	}
	lo, _ := r.Test.Bins()
	return lo
}

func binAxisTitle(t benford.Test) string {
	switch t {
	case benford.FirstDigit:
		return "first digit"
	case benford.SecondDigit:
		return "second digit"
	case benford.FirstTwo, benford.Summation:
		return "first two digits"
	case benford.FirstThree:
		return "first three digits"
	case benford.LastTwo:
		return "last two digits"
	case benford.SecondOrder:
		return "first two digits of the differences between sorted amounts"
	}
	return "bin"
}

func capitalise(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// diffChart draws the runs test: per bin the observed minus expected
// proportion as a bar above (surplus) or below (shortfall) zero, with the
// listed stretches shaded.
func diffChart(id string, r *benford.Result, stretches []benford.Stretch) string {
	k := len(r.Bins)
	var w svgWriter
	desc := fmt.Sprintf("%d bins; bars show observed minus expected proportion, above the line a surplus and below it a shortfall.", k)
	if r.Runs != nil {
		desc += fmt.Sprintf(" %d runs (%.1f expected).", r.Runs.Runs, r.Runs.Expected)
	}
	svgOpen(&w, id, "diff-chart", capitalise(r.Test.Name())+": surplus and shortfall per bin", desc, chartH)
	if k == 0 {
		w.printf(`<text x="%s" y="%s" text-anchor="middle" class="empty">no bins</text></svg>`, num(chartW/2), num(chartH/2))
		return w.String()
	}
	plotW := chartW - marginL - marginR
	plotH := chartH - marginT - marginB
	slot := plotW / float64(k)
	barW := slot * 0.72
	m := 0.0
	for _, b := range r.Bins {
		m = math.Max(m, math.Abs(b.Diff))
	}
	if !(m > 0) {
		m = 0.001
	}
	step := niceStep(m*1.1, 3)
	top := math.Ceil(m*1.1/step-1e-9) * step
	x0 := func(i int) float64 { return marginL + slot*float64(i) }
	xc := func(i int) float64 { return x0(i) + slot/2 }
	y := func(v float64) float64 { return marginT + plotH*(0.5-v/(2*top)) }
	lo := indexOfBins(r)
	for _, s := range stretches {
		from, to := s.From-lo, s.To-lo
		if from < 0 || to >= k || from > to {
			continue
		}
		fill := "surplus"
		if s.Kind == benford.Shortfall {
			fill = "shortfall"
		}
		w.printf(`<rect class="stretch %s" data-from="%d" data-to="%d" x="%s" y="%s" width="%s" height="%s" fill="url(#%s-%s)"><title>%s stretch, bins %d to %d</title></rect>`,
			fill, s.From, s.To, num(x0(from)), num(marginT), num(slot*float64(to-from+1)), num(plotH), esc(id), fill, s.Kind, s.From, s.To)
	}
	w.printf(`<g class="axis y-axis">`)
	for v := -top; v <= top+step/1000; v += step {
		w.printf(`<line class="grid" x1="%s" x2="%s" y1="%s" y2="%s" stroke="%s" stroke-width="1"/>`, num(marginL), num(chartW-marginR), num(y(v)), num(y(v)), colGridLine)
		lab := tickLabel(v, step, true)
		if v > step/1000 {
			lab = "+" + lab
		}
		w.printf(`<text x="%s" y="%s" text-anchor="end" class="tick">%s</text>`, num(marginL-6), num(y(v)+4), esc(lab))
	}
	w.printf(`<text class="axis-title" transform="translate(14 %s) rotate(-90)" text-anchor="middle">observed − expected</text></g>`, num(marginT+plotH/2))
	w.printf(`<g class="bars">`)
	for i, b := range r.Bins {
		cls, fill, stroke := "bar over", colBlue, colBlue
		y1, y2 := y(math.Max(b.Diff, 0)), y(math.Min(b.Diff, 0))
		if b.Diff <= 0 {
			cls, fill, stroke = "bar under", "#ffffff", colBlue
		}
		w.printf(`<rect class="%s" data-bin="%s" x="%s" y="%s" width="%s" height="%s" fill="%s" stroke="%s" stroke-width="0.8"><title>bin %s: %s</title></rect>`,
			cls, esc(b.Label), num(xc(i)-barW/2), num(y1), num(barW), num(y2-y1), fill, stroke, esc(b.Label), esc(signedPct(b.Diff)))
	}
	w.printf(`</g>`)
	every := labelEvery(k)
	w.printf(`<g class="axis x-axis"><line x1="%s" x2="%s" y1="%s" y2="%s" stroke="%s" stroke-width="1.2"/>`, num(marginL), num(chartW-marginR), num(y(0)), num(y(0)), colInk)
	for i, b := range r.Bins {
		if i%every != 0 {
			continue
		}
		w.printf(`<text x="%s" y="%s" text-anchor="middle" class="tick">%s</text>`, num(xc(i)), num(marginT+plotH+15), esc(b.Label))
	}
	w.printf(`<text class="axis-title" x="%s" y="%s" text-anchor="middle">%s</text></g>`, num(marginL+plotW/2), num(chartH-8), esc(binAxisTitle(r.Test)))
	w.printf(`<g class="legend">`)
	x := legendItem(&w, marginL, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="%s"/>`, colBlue), "over expected")
	x = legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="#fff" stroke="%s"/>`, colBlue), "under expected")
	x = legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="url(#%s-surplus)" stroke="%s" stroke-width="0.5"/>`, esc(id), colGrey), "surplus stretch")
	legendItem(&w, x, fmt.Sprintf(`<rect x="0" y="-6" width="14" height="10" fill="url(#%s-shortfall)" stroke="%s" stroke-width="0.5"/>`, esc(id), colGrey), "shortfall stretch")
	w.printf(`</g></svg>`)
	return w.String()
}

func signedPct(v float64) string {
	s := strconv.FormatFloat(v*100, 'f', 3, 64) + "%"
	if v > 0 {
		s = "+" + s
	}
	return s
}

// dotRow is one row of a dot chart.
type dotRow struct {
	Label    string
	Value    float64
	Ref      float64 // reference value drawn as a tick on the row
	Flagged  bool
	Title    string
	DataAttr string // value of data-key
}

// dotChart draws one row per item: a dot at Value, a reference tick at
// Ref, flagged rows with an orange triangle. Used for the limit probe
// (observed against expected below/above ratio).
func dotChart(id, title, desc, xTitle string, rows []dotRow) string {
	rowH := 22.0
	h := marginT + marginB + rowH*float64(max(len(rows), 1))
	var w svgWriter
	svgOpen(&w, id, "dot-chart", title, desc, h)
	left := 150.0
	plotW := chartW - left - marginR
	m := 0.0
	for _, r := range rows {
		m = math.Max(m, math.Max(r.Value, r.Ref))
	}
	if !(m > 0) {
		m = 1
	}
	step := niceStep(m*1.05, tickTarget)
	top := math.Ceil(m*1.05/step-1e-9) * step
	x := func(v float64) float64 { return left + plotW*v/top }
	bottom := marginT + rowH*float64(len(rows))
	w.printf(`<g class="axis x-axis">`)
	for v := 0.0; v <= top+step/1000; v += step {
		w.printf(`<line class="grid" x1="%s" x2="%s" y1="%s" y2="%s" stroke="%s"/>`, num(x(v)), num(x(v)), num(marginT), num(bottom), colGridLine)
		w.printf(`<text x="%s" y="%s" text-anchor="middle" class="tick">%s</text>`, num(x(v)), num(bottom+15), esc(tickLabel(v, step, false)))
	}
	w.printf(`<text class="axis-title" x="%s" y="%s" text-anchor="middle">%s</text></g>`, num(left+plotW/2), num(h-8), esc(xTitle))
	w.printf(`<g class="rows">`)
	for i, r := range rows {
		cy := marginT + rowH*(float64(i)+0.5)
		cls := "dot-row"
		if r.Flagged {
			cls += " flagged"
		}
		w.printf(`<g class="%s" data-key="%s"><title>%s</title>`, cls, esc(r.DataAttr), esc(r.Title))
		w.printf(`<text x="%s" y="%s" text-anchor="end" class="tick">%s</text>`, num(left-10), num(cy+4), esc(r.Label))
		w.printf(`<line x1="%s" x2="%s" y1="%s" y2="%s" stroke="%s" stroke-width="1"/>`, num(x(math.Min(r.Value, r.Ref))), num(x(math.Max(r.Value, r.Ref))), num(cy), num(cy), colGrey)
		w.printf(`<line class="ref" x1="%s" x2="%s" y1="%s" y2="%s" stroke="%s" stroke-width="2"/>`, num(x(r.Ref)), num(x(r.Ref)), num(cy-7), num(cy+7), colInk)
		fill := colBlue
		if r.Flagged {
			fill = colOrange
		}
		w.printf(`<circle class="dot" cx="%s" cy="%s" r="5" fill="%s" stroke="%s" stroke-width="1"/>`, num(x(r.Value)), num(cy), fill, colInk)
		if r.Flagged {
			w.printf(`<path class="flag-marker" d="%s" fill="%s" stroke="%s" stroke-width="0.6"/>`, markerPath(x(r.Value)+14, cy+5, true), colVermil, colInk)
		}
		w.printf(`</g>`)
	}
	w.printf(`</g><g class="legend">`)
	lx := legendItem(&w, left, fmt.Sprintf(`<circle cx="7" cy="-1" r="5" fill="%s" stroke="%s"/>`, colBlue, colInk), "observed")
	lx = legendItem(&w, lx, fmt.Sprintf(`<line x1="7" x2="7" y1="-8" y2="6" stroke="%s" stroke-width="2"/>`, colInk), "expected")
	legendItem(&w, lx, fmt.Sprintf(`<path d="%s" fill="%s" stroke="%s" stroke-width="0.6"/>`, markerPath(7, 4, true), colVermil, colInk), "flagged")
	w.printf(`</g></svg>`)
	return w.String()
}

// rangeChart draws the amount-range bands: the count per band as bars, the
// smooth expectation from the neighbouring bands as a line (broken where a
// band is not scored), flagged bands hatched and marked.
func rangeChart(id string, bands []RangeRow) string {
	k := len(bands)
	c := &binChart{ID: id, Labels: make([]string, k), Actual: make([]float64, k), Expected: make([]float64, k), Flagged: make([]bool, k),
		YTitle: "amounts in band", XTitle: "band (absolute amount from)", Names: [3]string{"amounts", "expected from neighbours", ""}}
	var flagged []string
	for i, r := range bands {
		b := r.Row.Band
		c.Labels[i] = compactAmount(b.From)
		c.Actual[i] = float64(b.Count)
		c.Expected[i] = b.Expected
		if !b.Scored {
			c.Expected[i] = math.NaN()
		}
		c.Flagged[i] = b.Flagged
		if b.Flagged {
			flagged = append(flagged, compactAmount(b.From)+"–"+compactAmount(b.To))
		}
	}
	c.BinTitle = func(i int) string {
		b := bands[i].Row.Band
		s := fmt.Sprintf("%s to %s: %d amounts", compactAmount(b.From), compactAmount(b.To), b.Count)
		if b.Scored {
			s += fmt.Sprintf(", %.1f expected, ratio %.2f", b.Expected, b.Ratio)
		}
		if b.Flagged {
			s += ", flagged"
		}
		return s
	}
	c.Title = "Amount ranges: count per band against the expectation from neighbouring bands"
	c.Desc = fmt.Sprintf("%d bands; bars show the amounts in each band, the line the count expected from a smooth fit to the neighbouring bands. %d bands flagged", k, len(flagged))
	if len(flagged) > 0 {
		if len(flagged) > 12 {
			flagged = append(flagged[:12], "…")
		}
		c.Desc += ": " + strings.Join(flagged, ", ")
	}
	c.Desc += "."
	return c.render()
}

// compactAmount writes a band edge briefly: 4500, 12.5k, 1.2M.
func compactAmount(v float64) string {
	a := math.Abs(v)
	switch {
	case a >= 1e9:
		return trimZeros(strconv.FormatFloat(v/1e9, 'f', 2, 64)) + "G"
	case a >= 1e6:
		return trimZeros(strconv.FormatFloat(v/1e6, 'f', 2, 64)) + "M"
	}
	return numfmt.Group(trimZeros(strconv.FormatFloat(v, 'f', 2, 64)))
}

func trimZeros(s string) string {
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	return s
}

// limitChart draws the limit probe: per limit the observed ratio of
// amounts just below to just above it, against the ratio expected.
func limitChart(id string, rows []LimitRow) string {
	var dr []dotRow
	flagged := 0
	for _, r := range rows {
		l := r.Row.LimitResult
		obs := l.ObservedRatio
		if l.Above == 0 && l.Below > 0 {
			obs = float64(l.Below) // no amounts above: show the count as the ratio's floor
		}
		if l.Flagged {
			flagged++
		}
		label := compactAmount(l.Limit)
		if r.Segment != "all" {
			label += " · " + r.Segment
			if len(label) > 24 {
				label = label[:23] + "…"
			}
		}
		dr = append(dr, dotRow{Label: label, Value: obs, Ref: l.ExpectedRatio, Flagged: l.Flagged,
			DataAttr: strconv.FormatFloat(l.Limit, 'f', -1, 64),
			Title:    fmt.Sprintf("limit %s (%s): %d below, %d above, ratio %.2f against %.3f expected, adjusted p %s", compactAmount(l.Limit), r.Segment, l.Below, l.Above, l.ObservedRatio, l.ExpectedRatio, formatFloat(l.PAdjusted, "p"))})
	}
	desc := fmt.Sprintf("%d limits; per limit the ratio of amounts just below it to amounts just above it (dot) against the ratio expected (tick). %d limits flagged.", len(rows), flagged)
	return dotChart(id, "Limit probe: below/above ratio per limit", desc, "amounts just below ÷ amounts just above", dr)
}
