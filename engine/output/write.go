package output

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"time"

	"github.com/leadline/leadline/engine/jsondoc"
)

// File names inside an output folder.
const (
	ManifestFile = "manifest.json"
	ResultsFile  = "results.json"
	WorkbookFile = "results.xlsx"
	TablesDir    = "tables"
)

// Writer writes one more artefact of a run into the output folder: the
// extension point for the HTML report and anything after it. Write returns
// the paths it wrote, relative to dir, so that the manifest lists them.
type Writer interface {
	Name() string
	Write(ctx context.Context, dir string, run *Run) ([]string, error)
}

// WriterFunc adapts a function to Writer.
type WriterFunc struct {
	Label string
	Fn    func(ctx context.Context, dir string, run *Run) ([]string, error)
}

func (w WriterFunc) Name() string { return w.Label }
func (w WriterFunc) Write(ctx context.Context, dir string, run *Run) ([]string, error) {
	return w.Fn(ctx, dir, run)
}

var (
	regMu      sync.Mutex
	registered []Writer
	xlsxHooks  []XLSXHook
)

// Register adds a writer that every WriteAll runs after the built-in ones
// (call it from an init function: the HTML report registers itself so that
// every pack run writes the report).
func Register(w Writer) {
	regMu.Lock()
	defer regMu.Unlock()
	registered = append(registered, w)
}

// RegisterXLSXHook adds a hook that every workbook runs after its sheets
// are written (native charts, for instance).
func RegisterXLSXHook(h XLSXHook) {
	regMu.Lock()
	defer regMu.Unlock()
	xlsxHooks = append(xlsxHooks, h)
}

func registeredWriters() ([]Writer, []XLSXHook) {
	regMu.Lock()
	defer regMu.Unlock()
	return append([]Writer(nil), registered...), append([]XLSXHook(nil), xlsxHooks...)
}

// Options tune WriteAll.
type Options struct {
	Extra        []Writer   // run after the registered writers
	XLSXHooks    []XLSXHook // run after the registered hooks
	NoRegistered bool       // skip the registered writers and hooks (tests)
	NoParquet    bool
}

// WriteAll writes the whole output folder: tables/NAME.csv and
// tables/NAME.parquet for every table, results.xlsx, results.json, the
// extra writers' files, and manifest.json last, listing every file written
// with its size and SHA-256. It returns that list.
func WriteAll(ctx context.Context, dir string, run *Run, opts Options) ([]OutputFile, error) {
	t0 := time.Now()
	if err := os.MkdirAll(filepath.Join(dir, TablesDir), 0o755); err != nil {
		return nil, err
	}
	var written []string
	var pw *ParquetWriter
	if !opts.NoParquet {
		var err error
		if pw, err = NewParquetWriter(ctx); err != nil {
			return nil, fmt.Errorf("opening the Parquet writer: %w", err)
		}
		defer pw.Close()
	}
	seen := map[string]bool{}
	for _, t := range run.Tables {
		if seen[t.Name] {
			return nil, fmt.Errorf("two result tables are named %q", t.Name)
		}
		seen[t.Name] = true
		rel := filepath.ToSlash(filepath.Join(TablesDir, t.Name+".csv"))
		if err := writeFile(filepath.Join(dir, rel), func(w io.Writer) error { return WriteCSV(w, t) }); err != nil {
			return nil, err
		}
		written = append(written, rel)
		if pw != nil {
			rel := filepath.ToSlash(filepath.Join(TablesDir, t.Name+".parquet"))
			if err := pw.Write(ctx, filepath.Join(dir, rel), t); err != nil {
				return nil, err
			}
			written = append(written, rel)
		}
	}
	trace("tables (CSV, Parquet)", t0)
	writers, hooks := registeredWriters()
	if opts.NoRegistered {
		writers, hooks = nil, nil
	}
	hooks = append(hooks, opts.XLSXHooks...)
	if err := WriteXLSX(filepath.Join(dir, WorkbookFile), run, hooks...); err != nil {
		return nil, fmt.Errorf("writing the workbook: %w", err)
	}
	written = append(written, WorkbookFile)
	trace("workbook", t0)
	if err := writeFile(filepath.Join(dir, ResultsFile), func(w io.Writer) error { return WriteJSON(w, run) }); err != nil {
		return nil, err
	}
	written = append(written, ResultsFile)
	for _, w := range append(writers, opts.Extra...) {
		files, err := w.Write(ctx, dir, run)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", w.Name(), err)
		}
		for _, f := range files {
			written = append(written, filepath.ToSlash(f))
		}
		trace(w.Name(), t0)
	}
	var outs []OutputFile
	for _, rel := range written {
		size, sum, err := hashFile(filepath.Join(dir, rel))
		if err != nil {
			return nil, err
		}
		outs = append(outs, OutputFile{Path: rel, SizeBytes: size, SHA256: sum})
	}
	sort.Slice(outs, func(i, j int) bool { return outs[i].Path < outs[j].Path })
	m := Manifest{}
	if run.Manifest != nil {
		m = *run.Manifest
	}
	m.Outputs = outs
	if err := writeFile(filepath.Join(dir, ManifestFile), func(w io.Writer) error { return jsondoc.Write(w, m) }); err != nil {
		return nil, err
	}
	return outs, nil
}

