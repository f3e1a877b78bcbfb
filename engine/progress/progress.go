// Package progress draws a progress bar on the terminal while a long query
// runs in the workspace. It polls DuckDB's own estimate of how far the
// running query has come and draws with github.com/schollz/progressbar.
// It writes nothing unless told that its writer is a terminal, so
// machine-readable output on standard output is never touched.
//
// It owns the progress bar shown on standard error while a query runs.
package progress

import (
	"io"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
)

// Source says how far the running query has come.
type Source interface {
	Progress() (fraction float64, rows uint64, ok bool)
}

// Watch polls src every interval and shows a bar on w once a query has run
// for longer than delay. The returned stop function ends the watch and
// clears the bar; it is safe to call more than once.
func Watch(src Source, w io.Writer, label string, delay time.Duration) (stop func()) {
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		tick := time.NewTicker(150 * time.Millisecond)
		defer tick.Stop()
		var bar *progressbar.ProgressBar
		var since time.Time
		var last float64
		for {
			select {
			case <-done:
				if bar != nil {
					bar.Clear()
				}
				return
			case <-tick.C:
			}
			frac, _, ok := src.Progress()
			if !ok {
				since = time.Time{}
				if bar != nil {
					bar.Clear()
					bar = nil
				}
				continue
			}
			if since.IsZero() {
				since = time.Now()
			}
			// A fraction well below the last one is the next query of a
			// step (a load stages its file, then inserts it): start a new
			// bar, so that its time estimate is not spoiled by the last.
			if bar != nil && frac < last-0.05 {
				bar.Clear()
				bar = nil
				since = time.Now().Add(-delay)
			}
			last = frac
			if bar == nil && time.Since(since) >= delay {
				bar = progressbar.NewOptions(1000,
					progressbar.OptionSetWriter(w),
					progressbar.OptionSetDescription(label),
					progressbar.OptionSetWidth(30),
					progressbar.OptionShowElapsedTimeOnFinish(),
					progressbar.OptionSetPredictTime(true),
					progressbar.OptionClearOnFinish(),
					progressbar.OptionThrottle(100*time.Millisecond),
				)
			}
			if bar != nil {
				bar.Set(int(frac * 1000))
			}
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
