package pack

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

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Workspace settings (meta keys) that tie a workspace to its pack.
const (
	MetaPackName   = "pack.name"
	MetaPackClient = "pack.client"
	MetaPackFile   = "pack.file"
	MetaPackInputs = "pack.inputs" // fingerprint of the inputs' SHA-256 and the load settings
)

// inputFile is one input with its hash.
type inputFile struct {
	Source int
	Path   string
	Size   int64
	SHA256 string
}

func hashInputs(pl *Plan) ([]inputFile, error) {
	var out []inputFile
	for _, s := range pl.Sources {
		for _, f := range s.Files {
			size, sum, err := load.Hash(f)
			if err != nil {
				return nil, err
			}
			out = append(out, inputFile{Source: s.Index, Path: f, Size: size, SHA256: sum})
		}
	}
	return out, nil
}

// fingerprint is the SHA-256 of what a load depends on: the amount type,
// and per source its load settings and its files' content (not their
// paths, so that a moved engagement folder still reuses its workspace).
func fingerprint(pl *Plan, inputs []inputFile) string {
	type src struct {
		Options load.Options `json:"options"`
		Files   []string     `json:"files"`
	}
	doc := struct {
		AmountType string `json:"amount_type"`
		Sources    []src  `json:"sources"`
	}{AmountType: pl.AmountType}
	for _, s := range pl.Sources {
		x := src{Options: s.Options}
		for _, in := range inputs {
			if in.Source == s.Index {
				x.Files = append(x.Files, in.SHA256)
			}
		}
		sort.Strings(x.Files)
		doc.Sources = append(doc.Sources, x)
	}
	b, _ := json.Marshal(doc)
	sum := sha256.Sum256(b)
	return hex.EncodeToString(sum[:])
}

// openWorkspace opens the pack's workspace, loading it when needed:
//
//   - no workspace file yet: load the sources into a new one ("loaded");
//   - the workspace belongs to this pack (same name and client in its meta
//     table), the files table holds exactly the inputs' SHA-256 and the
//     load settings are unchanged: use it as it is ("reused");
//   - it belongs to this pack but an input or a setting changed (or fresh
//     is asked): load everything into a new workspace beside it, and only
//     when that load has succeeded put it in place, keeping the old one as
//     NAME.previous ("reloaded");
//   - it belongs to another pack, or was loaded outside a pack, or is not
//     a leadline workspace at all: refuse, so that two clients' data never
//     meet in one workspace and no other file is ever touched.
//
// The workspace's lock (NAME.lock) is held from before the decision until
// release is called (after the workspace is closed): a second run of the
// pack waits, then finds the workspace loaded, instead of replacing it
// under the first.
func openWorkspace(ctx context.Context, pl *Plan, inputs []inputFile, fresh bool, log io.Writer) (ws *workspace.Workspace, action, reason string, release func(), err error) {
	fp := fingerprint(pl, inputs)
	if pl.Workspace == ":memory:" {
		ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
		if err != nil {
			return nil, "", "", nil, err
		}
		if err := loadInto(ctx, ws, pl, fp, log); err != nil {
			ws.Close()
			return nil, "", "", nil, err
		}
		return ws, "loaded", "in-memory workspace", func() {}, nil
	}
	// Refuse a file that is not a workspace before creating anything
	// beside it (the lock file included).
	if _, err := workspace.CheckFile(pl.Workspace); err != nil {
		return nil, "", "", nil, err
	}
	lock, err := workspace.AcquireLock(ctx, pl.Workspace, log)
	if err != nil {
		return nil, "", "", nil, err
	}
	release = func() { lock.Unlock() }
	defer func() {
		if err != nil {
			release()
		}
	}()
	if err := recoverSwap(pl.Workspace, log); err != nil {
		return nil, "", "", nil, err
	}
	ws, action, reason, err = openLocked(ctx, pl, inputs, fp, fresh, log)
	return ws, action, reason, release, err
}