// trace prints how long writing has taken so far when LEADLINE_TRACE is set.
func trace(step string, since time.Time) {
	if os.Getenv("LEADLINE_TRACE") != "" {
		fmt.Fprintf(os.Stderr, "trace: output %-22s %6.2fs\n", step, time.Since(since).Seconds())
	}
}

// WriteJSON writes the run as one indented JSON document. Maps are written
// with sorted keys, so the same run gives the same bytes.
func WriteJSON(w io.Writer, run *Run) error { return jsondoc.Write(w, run) }

func writeFile(path string, fn func(io.Writer) error) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := fn(f); err != nil {
		f.Close()
		return fmt.Errorf("%s: %w", path, err)
	}
	return f.Close()
}

func hashFile(path string) (int64, string, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, "", err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return 0, "", err
	}
	return n, hex.EncodeToString(h.Sum(nil)), nil
}

// CheckDir says whether dir may take a run of the pack, without changing
// anything: a missing or empty folder may, and so may an earlier output
// folder of the same pack (same name and client in its manifest.json). A
// folder that holds another pack's results, or files that are not a
// leadline output, may not, so that two clients' results never mix; nor
// may a folder that is itself a symbolic link or holds one where leadline
// writes (a link leadline did not create is never written through). It
// returns the earlier run's manifest, if any.
func CheckDir(dir string, pack PackInfo) (*Manifest, error) {
	if fi, err := os.Lstat(dir); err == nil && fi.Mode()&fs.ModeSymlink != 0 {
		real, _ := filepath.EvalSymlinks(dir)
		return nil, fmt.Errorf("output folder %s is a symbolic link (to %s): leadline replaces the folder it writes and never writes through a link; give the folder's real path", dir, real)
	}
	entries, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) || err == nil && len(entries) == 0 {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	old, err := readManifest(dir)
	if err != nil {
		return nil, err
	}
	if old == nil {
		return nil, fmt.Errorf("output folder %s is not empty and holds no %s: give an empty or new folder (leadline never mixes its results with other files)", dir, ManifestFile)
	}
	if old.Pack.Name != pack.Name || old.Pack.Client != pack.Client {
		return nil, fmt.Errorf("output folder %s holds the results of pack %q (client %q); this pack is %q (client %q): give another --out so that the two never mix",
			dir, old.Pack.Name, old.Pack.Client, pack.Name, pack.Client)
	}
	for _, rel := range append([]string{ManifestFile, TablesDir}, outputPaths(old)...) {
		if fi, err := os.Lstat(filepath.Join(dir, filepath.FromSlash(rel))); err == nil && fi.Mode()&fs.ModeSymlink != 0 {
			return nil, fmt.Errorf("output folder %s: %s is a symbolic link, which leadline did not create; remove the link (leadline never writes through one)", dir, rel)
		}
	}
	return old, nil
}

// readManifest reads dir's manifest.json (nil when there is none).
func readManifest(dir string) (*Manifest, error) {
	data, err := os.ReadFile(filepath.Join(dir, ManifestFile))
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	var old Manifest
	if err := json.Unmarshal(data, &old); err != nil {
		return nil, fmt.Errorf("output folder %s: %s is not a leadline manifest (%v); give another folder", dir, ManifestFile, err)
	}
	return &old, nil
}

// outputPaths are the paths an earlier run listed, those that stay inside
// its folder.
func outputPaths(m *Manifest) []string {
	var out []string
	for _, o := range m.Outputs {
		p := filepath.ToSlash(filepath.Clean(filepath.FromSlash(o.Path)))
		if p == "." || p == ".." || strings.HasPrefix(p, "../") || filepath.IsAbs(filepath.FromSlash(p)) {
			continue
		}
		out = append(out, p)
	}
	return out
}

// Names beside an output folder OUT: the new results being written, the
// earlier results while they are swapped out, and the lock of the folder.
func stagingDir(dir string) string  { return sibling(dir, "leadline-new") }
func replacedDir(dir string) string { return sibling(dir, "leadline-old") }

