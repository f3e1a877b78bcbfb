package workspace_test

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
)

func writeLedger(t *testing.T, path string, rows int, prefix string) {
	t.Helper()
	var b strings.Builder
	b.WriteString("entity,amount,descr\n")
	for i := 0; i < rows; i++ {
		fmt.Fprintf(&b, "%s%d,%d.%02d,%s\n", prefix, i%7, 10+(i*7919)%900000, i%100, strings.Repeat("x", 5+i%37))
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestWorkspaceDiskFull: a load that fills the disk holding the workspace
// (a 2 MiB tmpfs; mounting one needs root, skipped otherwise) fails with a
// message that names the workspace's disk, not the temporary folder, and
// leaves the workspace as it was.
func TestWorkspaceDiskFull(t *testing.T) {
	if testing.Short() {
		t.Skip("large input; skipped with -short")
	}
	ctx := context.Background()
	dir := t.TempDir()
	disk := filepath.Join(dir, "disk")
	if err := os.Mkdir(disk, 0o755); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "size=2m", "tmpfs", disk).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a tmpfs here: %v %s", err, out)
	}
	defer exec.Command("umount", disk).Run()
	small, big := filepath.Join(dir, "small.csv"), filepath.Join(dir, "big.csv")
	writeLedger(t, small, 20_000, "E")
	writeLedger(t, big, 400_000, "F")
	p := filepath.Join(disk, "ws.duckdb")
	spill := filepath.Join(dir, "spill")
	ws, err := workspace.Open(ctx, p, workspace.Options{TempDir: spill})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := load.Load(ctx, ws, []string{small}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	_, err = load.Load(ctx, ws, []string{big}, load.Options{})
	ws.Close()
	if err == nil {
		t.Fatal("400,000 rows fitted in a 2 MiB workspace disk; make the file bigger")
	}
	msg := err.Error()
	t.Log(msg)
	if !strings.Contains(msg, "the disk holding the workspace "+p) || strings.Contains(msg, "temporary folder where") {
		t.Errorf("message does not blame the workspace's disk: %s", msg)
	}
	ws, err = workspace.Open(ctx, p, workspace.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	var rows, files int64
	if err := ws.Conn.QueryRowContext(ctx, "SELECT (SELECT count(*) FROM ledger), (SELECT count(*) FROM files)").Scan(&rows, &files); err != nil {
		t.Fatal(err)
	}
	if rows != 20_000 || files != 1 {
		t.Errorf("after the failed load: %d rows, %d files; want 20000 and 1", rows, files)
	}
}

// TestDiskFullNamesTheRightDisk: the message names the workspace's disk
// only when the failed write was to the workspace or its log (DuckDB's
// message text, as it reads in 1.x: from memory of its IO errors, checked
// against a real full tmpfs in TestWorkspaceDiskFull).
func TestDiskFullNamesTheRightDisk(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "ws.duckdb")
	ws, err := workspace.Open(context.Background(), p, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	for _, c := range []struct {
		msg  string
		want bool
	}{
		{`IO Error: Could not write file "` + p + `": No space left on device`, true},
		{`IO Error: Could not write file "` + p + `.wal": No space left on device`, true},
		{`IO Error: Could not write file "` + filepath.Join(dir, ".tmp", "duckdb_temp_storage-0.tmp") + `": No space left on device`, false},
		{`Out of Memory Error: failed to offload data block`, false},
	} {
		got := ws.DiskFull(errors.New(c.msg)) != nil
		if got != c.want {
			t.Errorf("%s: workspace disk full %v, want %v", c.msg, got, c.want)
		}
	}
}
