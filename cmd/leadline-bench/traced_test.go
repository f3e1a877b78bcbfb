package main

import (
	"context"
	"os/exec"
	"runtime"
	"testing"
	"time"
)

// TestRunTracedMark: the time to the mark line is taken when the line
// comes, not at the end, and a process running past the limit after the
// mark is stopped and reported as stopped, not as failed.
func TestRunTracedMark(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("reads /proc")
	}
	sh, err := exec.LookPath("sh")
	if err != nil {
		t.Skip("no sh")
	}
	ctx := context.Background()
	r, err := runTraced(ctx, sh, []string{"-c", `echo "SELECT 1;" >&2; echo "trace: commit  0.01s" >&2; sleep 1`}, commitMark, 0)
	if err != nil {
		t.Fatal(err)
	}
	if r.markSeconds < 0 || r.markSeconds > r.seconds-0.5 || r.seconds < 1 {
		t.Errorf("mark at %.2f s of %.2f s: want the mark before the one-second sleep", r.markSeconds, r.seconds)
	}
	if r.markPeakMiB <= 0 || r.peakMiB <= 0 {
		t.Errorf("peak memory at the mark %.1f MiB, at the end %.1f MiB: want both measured", r.markPeakMiB, r.peakMiB)
	}
	if r.stopped {
		t.Error("stopped without a limit")
	}

	t0 := time.Now()
	r, err = runTraced(ctx, sh, []string{"-c", `echo "trace: commit" >&2; exec sleep 30`}, commitMark, 200*time.Millisecond)
	if err != nil {
		t.Fatalf("a process stopped by the limit is not a failure: %v", err)
	}
	if !r.stopped || time.Since(t0) > 10*time.Second {
		t.Errorf("stopped %v after %s: want it stopped 0.2 s after the mark", r.stopped, time.Since(t0))
	}

	r, err = runTraced(ctx, sh, []string{"-c", `echo "trace: commit" >&2; echo "leadline load: load 1 is committed, but the journal checks failed: out of memory" >&2; exit 1`}, commitMark, 0)
	if err == nil || r.markSeconds < 0 {
		t.Fatalf("a failure after the mark: err %v, mark %.2f; want the error and the mark", err, r.markSeconds)
	}
	if got, want := oneLineOf(r.failure), "load 1 is committed, but the journal checks failed: out of memory"; got != want {
		t.Errorf("oneLineOf = %q, want %q", got, want)
	}

	r, _ = runTraced(ctx, sh, []string{"-c", `echo "no mark here" >&2`}, commitMark, 0)
	if r.markSeconds >= 0 {
		t.Errorf("mark found at %.2f s in output without it", r.markSeconds)
	}
}
