package workspace

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"

	"github.com/leadline/leadline/queries"
)

// ErrUnsafeOutput is returned for an output file that must not be written.
var ErrUnsafeOutput = errors.New("refusing to write")

// CheckOutputFile says whether a command may write the file path (drill
// --out, report --out): not through a symbolic link (leadline writes only
// where it was told, never where a link points), and never over a loaded
// input of the workspace or the workspace itself, which would destroy the
// evidence the results stand on.
func (ws *Workspace) CheckOutputFile(ctx context.Context, path string) error {
	// Both the path as given and as cleaned: some writers (DuckDB's COPY)
	// clean "x/../in.csv" to "in.csv" although "x" does not exist.
	if clean := filepath.Clean(path); clean != path {
		if err := ws.CheckOutputFile(ctx, clean); err != nil {
			return err
		}
	}
	fi, err := os.Lstat(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("%w %s: %v", ErrUnsafeOutput, path, err)
	}
	if fi.Mode()&fs.ModeSymlink != 0 {
		target, _ := filepath.EvalSymlinks(path)
		return fmt.Errorf("%w %s: it is a symbolic link (to %s), which leadline never writes through; give another --out", ErrUnsafeOutput, path, target)
	}
	if fi.IsDir() {
		return fmt.Errorf("%w %s: it is a folder; give a file name with --out", ErrUnsafeOutput, path)
	}
	if ws.Path != ":memory:" {
		for _, p := range []string{ws.Path, ws.Path + ".wal"} {
			if same(fi, p) {
				return fmt.Errorf("%w %s: it is the workspace; give another --out", ErrUnsafeOutput, path)
			}
		}
	}
	rows, err := ws.Conn.QueryContext(ctx, queries.Get("input_paths"))
	if err != nil {
		return fmt.Errorf("listing the loaded files: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var p string
		if err := rows.Scan(&p); err != nil {
			return err
		}
		if same(fi, p) {
			return fmt.Errorf("%w %s: it is a loaded input of the workspace (%s); leadline never overwrites its inputs: give another --out", ErrUnsafeOutput, path, p)
		}
	}
	return rows.Err()
}

func same(fi fs.FileInfo, path string) bool {
	other, err := os.Stat(path)
	return err == nil && os.SameFile(fi, other)
}
