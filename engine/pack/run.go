package pack

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/workspace"
)

// RunOptions tune a pack run.
type RunOptions struct {
	Out    string           // the output folder (required)
	Fresh  bool             // reload the workspace even when the inputs are unchanged
	Log    io.Writer        // progress lines; nil for none
	Output output.Options   // extra writers and hooks
	Now    func() time.Time // the clock (tests); default time.Now
}

// Result is what a run did.
type Result struct {
	Plan     *Plan
	Run      *output.Run
	Outputs  []output.OutputFile
	Warnings []Problem
	// StepErrors lists the steps that could not complete (the others ran
	// and the outputs were written); the command exits non-zero.
	StepErrors []string
	// Reconciliation is the reconciliation with [control], if any; one
	// that does not tie and is not accepted makes the command fail.
	Reconciliation *reconcile.Result
}

// Run checks the pack and the output folder, loads the sources or reuses
// the workspace, runs every step and writes the output folder (replacing
// an earlier run's folder only once every file of the new one is written). A
// pack with problems returns *Problems and runs nothing.
func Run(ctx context.Context, p *Pack, o RunOptions) (*Result, error) {
	now := o.Now
	if now == nil {
		now = time.Now
	}
	started := now().UTC()
	if o.Out == "" {
		return nil, fmt.Errorf("give the output folder (--out DIR)")
	}
	t0 := time.Now()
	pl, probs := Check(ctx, p)
	if o.Log != nil {
		fmt.Fprintf(o.Log, "  %-28s done in %.1fs\n", "checking the pack", time.Since(t0).Seconds())
	}
	if len(probs.Errors()) > 0 {
		return nil, probs
	}
	res := &Result{Plan: pl, Warnings: probs.Warnings()}
	out, err := filepath.Abs(o.Out)
	if err != nil {
		return nil, err
	}
	info := output.PackInfo{Name: p.Pack.Name, Client: p.Pack.Client, Period: p.Pack.Period, File: p.File, SHA256: p.SHA256}
	// One run at a time writes an output folder; a run killed while
	// writing it left files beside it that are tidied here.
	if err := os.MkdirAll(filepath.Dir(out), 0o755); err != nil {
		return nil, err
	}
	outLock, err := workspace.AcquireLock(ctx, output.LockName(out), o.Log)
	if err != nil {
		return nil, err
	}
	defer outLock.Unlock()
	if err := output.RecoverDir(out, info, o.Log); err != nil {
		return nil, err
	}
	if _, err := output.CheckDir(out, info); err != nil {
		return nil, err
	}
	inputs, err := hashInputs(pl)
	if err != nil {
		return nil, err
	}
	t0 = time.Now()
	ws, action, reason, release, err := openWorkspace(ctx, pl, inputs, o.Fresh, o.Log)
	if err != nil {
		return nil, err
	}
	defer release()
	defer ws.Close()
	if o.Log != nil {
		fmt.Fprintf(o.Log, "Workspace %s: %s (%s) in %.1fs\n", pl.Workspace, action, reason, time.Since(t0).Seconds())
	}
	runID, err := ws.NextRunID(ctx)
	if err != nil {
		return nil, err
	}
	duck, err := ws.DuckDBVersion(ctx)
	if err != nil {
		return nil, err
	}
	run := &output.Run{Format: output.FormatVersion, Pack: info, Results: map[string]any{},
		Summary: output.Summary{Caution: output.Caution, Findings: []output.Finding{}, Notes: []string{}}}
	r := &runner{pl: pl, ws: ws, inputs: inputs, run: run, scale: pl.Scale, stepRuns: map[string]int64{}}
	step0 := time.Now()
	doneStep := ws.Step("completeness")
	err = r.completeness(ctx)
	doneStep()
	if err != nil {
		return nil, fmt.Errorf("completeness: %w", err)
	}
	if o.Log != nil {
		fmt.Fprintf(o.Log, "  %-28s done in %.1fs\n", "completeness", time.Since(step0).Seconds())
	}
	step := func(name string, fn func(context.Context) error) {
		if ctx.Err() != nil {
			return
		}
		t0 := time.Now()
		// The progress bar names the step; a step that names its own
		// parts (the battery's tests) shows those.
		done := ws.Step(name)
		err := fn(ctx)
		done()
		if err != nil {
			r.stepFailed(name, err)
		}
		if o.Log != nil {
			status := "done"
			if err != nil {
				status = "not completed"
			}
			fmt.Fprintf(o.Log, "  %-28s %s in %.1fs\n", name, status, time.Since(t0).Seconds())
		}
	}
	if pl.Battery != nil {
		step("battery", r.batteryStep)
	}
	if pl.Limits != nil {
		step("limits", r.limitsStep)
	}
	if pl.Ranges != nil {
		step("ranges", r.rangesStep)
	}
	if pl.Duplicates != nil {
		step("duplicates", r.duplicatesStep)
	}
	for _, e := range pl.Extracts {
		e := e
		step("extract "+e.Name, func(ctx context.Context) error { return r.extractStep(ctx, e) })
	}
	for _, c := range pl.Checks {
		c := c
		step("check "+c.Name, func(ctx context.Context) error { return r.checkStep(ctx, c) })
	}
	step("follow-up", r.followupStep)
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("run interrupted; nothing was written: %w", err)
	}
	for _, w := range res.Warnings {
		run.Summary.Notes = append(run.Summary.Notes, "pack warning: "+w.String())
	}
	var manInputs []output.Input
	for _, in := range inputs {
		mi := output.Input{Source: pl.Sources[in.Source].Name, Path: pl.rel(in.Path), SizeBytes: in.Size, SHA256: in.SHA256, Mode: load.ModeCopy}
		if pl.Sources[in.Source].Options.InPlace {
			mi.Mode = load.ModeInPlace
		}
		for _, t := range run.Tables {
			if t.Name != "inputs" {
				continue
			}
			for _, row := range t.Rows {
				if row[4] == in.SHA256 {
					mi.RowsRead, _ = row[5].(int64)
					mi.RowsLoaded, _ = row[6].(int64)
					mi.RowsRejected, _ = row[7].(int64)
				}
			}
		}
		manInputs = append(manInputs, mi)
	}
	run.Manifest = &output.Manifest{
		Format: output.FormatVersion, Tool: "leadline", ToolVersion: workspace.Version, DuckDBVersion: duck,
		Pack: info, Workspace: pl.Workspace, AmountType: pl.AmountType, Inputs: manInputs, Parameters: pl.Parameters(),
		Run:            output.RunInfo{StartedAt: started, RunID: runID, WorkspaceAction: action, WorkspaceReason: reason, StepRuns: r.stepRuns},
		Reconciliation: run.Summary.Completeness.Reconciliation,
	}
	run.Manifest.Run.FinishedAt = now().UTC()
	t0 = time.Now()
	// Written beside the earlier results, which are replaced only once
	// every file is written.
	outs, err := output.WriteDir(ctx, out, info, run, o.Output)
	if err != nil {
		return nil, err
	}
	if o.Log != nil {
		fmt.Fprintf(o.Log, "  %-28s done in %.1fs\n", "writing the output folder", time.Since(t0).Seconds())
	}
	run.Manifest.Outputs = outs
	res.Run, res.Outputs, res.StepErrors, res.Reconciliation = run, outs, r.errs, r.reconciled
	params := map[string]any{"pack": info, "parameters": pl.Parameters(), "out": out}
	if _, err := ws.SaveRun(ctx, workspace.Run{ID: runID, Kind: "pack", Started: started, Params: params, Result: run}); err != nil {
		return res, err
	}
	return res, nil
}
