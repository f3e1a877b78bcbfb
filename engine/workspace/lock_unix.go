//go:build unix

package workspace

import (
	"errors"
	"fmt"
	"os"
	"syscall"
)

// TryLock takes the lock without waiting. flock locks belong to the open
// file, so two runs in one process exclude each other too, and the kernel
// releases the lock of a killed process.
func TryLock(path string) (*Lock, error) {
	lp := LockPath(path)
	f, err := os.OpenFile(lp, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("workspace lock %s: %w", lp, err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, fmt.Errorf("workspace lock %s: %w", lp, ErrLocked)
		}
		return nil, fmt.Errorf("workspace lock %s: %w", lp, err)
	}
	return &Lock{Path: lp, f: f}, nil
}

// released: closing the file has already released the flock.
func released(string) error { return nil }
