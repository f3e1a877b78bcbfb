//go:build !unix

package workspace

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
)

// TryLock takes the lock without waiting. Without flock the lock is the
// lock file itself, created exclusively: a process killed while holding it
// leaves it behind, and the message says to remove it.
func TryLock(path string) (*Lock, error) {
	lp := LockPath(path)
	f, err := os.OpenFile(lp, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o644)
	if errors.Is(err, fs.ErrExist) {
		return nil, fmt.Errorf("workspace lock %s (remove it if no leadline is running): %w", lp, ErrLocked)
	}
	if err != nil {
		return nil, fmt.Errorf("workspace lock %s: %w", lp, err)
	}
	return &Lock{Path: lp, f: f}, nil
}

// released removes the lock file, which is the lock.
func released(lp string) error { return os.Remove(lp) }