// openLocked is openWorkspace under the lock.
func openLocked(ctx context.Context, pl *Plan, inputs []inputFile, fp string, fresh bool, log io.Writer) (ws *workspace.Workspace, action, reason string, err error) {
	if _, statErr := os.Stat(pl.Workspace); statErr == nil {
		// Files in place are compared below by their SHA-256, as every
		// input is: a changed one makes a fresh load, not a refusal.
		ws, err := workspace.Open(ctx, pl.Workspace, workspace.Options{MustExist: true, DeferFileCheck: true})
		if err != nil {
			return nil, "", "", err
		}
		why, owned, err := compareWorkspace(ctx, ws, pl, inputs, fp)
		if err != nil {
			ws.Close()
			return nil, "", "", err
		}
		if !owned {
			ws.Close()
			return nil, "", "", errors.New(why)
		}
		if why == "" && !fresh {
			return ws, "reused", fmt.Sprintf("inputs unchanged: %d files, SHA-256 as in the workspace's files table; same mapping and parsing rules", len(inputs)), nil
		}
		if why == "" {
			why = "a fresh load was asked for"
		}
		if err := ws.Close(); err != nil {
			return nil, "", "", err
		}
		if log != nil {
			fmt.Fprintf(log, "Reloading the workspace: %s\n", why)
		}
		if err := loadFresh(ctx, pl, fp, log, true); err != nil {
			return nil, "", "", err
		}
		ws, err = workspace.Open(ctx, pl.Workspace, workspace.Options{MustExist: true})
		if err != nil {
			return nil, "", "", err
		}
		return ws, "reloaded", why + "; the previous workspace is kept as " + pl.Workspace + previousSuffix, nil
	} else if !errors.Is(statErr, fs.ErrNotExist) {
		return nil, "", "", statErr
	}
	if err := loadFresh(ctx, pl, fp, log, false); err != nil {
		return nil, "", "", err
	}
	ws, err = workspace.Open(ctx, pl.Workspace, workspace.Options{MustExist: true})
	if err != nil {
		return nil, "", "", err
	}
	return ws, "loaded", "new workspace", nil
}

// compareWorkspace says whether the workspace belongs to the pack (owned)
// and, if so, what differs from the inputs ("" when nothing).
func compareWorkspace(ctx context.Context, ws *workspace.Workspace, pl *Plan, inputs []inputFile, fp string) (why string, owned bool, err error) {
	name, hasName, err := ws.Meta(ctx, MetaPackName)
	if err != nil {
		return "", false, err
	}
	client, _, err := ws.Meta(ctx, MetaPackClient)
	if err != nil {
		return "", false, err
	}
	hasLedger, err := ws.HasLedger(ctx)
	if err != nil {
		return "", false, err
	}
	p := pl.Pack.Pack
	switch {
	case !hasName && hasLedger:
		return fmt.Sprintf("workspace %s holds data loaded outside a pack (with leadline load); a pack keeps its own workspace: set [pack] workspace to a new file, or remove this one", pl.Workspace), false, nil
	case !hasName:
		// An empty workspace (created but never loaded): the pack claims it.
		return "the workspace holds no data yet", true, nil
	case name != p.Name || client != p.Client:
		return fmt.Sprintf("workspace %s belongs to pack %q of client %q, not to this pack (%q of client %q): set [pack] workspace to a file of this pack's own, so that two clients' data never mix",
			pl.Workspace, name, client, p.Name, p.Client), false, nil
	}
	// Compare the inputs with the files table.
	rows, err := ws.Conn.QueryContext(ctx, queries.Get("pack_workspace_files"))
	if err != nil {
		return "", false, err
	}
	have := map[string]string{}
	for rows.Next() {
		var sum, path string
		if err := rows.Scan(&sum, &path); err != nil {
			rows.Close()
			return "", false, err
		}
		have[sum] = path
	}
	rows.Close()
	var diffs []string
	want := map[string]bool{}
	for _, in := range inputs {
		want[in.SHA256] = true
		if _, ok := have[in.SHA256]; !ok {
			diffs = append(diffs, fmt.Sprintf("%s is new or changed (SHA-256 %s…)", pl.rel(in.Path), in.SHA256[:12]))
		}
	}
	var gone []string
	for sum, path := range have {
		if !want[sum] {
			gone = append(gone, fmt.Sprintf("%s is no longer among the inputs (or changed)", pl.rel(path)))
		}
	}
	sort.Strings(gone)
	diffs = append(diffs, gone...)
	old, _, err := ws.Meta(ctx, MetaPackInputs)
	if err != nil {
		return "", false, err
	}
	if len(diffs) == 0 && old != fp {
		diffs = append(diffs, "the mapping, parsing rules or amount type changed")
	}
	if len(diffs) > 3 {
		diffs = append(diffs[:3], fmt.Sprintf("and %d more differences", len(diffs)-3))
	}
	return strings.Join(diffs, "; "), true, nil
}

