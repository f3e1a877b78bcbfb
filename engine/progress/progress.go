// Package progress draws a progress bar on the terminal while a long query
// runs in the workspace. It polls DuckDB's own estimate of how far the
// running query has come and draws with github.com/schollz/progressbar.
// It writes nothing unless told that its writer is a terminal, so
// machine-readable output on standard output is never touched.
//
// It owns the progress bar shown on standard error while a query runs.
//
// Each bar is labelled with the step it measures (loading which file,
// which test) and never runs backwards: DuckDB's fraction belongs to one
// query, and a step may run several, so when the fraction falls within a
// step the next query gets a bar of its own ("loading a.csv, pass 2"),
// and a small fall (DuckDB's estimate wavering) is held at the last value.
package progress

import (
	"fmt"
	"io"
	"strings"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
)

// Source says how far the running query has come.
type Source interface {
	Progress() (fraction float64, rows uint64, ok bool)
}

// Named is a Source that also names the step now running (the workspace:
// see workspace.Step); without a name the bar reads "working".
type Named interface {
	StepName() string
}

// fall is how far the fraction must fall within one step to be taken for
// the step's next query rather than a wavering estimate.
const fall = 0.05

// Watch polls src every interval and shows a bar on w once a query has run
// for longer than delay. label names the bar when src names no step. The
// returned stop function ends the watch and clears the bar; it is safe to
// call more than once.
func Watch(src Source, w io.Writer, label string, delay time.Duration) (stop func()) {
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		tick := time.NewTicker(150 * time.Millisecond)
		defer tick.Stop()
		t := tracker{w: w, label: label, delay: delay, throttle: 100 * time.Millisecond}
		for {
			select {
			case <-done:
				t.clear()
				return
			case <-tick.C:
			}
			frac, _, ok := src.Progress()
			name := ""
			if n, isNamed := src.(Named); isNamed {
				name = n.StepName()
			}
			t.update(name, frac, ok, time.Now())
		}
	}()
	var once sync.Once
	return func() {
		once.Do(func() {
			close(done)
			wg.Wait()
		})
	}
}

// tracker turns polled fractions into bars: one per step and query, each
// shown value at least the last one of its bar.
type tracker struct {
	w        io.Writer
	label    string
	delay    time.Duration
	throttle time.Duration // least time between two drawings of a bar

	bar   *progressbar.ProgressBar
	since time.Time // when the running query was first seen
	step  string    // the step of the last fraction seen
	pass  int       // the step's query, from 1
	last  float64   // the last fraction seen in this pass
	shown float64   // the highest fraction the bar has shown
}

func (t *tracker) clear() {
	if t.bar != nil {
		t.bar.Clear()
		t.bar = nil
	}
}

func (t *tracker) update(step string, frac float64, ok bool, now time.Time) {
	if !ok {
		// No query running: the bar goes; the step's next query, if any,
		// is told apart by its fraction falling below the last.
		t.since = time.Time{}
		t.clear()
		return
	}
	frac = min(max(frac, 0), 1)
	if t.since.IsZero() {
		t.since = now
	}
	switch {
	case step != t.step || t.pass == 0:
		t.clear()
		t.step, t.pass, t.last, t.shown = step, 1, frac, 0
	case frac < t.last-fall:
		// The step's next query: a bar of its own, drawn at once, so that
		// its time estimate is not spoiled by the last query's.
		t.clear()
		t.pass++
		t.shown = 0
		t.since = now.Add(-t.delay)
	}
	t.last = frac
	if t.bar == nil && now.Sub(t.since) >= t.delay {
		t.bar = progressbar.NewOptions(1000,
			progressbar.OptionSetWriter(t.w),
			progressbar.OptionSetDescription(t.name()),
			progressbar.OptionSetWidth(barWidth),
			progressbar.OptionShowElapsedTimeOnFinish(),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionClearOnFinish(),
			progressbar.OptionThrottle(t.throttle),
		)
	}
	if t.bar != nil && frac >= t.shown {
		t.shown = frac
		t.bar.Set(int(frac * 1000))
	}
}

// A bar and its label fit a line of 80 columns (percent and times take
// about 20 more): a longer line wraps, and the redrawn bar then leaves a
// trail of lines behind.
const (
	barWidth   = 20
	labelWidth = 40
)

// name is the bar's label: the step (or the fallback label) and, from the
// step's second query on, which pass it is, shortened to labelWidth.
func (t *tracker) name() string {
	n := t.step
	if n == "" {
		n = t.label
	}
	suffix := ""
	if t.pass > 1 {
		suffix = fmt.Sprintf(", pass %d", t.pass)
	}
	return fit(n, labelWidth-len(suffix)) + suffix
}

// fit shortens s to n characters, keeping its first word (what is done)
// and its end (a file name): "loading …_ledger_2025.csv".
func fit(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	head := 0
	if i := strings.IndexRune(s, ' '); i > 0 && len([]rune(s[:i])) < n/2 {
		head = len([]rune(s[:i])) + 1
	}
	return string(r[:head]) + "…" + string(r[len(r)-(n-head-1):])
}
