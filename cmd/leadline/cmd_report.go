package main

import (
	"context"
	"fmt"
	"path/filepath"
	"strconv"

	"github.com/leadline/leadline/engine/report"
	"github.com/spf13/pflag"
)

// Importing engine/report also registers the report with engine/output, so
// that every pack run (leadline run) writes report.html into its output
// folder and adds the digit charts to its workbook.

func init() {
	register(&command{
		name:    "report",
		summary: "write the results of the workspace as one self-contained HTML report",
		usage: `Usage: leadline report [options] [RUN_ID...]

Writes one HTML file that opens offline in any browser and prints cleanly:
the job summary with the caution that results are signals for follow-up,
never proof; which runs the report is built from, when and with which
parameters; completeness (files, rows read, loaded and rejected, SHA-256,
control totals per entity, reject reasons); each digit test as a chart of
observed against expected proportions with its bounds, flagged bins and
statistics; the runs test's surplus and shortfall stretches; the segment
ranking; the limit probe; the range chart; the duplicate groups; the
drill-down extracts; the journal-entry checks with their SQL; and the
manifest of a pack run.

A report is built from one set of runs, named in its header:
  --set pack     the latest pack run (leadline run) and the runs it stored
  --set latest   the latest run of each kind made with the population
                 settings (--where, --signs, --min, --by) of the latest scan
  --runs ID,ID   exactly these runs (run ids as arguments do the same)
Without these, the pack set when the workspace holds a pack run, else the
latest set. Stored runs outside the set are listed in the header with the
command that reports them; a section or test the set lacks says "not run in
this set" with the command that runs it. Sections whose population differs
from the digit tests' say so at their head.

The file needs nothing else: no scripts, fonts or images are fetched.

Examples:
  leadline report                              # ./report.html from ./leadline.duckdb
  leadline report --db acme.duckdb --out acme-fy2025.html
  leadline report --set latest                 # the latest ad-hoc runs, not the pack's
  leadline report --runs 4,7,9 --out selected.html`,
		flags: thin(reportFlags, runReport),
	})
}

// reportOptions are what report's flags and arguments ask for.
type reportOptions struct {
	db     dbFlags
	out    string
	report report.Options
}

// reportFlags registers report's flags; the function it returns reads the
// run ids from the arguments.
func reportFlags(fs *pflag.FlagSet) func(args []string) (reportOptions, error) {
	var o reportOptions
	o.db.add(fs)
	fs.StringVar(&o.out, "out", "report.html", "the HTML file to write")
	fs.StringVar(&o.report.Title, "title", "", `the report's heading (default "leadline report")`)
	fs.StringVar(&o.report.Set, "set", "", "the runs the report is built from: pack or latest (default: pack when the workspace holds a pack run, else latest)")
	var runs []string
	fs.StringSliceVar(&runs, "runs", nil, "exactly these run ids, e.g. 4,7,9 (instead of --set)")
	return func(args []string) (reportOptions, error) {
		switch o.report.Set {
		case report.SetAuto, report.SetPack, report.SetLatest:
		default:
			return o, fmt.Errorf("--set %q: give pack or latest (or name runs with --runs)", o.report.Set)
		}
		all := append(append([]string{}, runs...), args...)
		if len(all) > 0 && o.report.Set != report.SetAuto {
			return o, fmt.Errorf("--set %s and run ids together: give one of them", o.report.Set)
		}
		for _, a := range all {
			id, err := strconv.ParseInt(a, 10, 64)
			if err != nil || id <= 0 {
				return o, fmt.Errorf("%q is not a run id: give run ids as whole numbers (list them with: leadline sql \"SELECT run_id, kind, started_at FROM runs\")", a)
			}
			o.report.RunIDs = append(o.report.RunIDs, id)
		}
		return o, nil
	}
}

// runReport writes the report file and prints its absolute path.
func runReport(ctx context.Context, e *env, o reportOptions) error {
	ws, err := e.openWorkspace(ctx, o.db, true)
	if err != nil {
		return err
	}
	defer ws.Close()
	if err := ws.CheckOutputFile(ctx, o.out); err != nil {
		return err
	}
	if err := report.WriteFile(ctx, ws, o.out, o.report); err != nil {
		return err
	}
	abs, err := filepath.Abs(o.out)
	if err != nil {
		abs = o.out
	}
	fmt.Fprintln(e.stdout, abs)
	return nil
}