// rel writes a path relative to the pack's folder when it lies inside it.
func (pl *Plan) rel(path string) string {
	c := &checker{p: pl.Pack}
	return c.rel(path)
}

// Files beside a pack's workspace NAME: the new workspace being loaded,
// the one it replaced, and the journal of a swap in progress.
const (
	loadingSuffix  = ".loading"
	previousSuffix = ".previous"
	swapSuffix     = ".swap"
)

// swapStep, when set (tests), is called after each step of the swap; an
// error stops the swap there, leaving the files as a killed process would.
var swapStep func(step string) error

func step(name string) error {
	if swapStep == nil {
		return nil
	}
	return swapStep(name)
}

// loadFresh loads the sources into a new workspace file beside the
// target and moves it into place only when every source has loaded. The
// caller holds the workspace's lock. The swap is journalled (NAME.swap,
// written once the new workspace is complete and on disk) so that a run
// killed at any point leaves either the old or the new workspace in place
// after recoverSwap, never neither.
func loadFresh(ctx context.Context, pl *Plan, fp string, log io.Writer, replace bool) error {
	tmp := pl.Workspace + loadingSuffix
	prev := pl.Workspace + previousSuffix
	// Both names are leadline's own; anything else found there is
	// refused before the load, not after it.
	for _, f := range []string{tmp, prev} {
		if _, err := workspace.CheckFile(f); err != nil {
			return ownName(f)
		}
	}
	if err := removeOurs(tmp); err != nil {
		return err
	}
	ws, err := workspace.Open(ctx, tmp, workspace.Options{})
	if err != nil {
		return err
	}
	if err := loadInto(ctx, ws, pl, fp, log); err != nil {
		ws.Close()
		removeDB(tmp)
		return err
	}
	if err := ws.Close(); err != nil {
		removeDB(tmp)
		return err
	}
	if err := syncFile(tmp); err != nil {
		removeDB(tmp)
		return fmt.Errorf("writing the new workspace %s to disk: %w", tmp, err)
	}
	if err := step("loaded"); err != nil {
		return err
	}
	journal := pl.Workspace + swapSuffix
	if err := writeSynced(journal, []byte("leadline workspace swap: "+tmp+" replaces "+pl.Workspace+"\n")); err != nil {
		removeDB(tmp)
		return fmt.Errorf("starting the swap: %w", err)
	}
	if err := step("journal"); err != nil {
		return err
	}
	if replace {
		if err := removeOurs(prev); err != nil {
			return err
		}
		if err := step("previous removed"); err != nil {
			return err
		}
		if err := moveDB(pl.Workspace, prev); err != nil {
			return fmt.Errorf("keeping the previous workspace as %s: %w (the workspace is unchanged; the next run finishes the swap)", prev, err)
		}
		if err := step("old moved"); err != nil {
			return err
		}
	}
	if err := moveDB(tmp, pl.Workspace); err != nil {
		return fmt.Errorf("putting the new workspace in place: %w (the next run finishes the swap)", err)
	}
	if err := step("new moved"); err != nil {
		return err
	}
	syncDir(pl.Workspace)
	return os.Remove(journal)
}

