package main

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "followup",
		summary: "read back returned exports with their follow-up columns filled, for the next report",
		usage: `Usage: leadline followup [options] FILE...

Reads the engagement team's follow-up back into the workspace. Every
exported record set (drill --out, a pack's extracts and samples in tables/
and the workbook) ends in four empty columns:

  followup_status       what was found, in the team's words: explained,
                        exception, open... (read in lower case)
  followup_note         free text
  followup_reviewer     who followed the record up
  followup_reviewed_on  when (kept as written)

Each row of a returned file names its ledger record by its file_name and
line columns (keep them, in any column order; sorting or filtering rows is
fine). A row that names no single loaded record (an unknown file, a line
with no record, a line that is not a number) is refused with the reason
and its line in the returned file; no row is lost: rows read = rows stored
+ rows refused, per file. Returned rows left blank are stored as returned
without follow-up. Reading a file again adds its rows again; for each
record the latest follow-up entered counts.

The next report (leadline report, or a pack run's report.html and
workbook) shows the records by status, each flagged item with its counts
by status, and every record's latest follow-up. A fresh load (a new
workspace) starts without follow-up: read the returned files again.

FILE is a .csv (comma or semicolon separated) or an .xlsx workbook (--sheet
names the sheet: a pack workbook's extract sheet; its headings are read as
the column names).

Examples:
  leadline followup returned/vouch.csv
  leadline followup --sheet extract_first_two_bins out/results.xlsx`,
		flags: thin(followupFlags, runFollowup),
	})
}

// followupOptions are what followup's flags and arguments ask for.
type followupOptions struct {
	db     dbFlags
	format string
	sheet  string
	files  []string
}

func followupFlags(fs *pflag.FlagSet) func(args []string) (followupOptions, error) {
	var o followupOptions
	var f formatFlag
	o.db.add(fs)
	fs.StringVar(&o.sheet, "sheet", "", "the sheet of an .xlsx file (name or 1-based position; default: the first)")
	f.add(fs)
	return func(args []string) (followupOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) == 0 {
			return o, fmt.Errorf("give the returned file(s), e.g. leadline followup returned/vouch.csv (see --help)")
		}
		o.files, o.format = args, f.value
		return o, nil
	}
}

// followupJSON is what followup --format json prints (docs/json.md).
type followupJSON struct {
	Files []followup.FileResult `json:"files"`
}

func runFollowup(ctx context.Context, e *env, o followupOptions) error {
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	fileCol, err := drill.FileColumnName(ctx, ws)
	if err != nil {
		return err
	}
	res, err := followup.Read(ctx, ws, o.files, followup.Options{Sheet: o.sheet, FileColumn: fileCol})
	if err != nil {
		return err
	}
	switch o.format {
	case "json":
		return writeJSON(e.stdout, followupJSON{Files: res})
	case "csv":
		fmt.Fprintln(e.stdout, "read_id,path,rows_read,rows_stored,rows_refused,rows_filled")
		for _, f := range res {
			fmt.Fprintf(e.stdout, "%d,%q,%d,%d,%d,%d\n", f.ReadID, f.Path, f.RowsRead, f.RowsStored, f.RowsRefused, f.Filled)
		}
		return nil
	}
	w := e.stdout
	var refused int64
	for _, f := range res {
		where := f.Path
		if f.Sheet != "" {
			where += fmt.Sprintf(" (sheet %q)", f.Sheet)
		}
		fmt.Fprintf(w, "%s: %s rows read = %s stored + %s refused; %s with a status or note entered",
			where, numfmt.Int(f.RowsRead), numfmt.Int(f.RowsStored), numfmt.Int(f.RowsRefused), numfmt.Int(f.Filled))
		if len(f.Statuses) > 0 {
			fmt.Fprintf(w, " (statuses: %s)", strings.Join(f.Statuses, ", "))
		}
		fmt.Fprintln(w)
		if len(f.Missing) > 0 {
			fmt.Fprintf(w, "  note: no %s column: read as blank\n", strings.Join(f.Missing, ", "))
		}
		for _, r := range f.Refusals {
			fmt.Fprintf(w, "  refused: %s line %d: %s\n", f.Path, r.Line, r.Reason)
		}
		if n := f.RowsRefused - int64(len(f.Refusals)); n > 0 {
			fmt.Fprintf(w, "  ... and %s more refused rows (leadline sql \"SELECT * FROM followup_refused WHERE read_id = %d\")\n", numfmt.Int(n), f.ReadID)
		}
		refused += f.RowsRefused
	}
	fmt.Fprintln(w, "The next report (leadline report, or the next pack run) shows the follow-up.")
	if refused > 0 {
		return fmt.Errorf("%s returned row(s) refused: they name no loaded record by file_name and line; fix them in the returned file and read it again", numfmt.Int(refused))
	}
	return nil
}
