package progress

import (
	"bytes"
	"strings"
	"sync"
	"testing"
	"time"
)

type fake struct {
	mu   sync.Mutex
	frac float64
	ok   bool
}

func (f *fake) Progress() (float64, uint64, bool) {
	f.mu.Lock()
	defer f.mu.Unlock()
	return f.frac, 0, f.ok
}

func (f *fake) set(frac float64, ok bool) {
	f.mu.Lock()
	f.frac, f.ok = frac, ok
	f.mu.Unlock()
}

type syncBuf struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuf) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuf) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

func TestWatchDrawsOnlyForLongQueries(t *testing.T) {
	src := &fake{}
	var out syncBuf
	stop := Watch(src, &out, "scanning", 300*time.Millisecond)
	time.Sleep(400 * time.Millisecond) // no query running: nothing drawn
	if out.String() != "" {
		t.Fatalf("drew %q with no query running", out.String())
	}
	src.set(0.42, true)
	time.Sleep(800 * time.Millisecond)
	stop()
	stop()
	if !strings.Contains(out.String(), "scanning") || !strings.Contains(out.String(), "42%") {
		t.Fatalf("bar not drawn as expected: %q", out.String())
	}
}

// TestWatchStartsANewBarForTheNextQuery: a load runs two long queries in
// a row; when the fraction falls back, the bar starts again (its elapsed
// time from zero) instead of running backwards with a spoiled estimate.
func TestWatchStartsANewBarForTheNextQuery(t *testing.T) {
	src := &fake{}
	var out syncBuf
	stop := Watch(src, &out, "loading", 100*time.Millisecond)
	src.set(0.5, true)
	time.Sleep(1300 * time.Millisecond)
	src.set(0.6, true)
	time.Sleep(300 * time.Millisecond)
	before := out.String()
	if !strings.Contains(before, "60%") || !strings.Contains(before, "[1s:") {
		t.Fatalf("first bar not drawn as expected: %q", before)
	}
	src.set(0.1, true)
	time.Sleep(400 * time.Millisecond)
	stop()
	after := out.String()[len(before):]
	i := strings.LastIndex(after, "10%")
	if i < 0 || !strings.Contains(after[i:], "[0s:") {
		t.Fatalf("no new bar from zero after the fraction fell: %q", after)
	}
}
