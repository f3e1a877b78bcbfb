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
// leadline output, may not, so that two clients' results never mix. It
// returns the earlier run's manifest, if any.
func CheckDir(dir string, pack PackInfo) (*Manifest, error) {
	entries, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) || err == nil && len(entries) == 0 {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	data, err := os.ReadFile(filepath.Join(dir, ManifestFile))
	if err != nil {
		return nil, fmt.Errorf("output folder %s is not empty and holds no %s: give an empty or new folder (leadline never mixes its results with other files)", dir, ManifestFile)
	}
	var old Manifest
	if err := json.Unmarshal(data, &old); err != nil {
		return nil, fmt.Errorf("output folder %s: %s is not a leadline manifest (%v); give another folder", dir, ManifestFile, err)
	}
	if old.Pack.Name != pack.Name || old.Pack.Client != pack.Client {
		return nil, fmt.Errorf("output folder %s holds the results of pack %q (client %q); this pack is %q (client %q): give another --out so that the two never mix",
			dir, old.Pack.Name, old.Pack.Client, pack.Name, pack.Client)
	}
	return &old, nil
}

// PrepareDir makes dir ready for a run of the pack (see CheckDir): it
// creates it when missing, and when it holds an earlier run of the same
// pack removes the files that run wrote (and any stray tables/*.csv and
// *.parquet), so that no stale table survives.
func PrepareDir(dir string, pack PackInfo) error {
	old, err := CheckDir(dir, pack)
	if err != nil {
		return err
	}
	if old == nil {
		return os.MkdirAll(dir, 0o755)
	}
	for _, o := range old.Outputs {
		p := filepath.Join(dir, filepath.FromSlash(o.Path))
		if !strings.HasPrefix(filepath.Clean(p), filepath.Clean(dir)+string(filepath.Separator)) {
			continue
		}
		if err := os.Remove(p); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return err
		}
	}
	for _, pat := range []string{"*.csv", "*.parquet"} {
		m, _ := filepath.Glob(filepath.Join(dir, TablesDir, pat))
		for _, p := range m {
			if err := os.Remove(p); err != nil {
				return err
			}
		}
	}
	return os.Remove(filepath.Join(dir, ManifestFile))
}
