//go:build unix

package main

import "syscall"

// processCPU returns the CPU time (user + system) this process has used,
// in seconds: the benchmark reports it beside wall time, because on a
// machine shared with other work CPU time moves far less than wall time.
func processCPU() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)/1e6
}
