package workspace

import (
	"bufio"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strings"

	"github.com/leadline/leadline/queries"
)

// ErrFileChanged is returned when a file registered in place (leadline
// load --in-place) is missing or differs from its record: the ledger is a
// view over the file, so every result would silently come from other rows.
var ErrFileChanged = errors.New("a file registered in place is missing or changed")

// PlacedFile is one file registered in place, as checked now.
type PlacedFile struct {
	FileID  int64  `json:"file_id"`
	Path    string `json:"path"`
	Size    int64  `json:"size_bytes"`
	MtimeNS int64  `json:"mtime_ns"`
	SHA256  string `json:"sha256"`
	// Status is "unchanged" (size and time as recorded), "unchanged
	// (hash checked)" (content hashed and equal), or what changed.
	Status string `json:"status"`
	OK     bool   `json:"ok"`
}

// InPlace reports whether the workspace has files registered in place.
func (ws *Workspace) InPlace(ctx context.Context) (bool, error) {
	var n int
	if err := ws.Conn.QueryRowContext(ctx, queries.Get("inplace_table_exists")).Scan(&n); err != nil {
		return false, err
	}
	return n > 0, nil
}

// CheckFiles compares every file registered in place with its record: size
// and modification time always; the SHA-256 when either differs, or for
// every file when hashAll is set (leadline verify). A file whose time
// changed but whose content did not is accepted (and its new time kept,
// unless the workspace is read-only). Files in skip (absolute paths) are
// not checked: a load that replaces them. It returns every file's state,
// and ErrFileChanged naming each file that is missing or changed.
func (ws *Workspace) CheckFiles(ctx context.Context, hashAll bool, skip map[string]bool) ([]PlacedFile, error) {
	has, err := ws.InPlace(ctx)
	if err != nil || !has {
		return nil, err
	}
	rows, err := ws.Conn.QueryContext(ctx, queries.Get("inplace_registered"))
	if err != nil {
		return nil, err
	}
	var files []PlacedFile
	for rows.Next() {
		var f PlacedFile
		if err := rows.Scan(&f.FileID, &f.Path, &f.Size, &f.MtimeNS, &f.SHA256); err != nil {
			rows.Close()
			return nil, err
		}
		files = append(files, f)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	var problems []string
	for i := range files {
		f := &files[i]
		if skip[f.Path] {
			f.Status, f.OK = "being replaced", true
			continue
		}
		touched, err := checkOne(f, hashAll)
		if err != nil {
			return nil, err
		}
		if !f.OK {
			problems = append(problems, f.Path+": "+f.Status)
			continue
		}
		if touched != 0 && !ws.opts.ReadOnly {
			if _, err := ws.Conn.ExecContext(ctx, queries.Get("inplace_touch"), touched, f.FileID); err != nil {
				return nil, err
			}
		}
	}
	if len(problems) > 0 {
		return files, fmt.Errorf("%w: %s. The workspace's ledger reads these files where they lie, so leadline will not run on them: put the registered version back, or register the file again with leadline load --in-place --replace FILE (or load a copy into another --db)",
			ErrFileChanged, strings.Join(problems, "; "))
	}
	return files, nil
}

// checkOne sets f's status; touched is the file's new modification time
// when only that changed.
func checkOne(f *PlacedFile, hashAll bool) (touched int64, err error) {
	st, err := os.Stat(f.Path)
	if errors.Is(err, fs.ErrNotExist) {
		f.Status = fmt.Sprintf("missing (registered in place as file %d, %d bytes, SHA-256 %s)", f.FileID, f.Size, short(f.SHA256))
		return 0, nil
	}
	if err != nil {
		f.Status = fmt.Sprintf("cannot be read: %v", err)
		return 0, nil
	}
	size, mtime := st.Size(), st.ModTime().UnixNano()
	if size != f.Size {
		f.Status = fmt.Sprintf("changed since it was registered in place as file %d: %d bytes then, %d now", f.FileID, f.Size, size)
		return 0, nil
	}
	if mtime == f.MtimeNS && !hashAll {
		f.Status, f.OK = "unchanged", true
		return 0, nil
	}
	sum, err := hashFile(f.Path)
	if err != nil {
		f.Status = fmt.Sprintf("cannot be read: %v", err)
		return 0, nil
	}
	if sum != f.SHA256 {
		f.Status = fmt.Sprintf("changed since it was registered in place as file %d: same size, other content (SHA-256 %s then, %s now)", f.FileID, short(f.SHA256), short(sum))
		return 0, nil
	}
	f.Status, f.OK = "unchanged (hash checked)", true
	if mtime != f.MtimeNS {
		f.Status = "unchanged (hash checked; only its modification time changed)"
		return mtime, nil
	}
	return 0, nil
}

func short(sum string) string {
	if len(sum) > 12 {
		return sum[:12]
	}
	return sum
}

func hashFile(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, bufio.NewReaderSize(f, 1<<20)); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
