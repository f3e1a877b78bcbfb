package pack

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/workspace"
)

// The test binary doubles as a `leadline run` of one pack when
// LEADLINE_PACK_HELPER is set: the concurrent and killed runs below are
// separate processes, as two analysts' runs would be.
func init() {
	if os.Getenv("LEADLINE_PACK_HELPER") == "" {
		return
	}
	if pause := os.Getenv("LEADLINE_PACK_PAUSE"); pause != "" {
		swapStep = func(s string) error {
			if s == pause {
				fmt.Println("PAUSED " + s)
				select {} // wait here until killed
			}
			return nil
		}
	}
	var extra []output.Writer
	if os.Getenv("LEADLINE_PACK_BLOCK_WRITER") != "" {
		extra = append(extra, output.WriterFunc{Label: "blocked", Fn: func(context.Context, string, *output.Run) ([]string, error) {
			fmt.Println("PAUSED writer")
			select {} // wait here until killed, in the middle of writing the output folder
		}})
	}
	p, err := Read(os.Getenv("LEADLINE_PACK_HELPER"))
	if err == nil {
		var res *Result
		res, err = Run(context.Background(), p, RunOptions{Out: os.Getenv("LEADLINE_PACK_OUT"), Fresh: os.Getenv("LEADLINE_PACK_FRESH") != "", Output: output.Options{Extra: extra}})
		if err == nil {
			fmt.Println("ACTION " + res.Run.Manifest.Run.WorkspaceAction)
		}
	}
	if err != nil {
		fmt.Println("ERROR " + err.Error())
		os.Exit(1)
	}
	os.Exit(0)
}

func helper(packPath, out string, env ...string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), append([]string{"LEADLINE_PACK_HELPER=" + packPath, "LEADLINE_PACK_OUT=" + out}, env...)...)
	return cmd
}

// packRuns lists the output folders of the pack runs stored in the
// workspace file at path ("" when the file is missing).
func packRuns(t *testing.T, path string) string {
	t.Helper()
	if _, err := os.Stat(path); err != nil {
		return ""
	}
	ws, err := workspace.Open(context.Background(), path, workspace.Options{ReadOnly: true})
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	defer ws.Close()
	rows, err := ws.Conn.QueryContext(context.Background(), "SELECT json_extract_string(params, '$.out') FROM runs WHERE kind = 'pack' ORDER BY run_id")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var outs []string
	for rows.Next() {
		var o string
		if err := rows.Scan(&o); err != nil {
			t.Fatal(err)
		}
		outs = append(outs, filepath.Base(o))
	}
	return strings.Join(outs, ",")
}

// TestConcurrentReloadsKeepWorkspace: two runs of one pack that both need
// a reload, started together in two processes. Both succeed (one reloads,
// the other waits for the lock and reuses what the first loaded), and the
// original workspace with its stored run is kept as NAME.previous.
func TestConcurrentReloadsKeepWorkspace(t *testing.T) {
	dir, packPath, edit := miniPack(t)
	ws := filepath.Join(dir, "mini.duckdb")
	mustRun(t, mustRead(t, packPath), filepath.Join(dir, "out0"), false)
	edit(1)
	cmds := []*exec.Cmd{helper(packPath, filepath.Join(dir, "outA")), helper(packPath, filepath.Join(dir, "outB"))}
	outs := make([]*strings.Builder, len(cmds))
	for i, c := range cmds {
		outs[i] = &strings.Builder{}
		c.Stdout, c.Stderr = outs[i], outs[i]
		if err := c.Start(); err != nil {
			t.Fatal(err)
		}
	}
	var actions []string
	for i, c := range cmds {
		if err := c.Wait(); err != nil {
			t.Errorf("run %d failed: %v\n%s", i, err, outs[i])
		}
		for _, line := range strings.Split(outs[i].String(), "\n") {
			if a, ok := strings.CutPrefix(line, "ACTION "); ok {
				actions = append(actions, a)
			}
		}
	}
	sort.Strings(actions)
	if strings.Join(actions, ",") != "reloaded,reused" {
		t.Errorf("workspace actions %v; want one reloaded and one reused", actions)
	}
	if got := packRuns(t, ws+previousSuffix); got != "out0" {
		t.Errorf("the original workspace's stored runs: %q in %s; want out0", got, ws+previousSuffix)
	}
	if got := packRuns(t, ws); got != "outA,outB" && got != "outB,outA" {
		t.Errorf("the new workspace's stored runs: %q; want outA and outB", got)
	}
	for _, leftover := range []string{loadingSuffix, swapSuffix} {
		if _, err := os.Stat(ws + leftover); err == nil {
			t.Errorf("%s left behind", ws+leftover)
		}
	}
}

// TestKilledSwapRecovers kills (SIGKILL) a run that reloads the workspace
// at each step of the swap; the next run must find a workspace in place,
// the original workspace's stored run kept (in NAME or NAME.previous), and
// no leftover.
func TestKilledSwapRecovers(t *testing.T) {
	if testing.Short() {
		t.Skip("kills helper processes; skipped with -short")
	}
	for _, at := range []string{"loaded", "journal", "previous removed", "old moved", "new moved"} {
		t.Run(strings.ReplaceAll(at, " ", "_"), func(t *testing.T) {
			dir, packPath, edit := miniPack(t)
			ws := filepath.Join(dir, "mini.duckdb")
			mustRun(t, mustRead(t, packPath), filepath.Join(dir, "out0"), false)
			// A second reload first, so that an older NAME.previous exists.
			edit(1)
			mustRun(t, mustRead(t, packPath), filepath.Join(dir, "out1"), false)
			edit(2)
			cmd := helper(packPath, filepath.Join(dir, "out2"), "LEADLINE_PACK_PAUSE="+at)
			killWhenPaused(t, cmd)

			res := mustRun(t, mustRead(t, packPath), filepath.Join(dir, "out3"), false)
			action := res.Run.Manifest.Run.WorkspaceAction
			cur, prev := packRuns(t, ws), packRuns(t, ws+previousSuffix)
			if !strings.Contains(cur+","+prev, "out1") {
				t.Errorf("the run stored before the kill is gone: workspace %q, previous %q", cur, prev)
			}
			if !strings.HasSuffix(cur, "out3") {
				t.Errorf("the run after the kill is not stored in the workspace: %q", cur)
			}
			// The run after the kill uses the new inputs: either the
			// killed run's complete load (reused) or its own (reloaded).
			if action != "reused" && action != "reloaded" {
				t.Errorf("action after the kill: %q", action)
			}
			for _, leftover := range []string{loadingSuffix, swapSuffix} {
				if _, err := os.Stat(ws + leftover); err == nil {
					t.Errorf("%s left behind", ws+leftover)
				}
			}
		})
	}
}

// killWhenPaused starts the helper, waits until it says it has paused and
// kills it with SIGKILL.
func killWhenPaused(t *testing.T, cmd *exec.Cmd) {
	t.Helper()
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	paused := make(chan string, 1)
	go func() {
		sc := bufio.NewScanner(stdout)
		for sc.Scan() {
			if strings.HasPrefix(sc.Text(), "PAUSED") || strings.HasPrefix(sc.Text(), "ERROR") {
				paused <- sc.Text()
				return
			}
		}
		paused <- "exited"
	}()
	select {
	case line := <-paused:
		if !strings.HasPrefix(line, "PAUSED") {
			cmd.Process.Kill()
			cmd.Wait()
			t.Fatalf("helper did not pause: %s", line)
		}
	case <-time.After(2 * time.Minute):
		cmd.Process.Kill()
		cmd.Wait()
		t.Fatal("helper did not pause in time")
	}
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
}
