package load

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
)

// Fault injection: loads interrupted by a cancelled context or by SIGKILL
// at random points, a second process opening a busy workspace, and a
// temporary folder that fills up during a spill. In every case the
// workspace must afterwards be exactly as it was before the load (or, for
// a load that finished before the fault, exactly as after it).

// The test binary doubles as a helper process (the os/exec pattern of the
// standard library's own tests): with LEADLINE_FAULT_HELPER set it does one
// job on a workspace and exits instead of running the tests.
const helperEnv = "LEADLINE_FAULT_HELPER"

func TestMain(m *testing.M) {
	if job := os.Getenv(helperEnv); job != "" {
		os.Exit(helperMain(job, os.Getenv("LEADLINE_FAULT_DB"), os.Getenv("LEADLINE_FAULT_FILE")))
	}
	os.Exit(m.Run())
}

// helperMain runs one job:
//
//	load   load the file into the workspace, saying "loading" first
//	hold   open the workspace and keep it open until standard input closes
//	open   try to open the workspace (read-write, then read-only) and report
func helperMain(job, db, file string) int {
	ctx := context.Background()
	switch job {
	case "load":
		ws, err := workspace.Open(ctx, db, workspace.Options{})
		if err != nil {
			fmt.Println("open:", err)
			return 3
		}
		fmt.Println("loading")
		start := time.Now()
		if _, err := Load(ctx, ws, []string{file}, faultOptions); err != nil {
			fmt.Println("load:", err)
			return 4
		}
		fmt.Println("done", time.Since(start).Nanoseconds())
		ws.Close()
		return 0
	case "hold":
		ws, err := workspace.Open(ctx, db, workspace.Options{})
		if err != nil {
			fmt.Println("open:", err)
			return 3
		}
		fmt.Println("holding")
		io.Copy(io.Discard, os.Stdin)
		ws.Close()
		return 0
	case "open":
		for _, ro := range []bool{false, true} {
			start := time.Now()
			ws, err := workspace.Open(ctx, db, workspace.Options{ReadOnly: ro})
			if err == nil {
				ws.Close()
			}
			fmt.Printf("readonly=%v inuse=%v seconds=%.1f err=%v\n", ro, errors.Is(err, workspace.ErrInUse), time.Since(start).Seconds(), err)
		}
		return 0
	}
	return 2
}

func helper(t *testing.T, job, db, file string) *exec.Cmd {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(exe, "-test.run=^$")
	cmd.Env = append(os.Environ(), helperEnv+"="+job, "LEADLINE_FAULT_DB="+db, "LEADLINE_FAULT_FILE="+file)
	return cmd
}

// state is what must not change: every table's rows (count and an
// order-independent checksum of the rows' text), and the schema.
type state struct {
	Tables map[string][2]string
	Schema string
}

func snapshot(t *testing.T, path string) state {
	t.Helper()
	ctx := context.Background()
	// Read-write, as the next command would open it: DuckDB recovers from
	// its write-ahead log here after a crash.
	ws, err := workspace.Open(ctx, path, workspace.Options{})
	if err != nil {
		t.Fatalf("reopening the workspace: %v", err)
	}
	defer ws.Close()
	s := state{Tables: map[string][2]string{}}
	if err := ws.Conn.QueryRowContext(ctx, `SELECT coalesce(string_agg(table_name || '.' || column_name || ' ' || data_type, ', ' ORDER BY table_name, ordinal_position), '')
		FROM information_schema.columns WHERE table_schema = 'main'`).Scan(&s.Schema); err != nil {
		t.Fatal(err)
	}
	// The clock columns of files and loads differ between two runs of the
	// same load; everything else must match.
	for tb, sel := range map[string]string{"ledger": "*", "files": "* EXCLUDE (loaded_at)", "rejects": "*",
		"loads": "* EXCLUDE (started_at, finished_at)", "meta": "*", "runs": "*"} {
		var n, sum string
		err := ws.Conn.QueryRowContext(ctx, `SELECT CAST(count(*) AS VARCHAR), CAST(coalesce(sum(hash(CAST(t AS VARCHAR))::HUGEINT), 0) AS VARCHAR)
			FROM (SELECT `+sel+` FROM `+tb+`) t`).Scan(&n, &sum)
		if err != nil && strings.Contains(err.Error(), "does not exist") {
			n, sum = "absent", ""
		} else if err != nil {
			t.Fatal(err)
		}
		s.Tables[tb] = [2]string{n, sum}
	}
	return s
}