// recoverSwap finishes a swap that a killed run left half done (the caller
// holds the lock): with the journal present the new workspace was complete,
// so it is put in place if the workspace is missing; else the previous one
// is put back. A leftover NAME.loading without a journal is an unfinished
// load and goes.
func recoverSwap(path string, log io.Writer) error {
	journal := path + swapSuffix
	tmp := path + loadingSuffix
	prev := path + previousSuffix
	if _, err := os.Stat(journal); err == nil {
		if !exists(path) {
			from := tmp
			if !exists(tmp) {
				from = prev
			}
			if exists(from) {
				if err := moveDB(from, path); err != nil {
					return fmt.Errorf("finishing an interrupted swap of the workspace %s: %w", path, err)
				}
				if log != nil {
					fmt.Fprintf(log, "Finished an interrupted swap: %s put back in place as %s\n", from, path)
				}
			}
		}
		syncDir(path)
		if err := os.Remove(journal); err != nil {
			return err
		}
	}
	if exists(tmp) {
		if log != nil {
			fmt.Fprintf(log, "Removing %s, left by an interrupted load\n", tmp)
		}
		return removeOurs(tmp)
	}
	return nil
}

func exists(path string) bool {
	_, err := os.Lstat(path)
	return err == nil
}

// moveDB renames a workspace file and its write-ahead log.
func moveDB(from, to string) error {
	if err := os.Rename(from, to); err != nil {
		return err
	}
	if exists(from + ".wal") {
		return os.Rename(from+".wal", to+".wal")
	}
	os.Remove(to + ".wal") // a stale log must not be replayed into the moved file
	return nil
}

// removeOurs removes a workspace file that leadline made beside the
// workspace (NAME.loading, NAME.previous), refusing anything else found
// under that name.
func removeOurs(path string) error {
	if _, err := workspace.CheckFile(path); err != nil {
		return ownName(path)
	}
	removeDB(path)
	return nil
}

func ownName(path string) error {
	return fmt.Errorf("%w: %s is not a workspace leadline made, and leadline keeps its own files under that name beside the pack's workspace (the previous workspace, the one being loaded); it is left untouched: move it away", workspace.ErrNotWorkspace, path)
}

func removeDB(path string) {
	os.Remove(path)
	os.Remove(path + ".wal")
}

func syncFile(path string) error {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

func writeSynced(path string, b []byte) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if _, err := f.Write(b); err != nil {
		f.Close()
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	if err := f.Close(); err != nil {
		return err
	}
	syncDir(path)
	return nil
}

// syncDir flushes the folder holding path, so that renames in it survive
// a power cut (best effort: not every system can sync a folder).
func syncDir(path string) {
	if d, err := os.Open(filepath.Dir(path)); err == nil {
		d.Sync()
		d.Close()
	}
}

// loadInto claims the workspace for the pack and loads every source.
func loadInto(ctx context.Context, ws *workspace.Workspace, pl *Plan, fp string, log io.Writer) error {
	p := pl.Pack.Pack
	for _, kv := range [][2]string{{MetaPackName, p.Name}, {MetaPackClient, p.Client}, {MetaPackFile, pl.Pack.File}} {
		if err := ws.SetMeta(ctx, kv[0], kv[1]); err != nil {
			return err
		}
	}
	for _, s := range pl.Sources {
		if log != nil {
			fmt.Fprintf(log, "Loading %s: %d file(s)\n", s.Name, len(s.Files))
		}
		if _, err := load.Load(ctx, ws, s.Files, s.Options); err != nil {
			return fmt.Errorf("loading %s: %w", s.Name, err)
		}
	}
	return ws.SetMeta(ctx, MetaPackInputs, fp)
}