// LockName is the path whose lock (see workspace.AcquireLock) guards the
// output folder dir.
func LockName(dir string) string { return sibling(dir, "leadline") }

func sibling(dir, what string) string {
	return filepath.Join(filepath.Dir(dir), "."+filepath.Base(dir)+"."+what)
}

// stagingMark is in a folder of new results while they are written; it
// goes just before the folder is swapped in, so a folder with a manifest
// and without the mark is complete.
const stagingMark = ".leadline-writing.json"

// swapStep, when set (tests), is called after each step of WriteDir's
// swap; an error stops there, leaving the files as a killed process would.
var swapStep func(step string) error

func step(name string) error {
	if swapStep == nil {
		return nil
	}
	return swapStep(name)
}

// WriteDir writes the run as the output folder dir of the pack: into a new
// folder beside it first, swapped in only when every file is written, so
// that a run that fails, is killed or fills the disk leaves the earlier
// results as they were. Files in dir that no leadline run wrote are moved
// into the new folder; the earlier run's files (and any stray
// tables/*.csv and *.parquet) go, so that no stale table survives. The
// caller holds the folder's lock (LockName) and has called RecoverDir.
func WriteDir(ctx context.Context, dir string, pack PackInfo, run *Run, opts Options) ([]OutputFile, error) {
	old, err := CheckDir(dir, pack)
	if err != nil {
		return nil, err
	}
	var keep []string
	if old != nil {
		if err := foreign(dir, old, "", &keep); err != nil {
			return nil, err
		}
	}
	staged := stagingDir(dir)
	if err := os.RemoveAll(staged); err != nil {
		return nil, err
	}
	if err := os.MkdirAll(staged, 0o755); err != nil {
		return nil, fmt.Errorf("output folder %s: creating %s beside it: %w", dir, staged, err)
	}
	fail := func(err error) ([]OutputFile, error) {
		os.RemoveAll(staged)
		return nil, fmt.Errorf("%w; the output folder %s is as it was", err, dir)
	}
	mark, _ := json.Marshal(pack)
	if err := os.WriteFile(filepath.Join(staged, stagingMark), mark, 0o644); err != nil {
		return fail(err)
	}
	outs, err := WriteAll(ctx, staged, run, opts)
	if err != nil {
		return fail(err)
	}
	if err := step("written"); err != nil {
		return nil, err
	}
	for _, r := range keep {
		if _, err := os.Lstat(filepath.Join(staged, filepath.FromSlash(r))); err == nil {
			return fail(fmt.Errorf("output folder %s: %s was not written by leadline and this run writes a file of that name: move it away", dir, r))
		}
	}
	if err := syncTree(staged); err != nil {
		return fail(fmt.Errorf("writing the results to disk: %w", err))
	}
	if err := os.Remove(filepath.Join(staged, stagingMark)); err != nil {
		return fail(err)
	}
	syncPath(staged)
	if err := step("complete"); err != nil {
		return nil, err
	}
	replaced := replacedDir(dir)
	hadDir := false
	if _, err := os.Lstat(dir); err == nil {
		hadDir = true
		if err := os.RemoveAll(replaced); err != nil {
			return fail(err)
		}
		if err := os.Rename(dir, replaced); err != nil {
			return fail(fmt.Errorf("moving the earlier results aside: %w", err))
		}
		if err := step("old moved"); err != nil {
			return nil, err
		}
	}
	if err := os.Rename(staged, dir); err != nil {
		if hadDir {
			os.Rename(replaced, dir)
		}
		return fail(fmt.Errorf("putting the new results in place: %w", err))
	}
	syncPath(filepath.Dir(dir))
	if err := step("new moved"); err != nil {
		return nil, err
	}
	if hadDir {
		if err := retire(replaced, dir, old); err != nil {
			return outs, err
		}
	}
	return outs, nil
}

// retire moves the files of the replaced folder that no leadline run
// wrote into the new folder dir, then removes it. Links are moved as
// links, never followed.
func retire(replaced, dir string, old *Manifest) error {
	if old != nil {
		var keep []string
		if err := foreign(replaced, old, "", &keep); err != nil {
			return err
		}
		for _, r := range keep {
			to := filepath.Join(dir, filepath.FromSlash(r))
			if err := os.MkdirAll(filepath.Dir(to), 0o755); err != nil {
				return err
			}
			if err := os.Rename(filepath.Join(replaced, filepath.FromSlash(r)), to); err != nil {
				return fmt.Errorf("the new results are in %s; moving %s there from the earlier folder %s (kept): %w", dir, r, replaced, err)
			}
		}
	}
	if err := os.RemoveAll(replaced); err != nil {
		return fmt.Errorf("the new results are in %s; removing the earlier ones (%s): %w", dir, replaced, err)
	}
	return nil
}

