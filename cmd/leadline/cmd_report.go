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
never proof; completeness (files, rows read, loaded and rejected, SHA-256,
control totals per entity, reject reasons); each digit test as a chart of
observed against expected proportions with its bounds, flagged bins and
statistics; the runs test's surplus and shortfall stretches; the segment
ranking; the limit probe; the range chart; the duplicate groups; the
drill-down extracts; and the manifest of a pack run. A section whose run is
missing says "Not run".

Without RUN_IDs the report shows the latest run of each kind stored in the
workspace (and the latest five drill-downs); with RUN_IDs, only those runs.
The file needs nothing else: no scripts, fonts or images are fetched.

Examples:
  leadline report                              # ./report.html from ./leadline.duckdb
  leadline report --db acme.duckdb --out acme-fy2025.html
  leadline report 4 7 9 --out selected.html    # only runs 4, 7 and 9`,
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
	return func(args []string) (reportOptions, error) {
		for _, a := range args {
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
