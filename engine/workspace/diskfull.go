package workspace

import (
	"fmt"
	"path/filepath"
	"strings"
)

// DiskFull returns, when err says that a write to the workspace file or
// its write-ahead log failed for want of room, an error naming the
// workspace's disk and what to do; otherwise nil. (A full temporary
// folder is another matter, with another fix: --temp-dir.)
func (ws *Workspace) DiskFull(err error) error {
	if err == nil || ws.Path == ":memory:" {
		return nil
	}
	msg := err.Error()
	low := strings.ToLower(msg)
	if !strings.Contains(low, "no space left on device") && !strings.Contains(low, "disk full") && !strings.Contains(low, "not enough space") {
		return nil
	}
	names := []string{ws.Path}
	if abs, aerr := filepath.Abs(ws.Path); aerr == nil {
		names = append(names, abs)
	}
	for _, n := range names {
		for _, f := range []string{n + ".wal", n} {
			if strings.Contains(msg, `"`+f+`"`) || strings.Contains(msg, f+":") || strings.HasSuffix(msg, f) {
				return fmt.Errorf("the disk holding the workspace %s is full (writing %s failed); nothing was loaded. Free space on that disk, or give a workspace on a disk with room (--db); the temporary folder is not the cause (DuckDB: %s)",
					ws.Path, filepath.Base(f), firstLine(msg))
			}
		}
	}
	return nil
}
