// Command browsercheck checks what a headless browser made of a leadline
// report: the DOM it built (--dump-dom), the screenshot, the PDF and the
// browser's log. scripts/browser-check.sh drives the browser and runs it;
// it exits non-zero, listing every problem, when a chart or a section is
// missing or empty, the screenshot is blank or shows no chart colours, the
// PDF has fewer pages than sections, the page logged an error or tried
// to fetch anything, or (--fit) any element of the report reaches past the
// page at 1024 px, at 1400 px or in A4 portrait print (engine/report/pagefit).
package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"image"
	"image/png"
	"os"
	"regexp"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/report/pagefit"
	"golang.org/x/net/html"
)

// The sections every report has, in order (shown or "not run").
var sections = []string{"summary", "completeness", "digits", "runs", "segments", "limits", "ranges", "duplicates", "drill", "manifest"}

func main() {
	dom := flag.String("dom", "", "the DOM the browser dumped (--dump-dom)")
	shot := flag.String("png", "", "the screenshot")
	pdf := flag.String("pdf", "", "the PDF printed by the browser")
	logs := flag.String("log", "", "the browser's log (stderr with --enable-logging=stderr), one or more files, comma-separated")
	fit := flag.String("fit", "", "the report to measure in the browser at 1024 px, 1400 px and A4 print")
	browser := flag.String("browser", "", "the browser for --fit (default: chromium on PATH)")
	flag.Parse()
	var problems []string
	fail := func(format string, a ...any) { problems = append(problems, fmt.Sprintf(format, a...)) }

	if *fit != "" {
		b := *browser
		if b == "" {
			b = pagefit.Browser()
		}
		over, err := pagefit.Check(context.Background(), b, *fit, pagefit.Modes)
		if err != nil {
			fail("measuring %s in the browser: %v", *fit, err)
		}
		for _, o := range over {
			fail("wider than the page: %s", o)
		}
		if err == nil && len(over) == 0 {
			var names []string
			for _, m := range pagefit.Modes {
				names = append(names, m.Name)
			}
			fmt.Printf("page width: nothing wider than the page at %s\n", strings.Join(names, ", "))
		}
	}
	if *dom != "" {
		nSections := checkDOM(*dom, fail)
		checkPNG(*shot, fail)
		checkPDF(*pdf, nSections, fail)
	}
	for _, l := range strings.Split(*logs, ",") {
		if l != "" {
			checkLog(l, fail)
		}
	}
	if len(problems) > 0 {
		fmt.Fprintln(os.Stderr, "browser check FAILED:")
		for _, p := range problems {
			fmt.Fprintln(os.Stderr, "  -", p)
		}
		os.Exit(1)
	}
}

