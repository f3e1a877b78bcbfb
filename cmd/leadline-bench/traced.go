package main

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"time"
)

// commitMark is the line LEADLINE_TRACE=1 makes a load print when its
// transaction has committed: for files in place, registration and the
// completeness pass are done, and what follows (the journal checks and
// the printed summary) reads the committed ledger.
const commitMark = "trace: commit"

// tracedRun is one leadline process run with LEADLINE_TRACE=1, timed as a
// whole and up to a line it prints on standard error.
type tracedRun struct {
	seconds, peakMiB, cpuSeconds float64 // the whole process
	// markSeconds is the wall time from the start to the first line that
	// starts with the mark (-1 when none came); markPeakMiB the process's
	// peak resident memory then (VmHWM; -1 where /proc is missing).
	markSeconds, markPeakMiB float64
	// stopped: the process ran longer than the limit after the mark and
	// was stopped; seconds and peakMiB are then up to the stop.
	stopped bool
	// load1 is the machine's mean one-minute load average while the
	// process ran (sampled from /proc/loadavg; -1 where it is missing).
	load1          float64
	stdout, stderr string
	failure        string // the end of standard error of a process that failed
}

// runTraced runs prog with args and LEADLINE_TRACE=1, and notes when its
// standard error first shows a line starting with mark. With limit > 0, a
// process still running limit after the mark is stopped (stopped is then
// true and no error is returned).
func runTraced(ctx context.Context, prog string, args []string, mark string, limit time.Duration) (tracedRun, error) {
	r := tracedRun{markSeconds: -1, markPeakMiB: -1}
	cmd := exec.CommandContext(ctx, prog, args...)
	cmd.Env = append(os.Environ(), "LEADLINE_NO_PROGRESS=1", "LEADLINE_TRACE=1")
	var out, errb bytes.Buffer
	cmd.Stdout = &out
	pipe, err := cmd.StderrPipe()
	if err != nil {
		return r, err
	}
	sampler := startLoadSampler()
	t0 := time.Now()
	if err := cmd.Start(); err != nil {
		sampler.stop()
		return r, err
	}
	var mu sync.Mutex
	var timer *time.Timer
	sc := bufio.NewScanner(pipe)
	sc.Buffer(make([]byte, 64*1024), 16*1024*1024)
	for sc.Scan() {
		line := sc.Text()
		errb.WriteString(line)
		errb.WriteByte('\n')
		if mark != "" && r.markSeconds < 0 && strings.HasPrefix(line, mark) {
			r.markSeconds = time.Since(t0).Seconds()
			r.markPeakMiB = peakRSSMiB(cmd.Process.Pid)
			if limit > 0 {
				timer = time.AfterFunc(limit, func() {
					mu.Lock()
					r.stopped = true
					mu.Unlock()
					cmd.Process.Kill()
				})
			}
		}
	}
	err = cmd.Wait()
	if timer != nil {
		timer.Stop()
	}
	r.seconds = time.Since(t0).Seconds()
	r.load1 = sampler.stop()
	r.stdout, r.stderr = out.String(), errb.String()
	if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
		r.peakMiB = float64(ru.Maxrss) / 1024 // Linux reports KiB
		r.cpuSeconds = float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)/1e6
	}
	mu.Lock()
	stopped := r.stopped
	mu.Unlock()
	if err != nil && !stopped {
		r.failure = lastLines(r.stderr, 20)
		return r, fmt.Errorf("%v\n%s", err, r.failure)
	}
	return r, nil
}

// peakRSSMiB is a running process's peak resident memory so far (VmHWM
// in /proc/PID/status), or -1 when it cannot be read.
func peakRSSMiB(pid int) float64 {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		return -1
	}
	for _, line := range strings.Split(string(b), "\n") {
		if rest, ok := strings.CutPrefix(line, "VmHWM:"); ok {
			f := strings.Fields(rest)
			if len(f) >= 1 {
				if kb, err := strconv.ParseFloat(f[0], 64); err == nil {
					return kb / 1024
				}
			}
		}
	}
	return -1
}

// loadSampler reads the one-minute load average every few seconds.
type loadSampler struct {
	done chan struct{}
	mean chan float64
}

func startLoadSampler() *loadSampler {
	s := &loadSampler{done: make(chan struct{}), mean: make(chan float64, 1)}
	go func() {
		var sum float64
		n := 0
		take := func() {
			if v, ok := loadAverage(); ok {
				sum += v
				n++
			}
		}
		take()
		tick := time.NewTicker(5 * time.Second)
		defer tick.Stop()
		for {
			select {
			case <-tick.C:
				take()
			case <-s.done:
				take()
				if n == 0 {
					s.mean <- -1
				} else {
					s.mean <- sum / float64(n)
				}
				return
			}
		}
	}()
	return s
}

// stop ends the sampling and returns the mean (-1 when never read).
func (s *loadSampler) stop() float64 {
	close(s.done)
	return <-s.mean
}

// loadAverage is the machine's one-minute load average.
func loadAverage() (float64, bool) {
	b, err := os.ReadFile("/proc/loadavg")
	if err != nil {
		return 0, false
	}
	f := strings.Fields(string(b))
	if len(f) == 0 {
		return 0, false
	}
	v, err := strconv.ParseFloat(f[0], 64)
	return v, err == nil
}

// lastLines is the last n lines of s.
func lastLines(s string, n int) string {
	lines := strings.Split(strings.TrimRight(s, "\n"), "\n")
	if len(lines) > n {
		lines = lines[len(lines)-n:]
	}
	return strings.Join(lines, "\n")
}

// mib prints a memory figure, "n/a" when unknown.
func mib(v float64) string {
	if v < 0 {
		return "n/a"
	}
	return fmt.Sprintf("%.0f", v)
}
