package main

import (
	"context"
	"fmt"

	"github.com/leadline/leadline/engine/reconcile"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "reconcile",
		summary: "reconcile the loaded ledger against the client's totals or trial balance (a control file)",
		usage: `Usage: leadline reconcile --control FILE [options]

Compares the workspace's ledger with a control file, exactly: per key, the
expected total, the loaded total and the difference (loaded - expected);
keys present on one side only; and a verdict. The result is stored in the
workspace (tables ll_reconciliation and ll_reconciliation_rows, with the
control file's name and SHA-256) and shown by leadline report. Any
difference makes the command fail unless --accept-differences is given.
leadline load --control FILE does the same right after a load.

The control file is CSV with a header. Keys: any of entity, account,
currency (each a ledger column of that name; none for one grand total).
Totals, either
  expected totals: any of rows, debit, credit, net
    (debit = sum of the positive amounts, credit = sum of the negative
    amounts as a positive number, net = sum of all amounts), or
  a trial balance: opening and closing (debit balances positive), so that
    the expected net activity = closing - opening.
Columns named otherwise are mapped with --control-map ROLE=COLUMN. Amounts
are read by the ledger's amount rules (thousands separators, currency
markers, parentheses, a decimal comma settled by the file's own amounts or
--control-decimal-comma), exactly, never rounded.

Examples:
  leadline reconcile --control tb_2025.csv
  leadline reconcile --db acme.duckdb --control totals.csv --control-map entity=Company --control-map net=Balance
  leadline reconcile --control tb_2025.csv --accept-differences --format json`,
		flags: thin(reconcileFlags, runReconcile),
	})
}

type reconcileOptions struct {
	db      dbFlags
	control controlFlags
	format  formatFlag
	opts    reconcile.Options
}

func reconcileFlags(fs *pflag.FlagSet) func(args []string) (reconcileOptions, error) {
	var o reconcileOptions
	o.db.add(fs)
	o.control.add(fs)
	o.format.add(fs)
	return func(args []string) (reconcileOptions, error) {
		if err := o.format.check(); err != nil {
			return o, err
		}
		if len(args) > 0 {
			return o, fmt.Errorf("reconcile takes no arguments; give the control file with --control FILE")
		}
		if o.control.file == "" {
			return o, fmt.Errorf("give the control file with --control FILE (see --help)")
		}
		var err error
		o.opts, err = o.control.options()
		return o, err
	}
}

func runReconcile(ctx context.Context, e *env, o reconcileOptions) error {
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	res, err := reconcile.Run(ctx, ws, o.control.file, o.opts, o.control.accept)
	if err != nil {
		return err
	}
	switch o.format.value {
	case "json":
		err = writeJSON(e.stdout, res)
	case "csv":
		err = res.Table().WriteCSV(e.stdout)
	default:
		err = res.WriteText(e.stdout)
	}
	if err != nil {
		return err
	}
	if res.Failed() {
		return res
	}
	return nil
}
