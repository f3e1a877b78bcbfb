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
	"sort"
	"strings"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
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
//   - it belongs to another pack, or was loaded outside a pack: refuse, so
//     that two clients' data never meet in one workspace.
func openWorkspace(ctx context.Context, pl *Plan, inputs []inputFile, fresh bool, log io.Writer) (ws *workspace.Workspace, action, reason string, err error) {
	fp := fingerprint(pl, inputs)
	if pl.Workspace == ":memory:" {
		ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
		if err != nil {
			return nil, "", "", err
		}
		if err := loadInto(ctx, ws, pl, fp, log); err != nil {
			ws.Close()
			return nil, "", "", err
		}
		return ws, "loaded", "in-memory workspace", nil
	}
	if _, statErr := os.Stat(pl.Workspace); statErr == nil {
		ws, err := workspace.Open(ctx, pl.Workspace, workspace.Options{})
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
		ws.Close()
		if log != nil {
			fmt.Fprintf(log, "Reloading the workspace: %s\n", why)
		}
		if err := loadFresh(ctx, pl, fp, log, true); err != nil {
			return nil, "", "", err
		}
		ws, err = workspace.Open(ctx, pl.Workspace, workspace.Options{})
		if err != nil {
			return nil, "", "", err
		}
		return ws, "reloaded", why + "; the previous workspace is kept as " + pl.Workspace + ".previous", nil
	} else if !errors.Is(statErr, fs.ErrNotExist) {
		return nil, "", "", statErr
	}
	if err := loadFresh(ctx, pl, fp, log, false); err != nil {
		return nil, "", "", err
	}
	ws, err = workspace.Open(ctx, pl.Workspace, workspace.Options{})
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
	rows, err := ws.Conn.QueryContext(ctx, "SELECT sha256, path FROM files ORDER BY file_id")
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

// loadFresh loads the sources into a new workspace file beside the
// target and moves it into place only when every source has loaded.
func loadFresh(ctx context.Context, pl *Plan, fp string, log io.Writer, replace bool) error {
	tmp := pl.Workspace + ".loading"
	removeDB(tmp)
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
	if replace {
		prev := pl.Workspace + ".previous"
		removeDB(prev)
		if err := os.Rename(pl.Workspace, prev); err != nil {
			removeDB(tmp)
			return fmt.Errorf("keeping the previous workspace: %w", err)
		}
		if _, err := os.Stat(pl.Workspace + ".wal"); err == nil {
			os.Rename(pl.Workspace+".wal", prev+".wal")
		}
	}
	if err := os.Rename(tmp, pl.Workspace); err != nil {
		return fmt.Errorf("putting the new workspace in place: %w", err)
	}
	if _, err := os.Stat(tmp + ".wal"); err == nil {
		os.Rename(tmp+".wal", pl.Workspace+".wal")
	}
	return nil
}

func removeDB(path string) {
	os.Remove(path)
	os.Remove(path + ".wal")
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