func attr(n *html.Node, k string) string {
	for _, a := range n.Attr {
		if a.Key == k {
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

func walk(n *html.Node, fn func(*html.Node)) {
	if n.Type == html.ElementNode {
		fn(n)
	}
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		walk(c, fn)
	}
}

func text(n *html.Node) string {
	var b strings.Builder
	var rec func(*html.Node)
	rec = func(n *html.Node) {
		if n.Type == html.TextNode {
			b.WriteString(n.Data)
		}
		if n.Type == html.ElementNode && (n.Data == "svg" || n.Data == "style") {
			return
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			rec(c)
		}
	}
	rec(n)
	return strings.Join(strings.Fields(b.String()), " ")
}

// checkDOM checks the sections and charts of the DOM the browser built. It
// returns the number of sections.
func checkDOM(path string, fail func(string, ...any)) int {
	data, err := os.ReadFile(path)
	if err != nil {
		fail("DOM: %v", err)
		return 0
	}
	root, err := html.Parse(bytes.NewReader(data))
	if err != nil {
		fail("DOM does not parse: %v", err)
		return 0
	}
	found := map[string]*html.Node{}
	var order []string
	wantCharts := -1
	var charts []*html.Node
	walk(root, func(n *html.Node) {
		switch {
		case n.Data == "section" && attr(n, "data-section") != "":
			found[attr(n, "data-section")] = n
			order = append(order, attr(n, "data-section"))
		case n.Data == "meta" && attr(n, "name") == "leadline-charts":
			wantCharts, _ = strconv.Atoi(attr(n, "content"))
		case n.Data == "svg" && hasClass(n, "chart"):
			charts = append(charts, n)
		case n.Data == "script" || n.Data == "img" || n.Data == "iframe" || n.Data == "link":
			fail("the page holds a <%s> element: it must be self-contained", n.Data)
		}
	})
	if len(found) == 0 {
		fail("DOM: no report sections (is this a leadline report?)")
		return 0
	}
	for _, id := range sections {
		s := found[id]
		if s == nil {
			fail("section %q is missing", id)
			continue
		}
		t := text(s)
		switch attr(s, "data-status") {
		case "not-run":
			if !strings.Contains(t, "Not run") {
				fail("section %q is marked not run but does not say so: %q", id, t)
			}
		case "shown":
			var heading string
			walk(s, func(n *html.Node) {
				if n.Data == "h2" && heading == "" {
					heading = text(n)
				}
			})
			if len(t)-len(heading) < 40 {
				fail("section %q is empty: %q", id, t)
			}
		default:
			fail("section %q has no status", id)
		}
	}
	if wantCharts < 1 {
		fail("the page announces %d charts: run some tests before making the report", wantCharts)
	}
	if len(charts) != wantCharts {
		fail("%d charts in the page, %d announced", len(charts), wantCharts)
	}
	for _, c := range charts {
		marks := 0
		walk(c, func(n *html.Node) {
			if (n.Data == "rect" && hasClass(n, "bar")) || (n.Data == "circle" && hasClass(n, "dot")) {
				marks++
			}
		})
		if marks == 0 {
			fail("chart %q draws nothing", attr(c, "id"))
		}
		if attr(c, "viewBox") == "" || attr(c, "role") != "img" {
			fail("chart %q lacks its viewBox or role", attr(c, "id"))
		}
	}
	fmt.Printf("DOM: %d sections (%s), %d charts\n", len(order), strings.Join(order, ", "), len(charts))
	return len(order)
}

// checkPNG checks that the screenshot is not blank and shows the chart
// colours (the observed blue of the bars, the orange of flagged bins).
func checkPNG(path string, fail func(string, ...any)) {
	f, err := os.Open(path)
	if err != nil {
		fail("screenshot: %v", err)
		return
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		fail("screenshot is not a PNG: %v", err)
		return
	}
	b := img.Bounds()
	var ink, blue, orange int
	for y := b.Min.Y; y < b.Max.Y; y += 2 {
		for x := b.Min.X; x < b.Max.X; x += 2 {
			r, g, bl, _ := img.At(x, y).RGBA()
			r, g, bl = r>>8, g>>8, bl>>8
			if r < 240 || g < 240 || bl < 240 {
				ink++
			}
			if near(r, g, bl, 0x00, 0x72, 0xB2) {
				blue++
			}
			if near(r, g, bl, 0xE6, 0x9F, 0x00) {
				orange++
			}
		}
	}
	total := (b.Dx() / 2) * (b.Dy() / 2)
	fmt.Printf("screenshot: %dx%d, %.1f%% ink, %d blue and %d orange samples\n", b.Dx(), b.Dy(), 100*float64(ink)/float64(total), blue, orange)
	if ink < total/100 {
		fail("the screenshot is blank (%d of %d samples not white)", ink, total)
	}
	if blue < 200 {
		fail("the screenshot shows no chart bars (%d blue samples)", blue)
	}
	_ = image.Point{}
}

func near(r, g, b, R, G, B uint32) bool {
	d := func(a, c uint32) uint32 {
		if a > c {
			return a - c
		}
		return c - a
	}
	return d(r, R) < 24 && d(g, G) < 24 && d(b, B) < 24
}

var pageRE = regexp.MustCompile(`/Type\s*/Page[^s]`)

// checkPDF checks the printed PDF: a PDF, with at least one page per
// section (the print styles start each section on a new page).
func checkPDF(path string, nSections int, fail func(string, ...any)) {
	data, err := os.ReadFile(path)
	if err != nil {
		fail("PDF: %v", err)
		return
	}
	if !bytes.HasPrefix(data, []byte("%PDF-")) {
		fail("PDF: not a PDF file")
		return
	}
	pages := len(pageRE.FindAll(data, -1))
	fmt.Printf("PDF: %d bytes, %d pages\n", len(data), pages)
	if pages < nSections {
		fail("PDF: %d pages for %d sections (each section should start a page)", pages, nSections)
	}
}

// Lines of the browser's log that mean the page logged an error or tried
// to fetch something.
var badLog = regexp.MustCompile(`Uncaught|CONSOLE|Failed to load resource|net::ERR_|Refused to|Mixed Content|blocked`)

func checkLog(path string, fail func(string, ...any)) {
	data, err := os.ReadFile(path)
	if err != nil {
		fail("log: %v", err)
		return
	}
	n := 0
	for _, l := range strings.Split(string(data), "\n") {
		if badLog.MatchString(l) {
			fail("the page logged: %s", strings.TrimSpace(l))
			n++
		}
	}
	fmt.Printf("log %s: %d error lines\n", path, n)
}
