//go:build !unix

package main

// processCPU is not measured on this platform.
func processCPU() float64 { return 0 }