func (s state) String() string { return fmt.Sprintf("%v %s", s.Tables, s.Schema) }

func same(a, b state) bool { return a.String() == b.String() }

func copyFile(t *testing.T, from, to string) {
	t.Helper()
	b, err := os.ReadFile(from)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(to, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// faultSetup writes a workspace holding one small load (the state to keep)
// and a 200,000-row CSV with about 1% bad amounts to load on top of it, and
// measures an uninterrupted load of it: its time, and the state after.
// faultOptions accept the fixtures' malformed amounts (1 to 2% of rows,
// written on purpose), above the 1% of rejects a load allows by default.
var faultOptions = Options{MaxRejects: "5%"}

func faultSetup(t *testing.T) (dir, base, csv string, before, after state, took time.Duration) {
	t.Helper()
	ctx := context.Background()
	dir = t.TempDir()
	small := filepath.Join(dir, "small.csv")
	if _, err := fixtures.WriteCSV(small, fixtures.Config{Rows: 500, Seed: 3, BadAmountRate: 0.02}); err != nil {
		t.Fatal(err)
	}
	csv = filepath.Join(dir, "big.csv")
	if _, err := fixtures.WriteCSV(csv, fixtures.Config{Rows: 200_000, Seed: 5, BadAmountRate: 0.01}); err != nil {
		t.Fatal(err)
	}
	base = filepath.Join(dir, "base.duckdb")
	ws, err := workspace.Open(ctx, base, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Load(ctx, ws, []string{small}, faultOptions); err != nil {
		t.Fatal(err)
	}
	ws.Close()
	before = snapshot(t, base)
	full := filepath.Join(dir, "full.duckdb")
	copyFile(t, base, full)
	ws, err = workspace.Open(ctx, full, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	start := time.Now()
	if _, err := Load(ctx, ws, []string{csv}, faultOptions); err != nil {
		t.Fatal(err)
	}
	took = time.Since(start)
	ws.Close()
	after = snapshot(t, full)
	if same(before, after) {
		t.Fatal("the full load changed nothing")
	}
	return
}

// faultTrials is the number of random interruptions of each kind;
// LEADLINE_FAULT_TRIALS raises it for a long run.
func faultTrials() int {
	if n, err := strconv.Atoi(os.Getenv("LEADLINE_FAULT_TRIALS")); err == nil && n > 0 {
		return n
	}
	return 2
}

// randomDelay is a point inside a load that takes about took: between 5%
// and 75% of it. Load times vary with the machine's other work, so took is
// the shortest load seen so far.
func randomDelay(rng *rand.Rand, took time.Duration) time.Duration {
	return took/20 + time.Duration(rng.Int64N(int64(took*70/100)))
}

// TestInterruptedLoad interrupts a 200,000-row load at random points, by
// cancelling its context (and once before it starts) and by SIGKILL of a
// helper process running it, and checks after each that the workspace,
// reopened, is exactly as before the load, or exactly as after it when the
// load had committed before the interruption.
func TestInterruptedLoad(t *testing.T) {
	if testing.Short() {
		t.Skip("loads 200,000 rows several times; skipped with -short")
	}
	dir, base, csv, before, after, took := faultSetup(t)
	seed := time.Now().UnixNano()
	rng := rand.New(rand.NewPCG(uint64(seed), 1))
	t.Logf("uninterrupted load: %v; random seed %d", took, seed)
	trials := faultTrials()
	t.Run("cancel", func(t *testing.T) {
		p := filepath.Join(dir, "cancel.duckdb")
		copyFile(t, base, p)
		interrupted := 0
		// A cancel that comes after the commit misses; the next delays stay
		// below it, and a few extra trials are allowed for that.
		for i := 0; i <= trials || interrupted < 2 && i <= trials+4; i++ {
			d := time.Duration(0) // the first trial cancels before the load starts
			if i > 0 {
				d = randomDelay(rng, took)
			}
			ws, err := workspace.Open(context.Background(), p, workspace.Options{})
			if err != nil {
				t.Fatal(err)
			}
			ctx, cancel := context.WithCancel(context.Background())
			timer := time.AfterFunc(d, cancel)
			start := time.Now()
			_, err = Load(ctx, ws, []string{csv}, faultOptions)
			if err == nil {
				took = min(took, time.Since(start))
			}
			timer.Stop()
			cancel()
			ws.Close()
			got := snapshot(t, p)
			if err == nil {
				if !same(got, after) {
					t.Errorf("the load finished before the cancel after %v, but the workspace is not the full load's", d)
				}
				t.Logf("cancel after %v: the load had committed", d)
				took = min(took, d)
				copyFile(t, base, p) // start the next trial from before
				continue
			}
			interrupted++
			t.Logf("cancel after %v: %v", d, err)
			if !strings.Contains(err.Error(), "load interrupted") || !strings.Contains(err.Error(), "nothing was loaded") {
				t.Errorf("cancel after %v: message %q does not say the load was interrupted and nothing loaded", d, err)
			}
			if !same(got, before) {
				t.Fatalf("cancel after %v (%v): the workspace changed\nbefore %v\nafter  %v", d, err, before, got)
			}
		}
		if interrupted < 2 {
			t.Errorf("only %d loads were interrupted; the delays missed the load", interrupted)
		}
		// The workspace, interrupted again and again, still takes the load.
		ws, err := workspace.Open(context.Background(), p, workspace.Options{})
		if err != nil {
			t.Fatal(err)
		}
		_, err = Load(context.Background(), ws, []string{csv}, faultOptions)
		ws.Close()
		if err != nil {
			t.Fatalf("loading after the interruptions: %v", err)
		}
		if got := snapshot(t, p); !same(got, after) {
			t.Errorf("the load after the interruptions differs from an uninterrupted one")
		}
	})
	t.Run("kill", func(t *testing.T) {
		killed := 0
		for i := 0; i < trials; i++ {
			p := filepath.Join(dir, fmt.Sprintf("kill%d.duckdb", i))
			copyFile(t, base, p)
			cmd := helper(t, "load", p, csv)
			out, err := cmd.StdoutPipe()
			if err != nil {
				t.Fatal(err)
			}
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			r := bufio.NewReader(out)
			line, _ := r.ReadString('\n')
			if strings.TrimSpace(line) != "loading" {
				cmd.Process.Kill()
				cmd.Wait()
				t.Fatalf("helper said %q", line)
			}
			d := randomDelay(rng, took)
			time.Sleep(d)
			cmd.Process.Signal(syscall.SIGKILL)
			rest, _ := io.ReadAll(r)
			err = cmd.Wait()
			got := snapshot(t, p)
			var ns int64
			if _, e := fmt.Sscanf(string(rest), "done %d", &ns); e == nil {
				took = min(took, time.Duration(ns))
			}
			// Atomic: exactly before, or (the kill came after the commit)
			// exactly after; never anything in between.
			switch {
			case same(got, before):
				killed++
				t.Logf("SIGKILL after %v (%v): the workspace is as before", d, err)
			case same(got, after):
				t.Logf("SIGKILL after %v: the load had committed; the workspace is the full load's", d)
				took = min(took, d)
			default:
				t.Errorf("SIGKILL after %v: the workspace is neither as before nor as after the load\nbefore %v\nafter  %v\ngot    %v", d, before, after, got)
			}
		}
		if killed == 0 {
			t.Error("no kill landed during a load")
		}
	})
}

// TestWorkspaceInUse: a workspace held open by one process is refused to
// another at once with ErrInUse and a message that names it and says what
// to do, for writing and for reading alike; nothing hangs or changes.
func TestWorkspaceInUse(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	p := filepath.Join(dir, "busy.duckdb")
	src := writeFile(t, dir, "a.csv", "entity,amount\nE1,1.00\n")
	ws, err := workspace.Open(ctx, p, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Load(ctx, ws, []string{src}, Options{}); err != nil {
		t.Fatal(err)
	}
	ws.Close()
	before := snapshot(t, p)

	cmd := helper(t, "hold", p, "")
	stdin, err := cmd.StdinPipe()
	if err != nil {
		t.Fatal(err)
	}
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer cmd.Wait()
	defer stdin.Close()
	line, _ := bufio.NewReader(out).ReadString('\n')
	if strings.TrimSpace(line) != "holding" {
		t.Fatalf("helper said %q", line)
	}
	for _, ro := range []bool{false, true} {
		start := time.Now()
		ws, err := workspace.Open(ctx, p, workspace.Options{ReadOnly: ro})
		if err == nil {
			ws.Close()
			t.Fatalf("read-only=%v: opened a workspace another process holds", ro)
		}
		if !errors.Is(err, workspace.ErrInUse) {
			t.Fatalf("read-only=%v: want ErrInUse, got %v", ro, err)
		}
		if msg := err.Error(); !strings.Contains(msg, "in use") || !strings.Contains(msg, p) || !strings.Contains(msg, "--db") {
			t.Errorf("message %q does not say in use, name the workspace and say what to do", msg)
		}
		if s := time.Since(start); s > 10*time.Second {
			t.Errorf("the refusal took %v", s)
		}
	}
	stdin.Close()
	if err := cmd.Wait(); err != nil {
		t.Fatalf("helper: %v", err)
	}
	if got := snapshot(t, p); !same(got, before) {
		t.Errorf("the workspace changed: %v / %v", before, got)
	}
}

// TestTempFolderFull: DuckDB spills to its temporary folder when memory
// runs short; when that folder fills up, the load fails with a message that
// says so and what to do (--temp-dir, --memory-limit), and the workspace
// is as before. The folder fills two ways: a 1 MiB tmpfs (mounting one
// needs root; skipped otherwise), and DuckDB's own cap on the folder,
// max_temp_directory_size.
func TestTempFolderFull(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "big.csv")
	if _, err := fixtures.WriteCSV(csv, fixtures.Config{Rows: 200_000, Seed: 9}); err != nil {
		t.Fatal(err)
	}
	for _, how := range []string{"tmpfs", "max_temp_directory_size"} {
		t.Run(how, func(t *testing.T) {
			ctx := context.Background()
			tmp := filepath.Join(dir, "spill_"+how)
			if err := os.Mkdir(tmp, 0o755); err != nil {
				t.Fatal(err)
			}
			if how == "tmpfs" {
				if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "size=1m", "tmpfs", tmp).CombinedOutput(); err != nil {
					t.Skipf("cannot mount a tmpfs here: %v %s", err, out)
				}
				defer exec.Command("umount", tmp).Run()
			}
			p := filepath.Join(dir, how+".duckdb")
			ws, err := workspace.Open(ctx, p, workspace.Options{MemoryLimit: "64MB", Threads: 1, TempDir: tmp})
			if err != nil {
				t.Fatal(err)
			}
			if how != "tmpfs" {
				if _, err := ws.Conn.ExecContext(ctx, "SET max_temp_directory_size = '1MB'"); err != nil {
					t.Fatal(err)
				}
			}
			_, err = Load(ctx, ws, []string{csv}, faultOptions)
			ws.Close()
			if err == nil {
				t.Fatal("the load fitted in 64 MB of memory and 1 MiB of temporary folder; make the file bigger")
			}
			msg := err.Error()
			t.Log(msg)
			for _, want := range []string{"temporary folder", "--temp-dir", "--memory-limit", "nothing was loaded"} {
				if !strings.Contains(msg, want) {
					t.Errorf("message lacks %q: %s", want, msg)
				}
			}
			if got := snapshot(t, p); got.Tables["ledger"][0] != "absent" || got.Tables["files"][0] != "0" {
				t.Errorf("the failed load left rows: %v", got.Tables)
			}
		})
	}
}
