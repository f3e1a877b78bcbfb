package main

import (
	"context"
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

// controlFlags are the flags of a reconciliation against a control file,
// shared by load and reconcile.
type controlFlags struct {
	file         string
	maps         []string
	accept       bool
	decimalComma bool
	decimalPoint bool
}

func (c *controlFlags) add(fs *pflag.FlagSet) {
	fs.StringVar(&c.file, "control", "", "control file (CSV) of the client's totals per entity/account/currency, or a trial balance: the ledger is reconciled against it")
	fs.StringArrayVar(&c.maps, "control-map", nil, "name the control file's column for a role, ROLE=COLUMN (entity, account, currency, rows, debit, credit, net, opening, closing; repeatable)")
	fs.BoolVar(&c.accept, "accept-differences", false, "accept differences from the control file: the verdict says \"accepted\" and the command succeeds")
	fs.BoolVar(&c.decimalComma, "control-decimal-comma", false, "the control file's amounts write the decimal mark as a comma (default: settled by its own amounts)")
	fs.BoolVar(&c.decimalPoint, "control-decimal-point", false, "the control file's amounts write the decimal mark as a point")
}

// options checks the flags and returns the control file's reading options.
func (c *controlFlags) options() (reconcile.Options, error) {
	o := reconcile.Options{Map: map[string]string{}, DecimalComma: c.decimalComma, DecimalPoint: c.decimalPoint, Scale: 6}
	if c.file == "" && (len(c.maps) > 0 || c.accept || c.decimalComma || c.decimalPoint) {
		return o, fmt.Errorf("--control-map, --accept-differences and --control-decimal-* need --control FILE")
	}
	if err := reconcile.CheckDecimalMarks(c.decimalComma, c.decimalPoint); err != nil {
		return o, err
	}
	for _, s := range c.maps {
		k, v, ok := strings.Cut(s, "=")
		k = strings.ToLower(strings.TrimSpace(k))
		if !ok || k == "" || strings.TrimSpace(v) == "" {
			return o, fmt.Errorf("--control-map %q: write ROLE=COLUMN, e.g. --control-map net=Movement", s)
		}
		if err := reconcile.CheckRole(k, strings.TrimSpace(v)); err != nil {
			return o, err
		}
		o.Map[k] = strings.TrimSpace(v)
	}
	return o, nil
}

// loadChecks are what load adds to its completeness summary: the journal
// checks (with --period) and the reconciliation (with --control).
type loadChecks struct {
	control controlFlags
	period  string
	parsed  *journal.Period
	opts    reconcile.Options
}

func (lc *loadChecks) add(fs *pflag.FlagSet) {
	fs.StringVar(&lc.period, "period", "", "the period the extract covers, e.g. 2025-01-01..2025-12-31 or 2025: postings outside it are counted")
	lc.control.add(fs)
}

// check checks the period and the control flags, before anything is
// read or loaded.
func (lc *loadChecks) check() error {
	if strings.TrimSpace(lc.period) != "" {
		p, err := journal.ParsePeriod(lc.period)
		if err != nil {
			return fmt.Errorf("--period: %w", err)
		}
		lc.parsed = &p
	}
	o, err := lc.control.options()
	if err != nil {
		return err
	}
	lc.opts = o
	return nil
}

// readControl reads the control file before anything is loaded: a
// mistake there should not cost a long load.
func (lc *loadChecks) readControl() error {
	if lc.control.file != "" {
		if _, err := reconcile.Read(lc.control.file, lc.opts); err != nil {
			return fmt.Errorf("%w; nothing was loaded", err)
		}
	}
	return nil
}

// loadOutput is load's JSON document: the load report with the journal
// checks and the reconciliation.
type loadOutput struct {
	*load.Report
	Journal        *journal.Summary  `json:"journal"`
	Reconciliation *reconcile.Result `json:"reconciliation,omitempty"`
}

// finish runs the checks on the committed load, prints everything and
// fails when the ledger does not tie to the control file.
func (lc *loadChecks) finish(ctx context.Context, ws *workspace.Workspace, w io.Writer, format string, rep *load.Report) error {
	out := loadOutput{Report: rep}
	period := lc.parsed
	var err error
	if period != nil {
		if err := journal.SavePeriod(ctx, ws, *period); err != nil {
			return fmt.Errorf("load %d is committed, but storing the period failed: %w", rep.LoadID, err)
		}
	} else if period, err = journal.SavedPeriod(ctx, ws); err != nil {
		return err
	}
	if out.Journal, err = journal.Run(ctx, ws, journal.Options{Period: period}); err != nil {
		return fmt.Errorf("load %d is committed, but the journal checks failed: %w", rep.LoadID, err)
	}
	if lc.control.file != "" {
		out.Reconciliation, err = reconcile.Run(ctx, ws, lc.control.file, lc.opts, lc.control.accept)
		if err != nil {
			return fmt.Errorf("load %d is committed, but the reconciliation failed: %w (rerun it with leadline reconcile --db %s --control %s)", rep.LoadID, err, ws.Path, lc.control.file)
		}
	}
	switch format {
	case "json":
		if err := writeJSON(w, out); err != nil {
			return err
		}
	case "csv":
		if err := printLoad(w, format, rep); err != nil {
			return err
		}
	default:
		if err := printLoad(w, format, rep); err != nil {
			return err
		}
		printJournal(w, out.Journal)
		if out.Reconciliation != nil {
			fmt.Fprintln(w)
			if err := out.Reconciliation.WriteText(w); err != nil {
				return err
			}
		}
	}
	if r := out.Reconciliation; r != nil && r.Failed() {
		return fmt.Errorf("load %d is committed, but %s", rep.LoadID, r.Error())
	}
	return nil
}

// printJournal prints the journal checks: a line each, the first few
// findings and the command that lists them all.
func printJournal(w io.Writer, s *journal.Summary) {
	if s == nil || len(s.Checks) == 0 {
		return
	}
	fmt.Fprintln(w, "\nJournal checks (whole workspace):")
	for _, c := range s.Checks {
		fmt.Fprintf(w, "  %s\n", c.Text())
		if c.Status != journal.StatusFound {
			continue
		}
		t := c.FirstTable()
		var b strings.Builder
		t.WriteText(&b, 40)
		for _, line := range strings.Split(strings.TrimRight(b.String(), "\n"), "\n") {
			fmt.Fprintf(w, "    %s\n", line)
		}
		if c.Count > int64(len(c.First)) {
			fmt.Fprintf(w, "    (the first %d of %d)\n", len(c.First), c.Count)
		}
		fmt.Fprintf(w, "    all: %s\n", c.Command)
	}
}
