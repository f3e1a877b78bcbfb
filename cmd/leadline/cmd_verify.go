package main

import (
	"context"
	"errors"
	"fmt"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "verify",
		summary: "check that the workspace's files and rows are as recorded: hashes of files in place, rows read = loaded + rejected",
		usage: `Usage: leadline verify [options]

For a workspace whose Parquet files are registered in place (load
--in-place), hashes every file again and compares size, modification time
and SHA-256 with the record made when it was registered; every other
command compares size and time only (and hashes when those differ). Then,
for every file of any workspace, counts the rows the ledger holds for it
now and checks rows read = rows loaded + rows rejected against the load
log and the rejects table. Exits non-zero, naming each file, when anything
differs.

Examples:
  leadline verify --db acme.duckdb
  leadline verify --format json`,
		flags: thin(verifyFlags, runVerify),
	})
}

type verifyOptions struct {
	db     dbFlags
	format string
}

func verifyFlags(fs *pflag.FlagSet) func(args []string) (verifyOptions, error) {
	var o verifyOptions
	var f formatFlag
	o.db.add(fs)
	f.add(fs)
	return func(args []string) (verifyOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) != 0 {
			return o, fmt.Errorf("verify takes no arguments (got %q)", args[0])
		}
		o.format = f.value
		return o, nil
	}
}

// verifyFile is one file's verdict.
type verifyFile struct {
	FileID       int64  `json:"file_id"`
	Path         string `json:"path"`
	Mode         string `json:"mode"`
	File         string `json:"file"` // the in-place check, or "copied"
	RowsRead     int64  `json:"rows_read"`
	RowsLoaded   int64  `json:"rows_loaded"`
	RowsRejected int64  `json:"rows_rejected"`
	InLedger     int64  `json:"in_ledger"`
	Rejects      int64  `json:"rejects_stored"`
	OK           bool   `json:"ok"`
}

func runVerify(ctx context.Context, e *env, o verifyOptions) error {
	// The file check is done here, for every file, so that all are named.
	ws, err := o.db.openWith(ctx, workspace.Options{MustExist: true, DeferFileCheck: true})
	if err != nil {
		return err
	}
	defer ws.Close()
	placed, fileErr := ws.CheckFiles(ctx, true, nil)
	if fileErr != nil && !errors.Is(fileErr, workspace.ErrFileChanged) {
		return fileErr
	}
	state := map[int64]workspace.PlacedFile{}
	for _, p := range placed {
		state[p.FileID] = p
	}
	var out []verifyFile
	bad := 0
	// A changed or missing file cannot be read through the ledger view:
	// its rows are not counted.
	if fileErr == nil {
		has, err := ws.HasLedger(ctx)
		if err != nil {
			return err
		}
		if has {
			rows, err := ws.Conn.QueryContext(ctx, queries.Get("verify_files"))
			if err != nil {
				return err
			}
			for rows.Next() {
				var v verifyFile
				if err := rows.Scan(&v.FileID, &v.Path, &v.RowsRead, &v.RowsLoaded, &v.RowsRejected, &v.Rejects, &v.InLedger); err != nil {
					rows.Close()
					return err
				}
				out = append(out, v)
			}
			rows.Close()
			if err := rows.Err(); err != nil {
				return err
			}
		}
	} else {
		for _, p := range placed {
			out = append(out, verifyFile{FileID: p.FileID, Path: p.Path, RowsRead: -1, RowsLoaded: -1, RowsRejected: -1, InLedger: -1, Rejects: -1})
		}
	}
	for i := range out {
		v := &out[i]
		v.Mode, v.File, v.OK = load.ModeCopy, "copied", true
		if p, ok := state[v.FileID]; ok {
			v.Mode, v.File, v.OK = load.ModeInPlace, p.Status, p.OK
		}
		if fileErr == nil && (v.RowsRead != v.RowsLoaded+v.RowsRejected || v.InLedger != v.RowsLoaded || v.Rejects != v.RowsRejected) {
			v.OK = false
		}
		if !v.OK {
			bad++
		}
	}
	if o.format == "json" {
		if err := writeJSON(e.stdout, map[string]any{"files": out, "ok": bad == 0}); err != nil {
			return err
		}
	} else {
		t := &tabular.Table{Name: "verify", Columns: []string{"file_id", "path", "mode", "file", "rows_read", "rows_loaded", "rows_rejected", "in_ledger", "rejects_stored", "ok"}}
		for _, v := range out {
			if v.RowsRead < 0 { // not counted: the file cannot be read
				t.Add(v.FileID, v.Path, v.Mode, v.File, "", "", "", "", "", v.OK)
				continue
			}
			t.Add(v.FileID, v.Path, v.Mode, v.File, v.RowsRead, v.RowsLoaded, v.RowsRejected, v.InLedger, v.Rejects, v.OK)
		}
		if err := writeTable(e.stdout, o.format, t); err != nil {
			return err
		}
	}
	if fileErr != nil {
		return fileErr
	}
	if bad > 0 {
		return fmt.Errorf("%d of %d files do not match their load record (rows read = loaded + rejected, rows in the ledger = rows loaded, rejects stored = rows rejected); see the table above", bad, len(out))
	}
	if o.format == "text" {
		fmt.Fprintf(e.stdout, "\n%d files verified: every file as recorded, rows read = loaded + rejected for each.\n", len(out))
	}
	return nil
}
