package workspace

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strings"

	"github.com/leadline/leadline/queries"
)

// ErrNotWorkspace is returned for an existing file that is not a leadline
// workspace: leadline never opens, moves or overwrites such a file.
var ErrNotWorkspace = errors.New("not a leadline workspace")

// ErrNoWorkspace is returned when a command that needs an existing
// workspace is given a path where there is none.
var ErrNoWorkspace = errors.New("no workspace")

// Marker is the comment on the meta table that marks a database file as a
// leadline workspace; Open writes it when it creates the schema.
const Marker = "leadline workspace"

// Marked reports whether the workspace carries the marker.
func (ws *Workspace) Marked(ctx context.Context) (bool, error) {
	var c string
	err := ws.Conn.QueryRowContext(ctx, queries.Get("workspace_marker")).Scan(&c)
	if errors.Is(err, sql.ErrNoRows) {
		return false, nil
	}
	return c == Marker, err
}

// schemaTables are the tables every leadline workspace has had since its
// first version: a file holding all of them is a workspace even without
// the marker (one made before the marker was written).
var schemaTables = []string{"files", "loads", "meta", "rejects", "runs"}

// duckMagic sits at byte 8 of every DuckDB database file (after the
// header's checksum).
const duckMagic = "DUCK"

// CheckFile says, without changing anything, whether path may be opened
// as a workspace: exists reports whether a file is there. A missing file
// is fine (a new workspace); a folder, an empty file or a file that is not
// a DuckDB database is refused, naming the path and what is in it.
func CheckFile(path string) (exists bool, err error) {
	info, err := os.Stat(path)
	if errors.Is(err, fs.ErrNotExist) {
		return false, nil
	}
	if err != nil {
		return false, fmt.Errorf("workspace %s: %w", path, err)
	}
	if info.IsDir() {
		return true, fmt.Errorf("%w: %s is a folder; give a workspace file such as %s", ErrNotWorkspace, path, suggest(path))
	}
	if info.Size() == 0 {
		return true, fmt.Errorf("%w: %s is an empty file (0 bytes), not a workspace; remove it to let leadline create the workspace there, or give another --db such as %s", ErrNotWorkspace, path, suggest(path))
	}
	f, err := os.Open(path)
	if err != nil {
		return true, fmt.Errorf("workspace %s: %w", path, err)
	}
	defer f.Close()
	head := make([]byte, 12)
	n, _ := io.ReadFull(f, head)
	if n < len(head) || string(head[8:12]) != duckMagic {
		return true, fmt.Errorf("%w: %s exists and is not a DuckDB database (it begins %q); leadline leaves it untouched: give another --db (or [pack] workspace) such as %s",
			ErrNotWorkspace, path, printable(head[:n]), suggest(path))
	}
	return true, nil
}

// checkSchema refuses a DuckDB database that holds tables but is not a
// leadline workspace. empty reports a database without any table (new, or
// created but never given the schema).
func (ws *Workspace) checkSchema(ctx context.Context) (empty bool, err error) {
	rows, err := ws.Conn.QueryContext(ctx, queries.Get("workspace_tables"))
	if err != nil {
		return false, fmt.Errorf("workspace %s: listing its tables: %w", ws.Path, err)
	}
	defer rows.Close()
	have := map[string]bool{}
	var names []string
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			return false, err
		}
		have[n] = true
		names = append(names, n)
	}
	if err := rows.Err(); err != nil {
		return false, err
	}
	if len(names) == 0 {
		return true, nil
	}
	if have["meta"] {
		if ok, err := ws.Marked(ctx); err == nil && ok {
			return false, nil
		}
	}
	for _, t := range schemaTables {
		if !have[t] {
			if len(names) > 5 {
				names = append(names[:5], "...")
			}
			return false, fmt.Errorf("%w: %s is a DuckDB database of something else (tables: %s); leadline leaves it untouched: give another --db (or [pack] workspace) such as %s",
				ErrNotWorkspace, ws.Path, strings.Join(names, ", "), suggest(ws.Path))
		}
	}
	return false, nil
}

func suggest(path string) string {
	base := path
	if i := strings.LastIndexAny(base, `/\`); i >= 0 {
		base = base[i+1:]
	}
	if i := strings.LastIndexByte(base, '.'); i > 0 {
		base = base[:i]
	}
	if base == "" {
		base = "leadline"
	}
	return base + "-workspace.duckdb"
}

func printable(b []byte) string {
	var sb strings.Builder
	for _, c := range b {
		if c >= 0x20 && c < 0x7f {
			sb.WriteByte(c)
		} else {
			sb.WriteByte('.')
		}
	}
	return sb.String()
}
