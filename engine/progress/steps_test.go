package progress

import (
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// named is a source that names its step, as the workspace does.
type named struct {
	fake
	mu   sync.Mutex
	step string
}

func (n *named) StepName() string {
	n.mu.Lock()
	defer n.mu.Unlock()
	return n.step
}

func (n *named) setStep(s string) {
	n.mu.Lock()
	n.step = s
	n.mu.Unlock()
}

// update is one poll: the step named, DuckDB's fraction, whether a query runs.
type update struct {
	step string
	frac float64
	ok   bool
}

// backwardsFeed is what a load and a scan report: the load stages its
// file (to 99%), then inserts it (from 5% again), DuckDB's estimate
// wavers (0.33 after 0.34), then the scan counts digits. One bar
// labelled "working" over all of it read 35% -> 99% -> 33%.
var backwardsFeed = []update{
	{"loading ledger.csv", 0.10, true}, {"loading ledger.csv", 0.35, true}, {"loading ledger.csv", 0.99, true},
	{"loading ledger.csv", 0, false},
	{"loading ledger.csv", 0.05, true}, {"loading ledger.csv", 0.34, true}, {"loading ledger.csv", 0.33, true}, {"loading ledger.csv", 0.60, true},
	{"scan: counting digits", 0.20, true}, {"scan: counting digits", 0.18, true}, {"scan: counting digits", 0.70, true},
	{"", 0.50, true},
}

// drawing is one drawing of a bar: its label and percent.
var drawing = regexp.MustCompile(`^\s*(.*?)\s+(\d+)%\s*\|`)

// drawn reads the bars out of what was written, in order.
type drawnBar struct {
	label string
	pct   int
}

func drawn(out string) []drawnBar {
	var bars []drawnBar
	for _, part := range strings.FieldsFunc(out, func(r rune) bool { return r == '\r' || r == '\n' }) {
		if m := drawing.FindStringSubmatch(part); m != nil {
			p, _ := strconv.Atoi(m[2])
			bars = append(bars, drawnBar{m[1], p})
		}
	}
	return bars
}

// checkDrawn asserts that each bar's percent never falls and that every
// label wanted was drawn.
func checkDrawn(t *testing.T, out string, labels []string) {
	t.Helper()
	bars := drawn(out)
	if len(bars) == 0 {
		t.Fatalf("nothing drawn: %q", out)
	}
	most := map[string]int{} // the highest percent each label has shown
	for _, b := range bars {
		if p, seen := most[b.label]; seen && b.pct < p {
			t.Errorf("bar %q ran backwards: %d%% after %d%%", b.label, b.pct, p)
		}
		most[b.label] = max(most[b.label], b.pct)
	}
	for _, l := range labels {
		if _, ok := most[l]; !ok {
			t.Errorf("no bar labelled %q; drawn: %v", l, bars)
		}
	}
}

var feedLabels = []string{"loading ledger.csv", "loading ledger.csv, pass 2", "scan: counting digits", "working"}

// TestBarsNameTheirStepAndNeverRunBackwards feeds the updates one by one
// and reads the drawings back: every bar names its step, and within a bar
// the percent shown never falls.
func TestBarsNameTheirStepAndNeverRunBackwards(t *testing.T) {
	var out syncBuf
	tr := tracker{w: &out, label: "working"}
	now := time.Unix(0, 0)
	for _, u := range backwardsFeed {
		now = now.Add(200 * time.Millisecond)
		tr.update(u.step, u.frac, u.ok, now)
	}
	tr.clear()
	checkDrawn(t, out.String(), feedLabels)
}

// TestWatchNamesStepsAndNeverRunsBackwards: the same feed through Watch
// polling a named source, as the terminal sees it.
func TestWatchNamesStepsAndNeverRunsBackwards(t *testing.T) {
	if testing.Short() {
		t.Skip("polls for about five seconds")
	}
	src := &named{}
	var out syncBuf
	stop := Watch(src, &out, "working", 0)
	for _, u := range backwardsFeed {
		src.setStep(u.step)
		src.set(u.frac, u.ok)
		time.Sleep(400 * time.Millisecond)
	}
	stop()
	checkDrawn(t, out.String(), feedLabels)
}

// TestLabelsFitTheLine: a long step name is shortened to its first word
// and its end, so that the bar keeps to one line of 80 columns.
func TestLabelsFitTheLine(t *testing.T) {
	tr := tracker{label: "working", step: "checking the amounts of skerrimoor_ledger_2025_with_a_long_name.csv", pass: 2}
	got := tr.name()
	if n := len([]rune(got)); n > labelWidth {
		t.Errorf("label %q has %d characters, more than %d", got, n, labelWidth)
	}
	if !strings.HasPrefix(got, "checking …") || !strings.HasSuffix(got, "long_name.csv, pass 2") {
		t.Errorf("label %q lost its verb, file name or pass", got)
	}
	if got := fit("loading a.csv", labelWidth); got != "loading a.csv" {
		t.Errorf("a short label was changed: %q", got)
	}
}
