package pack

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/tabular"
)

// Control is the [control] table: the client's totals or trial balance
// that the loaded ledger is reconciled against.
type Control struct {
	File         string            `toml:"file" json:"file"`                         // CSV, relative to the pack's folder
	Accept       bool              `toml:"accept" json:"accept"`                     // accept differences: the run does not fail on them
	Columns      map[string]string `toml:"columns" json:"columns,omitempty"`         // role = the file's column, when its header differs
	DecimalComma bool              `toml:"decimal_comma" json:"decimal_comma"`       // the control file writes 1.234,56
	DecimalPoint bool              `toml:"decimal_point" json:"decimal_point"`       // the control file writes 1,234.56
	Description  string            `toml:"description" json:"description,omitempty"` // what the file is, e.g. "trial balance from the client's ERP, 2025-12-31"
}

// ControlPlan is the checked [control] table.
type ControlPlan struct {
	Path    string            `json:"path"` // absolute
	Options reconcile.Options `json:"options"`
	Accept  bool              `json:"accept"`
	SHA256  string            `json:"sha256"` // when checked
	Shape   string            `json:"shape"`
	Keys    []string          `json:"keys"`
}

// period reads [pack] period as dates for the out-of-period check. Text
// that is not a period leadline reads is a warning (the check is then not
// possible), unless it was meant as dates (it holds ".."), which is an error.
func (c *checker) period(pl *Plan) {
	t := strings.TrimSpace(c.p.Pack.Period)
	if t == "" {
		return
	}
	p, err := journal.ParsePeriod(t)
	switch {
	case err == nil:
		pl.Period = &p
	case strings.Contains(t, ".."):
		c.errf("pack.period", "%v", err)
	default:
		c.warnf("pack.period", "%v; until then postings outside the period are not checked", err)
	}
}

// control checks the [control] table and reads the control file, so that
// a mistake there stops the pack before anything is loaded.
func (c *checker) control(pl *Plan) {
	ct := c.p.Control
	if ct == nil {
		return
	}
	if strings.TrimSpace(ct.File) == "" {
		c.errf("control", "no file: give file = \"trial_balance.csv\" under [control] (relative to the pack file)")
		return
	}
	path := ct.File
	if !filepath.IsAbs(path) {
		path = filepath.Join(c.p.Dir, path)
	}
	o := reconcile.Options{Map: map[string]string{}, DecimalComma: ct.DecimalComma, DecimalPoint: ct.DecimalPoint, Scale: pl.Scale}
	bad := false
	for role, col := range ct.Columns {
		if err := reconcile.CheckRole(role, col); err != nil {
			c.engineErr("control.columns."+role, err, controlKeys)
			bad = true
			continue
		}
		o.Map[role] = col
	}
	if err := reconcile.CheckDecimalMarks(ct.DecimalComma, ct.DecimalPoint); err != nil {
		c.engineErr("control.decimal_point", err, controlKeys)
		bad = true
	}
	if bad {
		return
	}
	ctl, err := reconcile.Read(path, o)
	if err != nil {
		c.engineErr("control.file", err, controlKeys)
		return
	}
	pl.Control = &ControlPlan{Path: path, Options: o, Accept: ct.Accept, SHA256: ctl.SHA256, Shape: ctl.Shape, Keys: ctl.Keys}
}

// journalChecks adds the journal checks to the completeness section: one
// table of the checks and one of the first findings of each.
func (r *runner) journalChecks(ctx context.Context) error {
	if r.pl.Period != nil {
		// Kept for the checks of later commands on this workspace (report).
		if err := journal.SavePeriod(ctx, r.ws, *r.pl.Period); err != nil {
			return err
		}
	}
	s, err := journal.Run(ctx, r.ws, journal.Options{Period: r.pl.Period})
	if err != nil {
		return err
	}
	t := &tabular.Table{Columns: []string{"check", "title", "status", "found", "unit", "ledger_rows", "reason", "command"}}
	var lines []output.IntegrityLine
	for _, c := range s.Checks {
		var found, rows any
		if c.Status != journal.StatusNotRun {
			found, rows = c.Count, c.Rows
		}
		t.Add(c.Name, c.Title, c.Status, found, c.Unit, rows, c.Reason, c.Command)
		lines = append(lines, output.IntegrityLine{Check: c.Name, Status: c.Status, Count: c.Count, Text: c.Text()})
		if c.Status == journal.StatusFound {
			ft := c.FirstTable()
			ot := output.FromTabular(ft, "journal_"+c.Name, fmt.Sprintf("%s: the first %d of %s", c.Title, len(c.First), numfmt.Int(c.Count)), "completeness", nil)
			ot.RowsTotal = c.Count
			ot.Truncated = c.Count > int64(len(c.First))
			if ot.Truncated {
				ot.Note = "all of them: " + c.Command
			}
			r.add(ot)
		}
	}
	r.add(output.FromTabular(t, "journal_checks", "Journal checks: unbalanced documents, postings outside the period, repeated line keys", "completeness",
		map[string]output.Kind{"found": output.Count, "ledger_rows": output.Count, "reason": output.Text, "command": output.Text}))
	r.run.Summary.Completeness.Journal = lines
	r.run.Results["journal"] = s
	var found []string
	for _, c := range s.Checks {
		if c.Status == journal.StatusFound {
			found = append(found, fmt.Sprintf("%s %s", numfmt.Int(c.Count), strings.ReplaceAll(c.Name, "_", " ")))
		}
	}
	if len(found) > 0 {
		r.finding("completeness", "journal_checks", "Journal checks: %s.", strings.Join(found, ", "))
	}
	return nil
}

// reconciliation reconciles the ledger against the pack's control file
// and stores the result in the workspace.
func (r *runner) reconciliation(ctx context.Context) error {
	cp := r.pl.Control
	if cp == nil {
		return nil
	}
	res, err := reconcile.Run(ctx, r.ws, cp.Path, cp.Options, cp.Accept)
	if err != nil {
		return err
	}
	r.reconciled = res
	tt := res.Table()
	kinds := map[string]output.Kind{"control_line": output.Count, "status": output.Text, "measure": output.Text,
		"expected": output.Money, "loaded": output.Money, "difference": output.Money, "opening": output.Money, "closing": output.Money}
	for _, k := range res.Keys {
		kinds[k] = output.Text
	}
	t := output.FromTabular(tt, "reconciliation", fmt.Sprintf("Reconciliation with %s: expected, loaded and difference (loaded - expected) per key", res.Control.Name), "completeness", kinds)
	t.Note = res.Verdict
	r.add(t)
	r.run.Summary.Completeness.Reconciliation = &output.ReconciliationLine{
		ControlFile: r.pl.rel(cp.Path), SHA256: res.Control.SHA256, Shape: res.Control.Shape, Ties: res.Ties, Accepted: res.Accepted, Verdict: res.Verdict,
	}
	// results.json is the same for the same pack on the same inputs: the
	// stored id and time belong to the workspace, not to the result.
	doc := *res
	doc.ID, doc.CreatedAt = 0, time.Time{}
	r.run.Results["reconciliation"] = &doc
	r.finding("completeness", "reconciliation", "Reconciliation with %s: %s.", res.Control.Name, res.Verdict)
	return nil
}

// controlKeys are the pack's names of the reconciliation's fields.
var controlKeys = map[string]string{"control_map": "[control.columns]", "control_decimal_comma": "decimal_comma", "control_decimal_point": "decimal_point"}
