package workspace

import (
	"bytes"
	"context"
	"database/sql"
	"errors"
	"os"
	"path/filepath"
	"testing"

	_ "github.com/duckdb/duckdb-go/v2"
)

// TestOpenRefusesNonWorkspaceFile: an existing file that is not a leadline
// workspace (a CSV named as --db, an empty file, a folder, another
// program's DuckDB database) is refused and left byte for byte as it was.
func TestOpenRefusesNonWorkspaceFile(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	csvPath := filepath.Join(dir, "notes.csv")
	write(t, csvPath, []byte("entity,amount\nE1,10.00\nE2,20.00\n"))
	emptyPath := filepath.Join(dir, "empty.duckdb")
	write(t, emptyPath, nil)
	short := filepath.Join(dir, "short.duckdb")
	write(t, short, []byte("DUCK"))
	folder := filepath.Join(dir, "folder.duckdb")
	if err := os.Mkdir(folder, 0o755); err != nil {
		t.Fatal(err)
	}
	other := filepath.Join(dir, "other.duckdb")
	db, err := sql.Open("duckdb", other)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.Exec("CREATE TABLE clients (name VARCHAR); INSERT INTO clients VALUES ('Acme')"); err != nil {
		t.Fatal(err)
	}
	db.Close()

	for _, path := range []string{csvPath, emptyPath, short, folder, other} {
		for _, opts := range []Options{{}, {MustExist: true}, {ReadOnly: true}} {
			before := snapshot(t, path)
			ws, err := Open(ctx, path, opts)
			if err == nil {
				ws.Close()
				t.Fatalf("%s (%+v): opened as a workspace", filepath.Base(path), opts)
			}
			if !errors.Is(err, ErrNotWorkspace) {
				t.Fatalf("%s (%+v): want ErrNotWorkspace, got %v", filepath.Base(path), opts, err)
			}
			if !bytes.Contains([]byte(err.Error()), []byte(path)) {
				t.Errorf("%s: the message does not name the file: %v", filepath.Base(path), err)
			}
			if after := snapshot(t, path); after != before {
				t.Fatalf("%s (%+v): the file changed although it was refused", filepath.Base(path), opts)
			}
			if _, err := os.Stat(path + ".wal"); err == nil {
				t.Fatalf("%s: a .wal file was created beside it", filepath.Base(path))
			}
		}
	}
}

// TestOpenMustExistNeverCreates: a command that works on an existing
// workspace, given a mistyped path, says so and creates nothing.
func TestOpenMustExistNeverCreates(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	typo := filepath.Join(dir, "typo.duckdb")
	for _, opts := range []Options{{MustExist: true}, {ReadOnly: true}} {
		_, err := Open(ctx, typo, opts)
		if !errors.Is(err, ErrNoWorkspace) {
			t.Fatalf("%+v: want ErrNoWorkspace, got %v", opts, err)
		}
		for _, want := range []string{typo, "leadline load"} {
			if !bytes.Contains([]byte(err.Error()), []byte(want)) {
				t.Errorf("message lacks %q: %v", want, err)
			}
		}
		if entries, _ := os.ReadDir(dir); len(entries) != 0 {
			t.Fatalf("%+v: files were created: %v", opts, entries)
		}
	}
	// A DuckDB file without any table holds no workspace either.
	bare := filepath.Join(dir, "bare.duckdb")
	db, err := sql.Open("duckdb", bare)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.Exec("CHECKPOINT"); err != nil {
		t.Fatal(err)
	}
	db.Close()
	if _, err := Open(ctx, bare, Options{MustExist: true}); !errors.Is(err, ErrNoWorkspace) {
		t.Fatalf("bare DuckDB file: want ErrNoWorkspace, got %v", err)
	}
	// Load creates it (no MustExist); afterwards every mode opens it.
	ws, err := Open(ctx, typo, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if ok, err := ws.Marked(ctx); err != nil || !ok {
		t.Fatalf("new workspace carries no marker: %v %v", ok, err)
	}
	var metaRows int
	if err := ws.Conn.QueryRowContext(ctx, "SELECT count(*) FROM meta").Scan(&metaRows); err != nil || metaRows != 0 {
		t.Fatalf("the marker added rows to meta: %d %v", metaRows, err)
	}
	ws.Close()
	for _, opts := range []Options{{MustExist: true}, {ReadOnly: true}} {
		ws, err := Open(ctx, typo, opts)
		if err != nil {
			t.Fatalf("%+v: %v", opts, err)
		}
		ws.Close()
	}
}

// TestOpenAcceptsWorkspaceWithoutMarker: a workspace made before the
// marker existed (its five tables, no marker) still opens, and gets the
// marker on its next writable open.
func TestOpenAcceptsWorkspaceWithoutMarker(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "old.duckdb")
	ws, err := Open(ctx, path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ws.Conn.ExecContext(ctx, "COMMENT ON TABLE meta IS NULL"); err != nil {
		t.Fatal(err)
	}
	ws.Close()
	ws, err = Open(ctx, path, Options{MustExist: true})
	if err != nil {
		t.Fatalf("workspace without marker refused: %v", err)
	}
	defer ws.Close()
	if ok, _ := ws.Marked(ctx); !ok {
		t.Fatal("marker not written on a writable open")
	}
}

func write(t *testing.T, path string, b []byte) {
	t.Helper()
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// snapshot is a file's bytes (or a folder's entry names).
func snapshot(t *testing.T, path string) string {
	t.Helper()
	info, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if info.IsDir() {
		entries, _ := os.ReadDir(path)
		s := "dir:"
		for _, e := range entries {
			s += e.Name() + ";"
		}
		return s
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