// foreign lists the files of dir (under rel) that no leadline run wrote:
// not listed in the earlier run's manifest, not a stray table.
func foreign(dir string, old *Manifest, rel string, out *[]string) error {
	listed := map[string]bool{ManifestFile: true, stagingMark: true}
	for _, p := range outputPaths(old) {
		listed[p] = true
	}
	entries, err := os.ReadDir(filepath.Join(dir, filepath.FromSlash(rel)))
	if err != nil {
		return err
	}
	for _, e := range entries {
		r := path.Join(rel, e.Name())
		if listed[r] {
			continue
		}
		if e.IsDir() {
			ours := r == TablesDir
			for p := range listed {
				ours = ours || strings.HasPrefix(p, r+"/")
			}
			if ours {
				if err := foreign(dir, old, r, out); err != nil {
					return err
				}
				continue
			}
		}
		if rel == TablesDir && e.Type().IsRegular() && (strings.HasSuffix(e.Name(), ".csv") || strings.HasSuffix(e.Name(), ".parquet")) {
			continue // a stray table of an earlier run
		}
		*out = append(*out, r)
	}
	return nil
}

// RecoverDir tidies what an interrupted run of the pack left beside dir
// (the caller holds the folder's lock): complete new results are put in
// place when dir is missing, else the earlier results are put back; a
// half-written folder goes. Leftovers of another pack are refused, never
// removed.
func RecoverDir(dir string, pack PackInfo, log io.Writer) error {
	staged, replaced := stagingDir(dir), replacedDir(dir)
	say := func(format string, args ...any) {
		if log != nil {
			fmt.Fprintf(log, format+"\n", args...)
		}
	}
	_, dirErr := os.Lstat(dir)
	missing := errors.Is(dirErr, fs.ErrNotExist)
	if _, err := os.Lstat(staged); err == nil {
		complete, err := leftoverOf(staged, pack)
		if err != nil {
			return err
		}
		if complete && missing {
			if err := os.Rename(staged, dir); err != nil {
				return err
			}
			say("Finished an interrupted swap of the output folder: %s put in place", dir)
			missing = false
		} else {
			say("Removing %s, left by an interrupted run of this pack", staged)
			if err := os.RemoveAll(staged); err != nil {
				return err
			}
		}
	}
	if _, err := os.Lstat(replaced); err == nil {
		if _, err := leftoverOf(replaced, pack); err != nil {
			return err
		}
		if missing {
			if err := os.Rename(replaced, dir); err != nil {
				return err
			}
			say("Put the earlier results back in %s after an interrupted run", dir)
			return nil
		}
		say("Removing %s, the earlier results replaced by an interrupted run", replaced)
		old, err := readManifest(replaced)
		if err != nil {
			return err
		}
		return retire(replaced, dir, old)
	}
	return nil
}

// leftoverOf says whether a folder beside an output folder was left by a
// run of pack (complete: it holds a manifest and no staging mark); a
// folder of another pack, or of unknown content, is an error.
func leftoverOf(folder string, pack PackInfo) (complete bool, err error) {
	if entries, err := os.ReadDir(folder); err == nil && len(entries) == 0 {
		return false, nil // an empty folder: nothing to lose
	}
	var who PackInfo
	if b, err := os.ReadFile(filepath.Join(folder, stagingMark)); err == nil {
		if json.Unmarshal(b, &who) != nil {
			return false, fmt.Errorf("%s holds a damaged %s: remove the folder by hand", folder, stagingMark)
		}
	} else if m, err := readManifest(folder); err == nil && m != nil {
		who, complete = m.Pack, true
	} else {
		return false, fmt.Errorf("%s is not a leadline output folder; leadline uses that name beside its output folder: move it away", folder)
	}
	if who.Name != pack.Name || who.Client != pack.Client {
		return false, fmt.Errorf("%s was left by a run of pack %q (client %q), not of this pack: run that pack again to tidy it, or remove it by hand", folder, who.Name, who.Client)
	}
	return complete, nil
}

// syncTree flushes every file under root to disk.
func syncTree(root string) error {
	return filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.Type().IsRegular() {
			f, err := os.Open(p)
			if err != nil {
				return err
			}
			err = f.Sync()
			f.Close()
			return err
		}
		if d.IsDir() {
			syncPath(p)
		}
		return nil
	})
}

// syncPath flushes a folder's entries (best effort: not every system can).
func syncPath(p string) {
	if f, err := os.Open(p); err == nil {
		f.Sync()
		f.Close()
	}
}
