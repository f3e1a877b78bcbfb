package workspace

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"time"
)

// ErrLocked is returned by TryLock when another process (or another run
// in this one) holds the lock.
var ErrLocked = errors.New("locked")

// Lock is an exclusive lock on NAME.lock beside a workspace file. It
// guards what DuckDB's own lock cannot: the time when the workspace file
// is closed and being replaced (a pack's reload and swap).
type Lock struct {
	Path string
	f    *os.File
}

// LockPath is the lock file of the workspace at path.
func LockPath(path string) string { return path + ".lock" }

// AcquireLock takes the lock of the workspace at path, waiting while
// another holder has it (saying so once on log) until ctx ends.
func AcquireLock(ctx context.Context, path string, log io.Writer) (*Lock, error) {
	said := false
	for {
		l, err := TryLock(path)
		if err == nil {
			return l, nil
		}
		if !errors.Is(err, ErrLocked) {
			return nil, err
		}
		if !said && log != nil {
			fmt.Fprintf(log, "Waiting for another run that is using the workspace %s (lock %s)\n", path, LockPath(path))
			said = true
		}
		select {
		case <-ctx.Done():
			return nil, fmt.Errorf("waiting for the workspace %s (another run holds %s): %w", path, LockPath(path), ctx.Err())
		case <-time.After(100 * time.Millisecond):
		}
	}
}

// Unlock releases the lock. With flock the lock file stays: removing it
// would let a third process lock a new file while a second still waits on
// the old one.
func (l *Lock) Unlock() error {
	if l == nil || l.f == nil {
		return nil
	}
	err := l.f.Close()
	if rerr := released(l.Path); err == nil {
		err = rerr
	}
	l.f = nil
	return err
}
