package main

import (
	"context"
	"time"

	"github.com/leadline/leadline/engine/countsql"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/workspace"
)

// limitsCountsReport and rangesCountsReport are the JSON documents (and
// stored results) of runs on counts made elsewhere: the report and where
// its counts came from, as scan --counts stores them.
type limitsCountsReport struct {
	*limits.Report
	CountsSource *countsql.Source `json:"counts_source"`
}

type rangesCountsReport struct {
	*ranges.Report
	CountsSource *countsql.Source `json:"counts_source"`
}

// limitsCounts is limits --counts: the probe on merged band count files,
// stored as a limits run with the counts' provenance.
func limitsCounts(ctx context.Context, e *env, o limitsOptions) error {
	started := time.Now()
	rep, src, err := countsql.Limits(o.counts.query, o.counts.files, o.limits)
	if err != nil {
		return err
	}
	doc := &limitsCountsReport{Report: rep, CountsSource: src}
	params := o.limits
	params.Spec, params.Limits, params.Width = rep.Population, rep.Limits, rep.Width
	run := workspace.Run{Kind: "limits", Started: started, Params: params, Result: doc, SetID: func(id int64) { rep.RunID = id }}
	if done, err := storeCountsRun(ctx, e, o.db, run, src, o.format); done || err != nil {
		return err
	}
	return printLimits(e.stdout, o.format, rep, o.top)
}

// rangesCounts is ranges --counts: the range table on merged band count
// files, stored as a ranges run with the counts' provenance.
func rangesCounts(ctx context.Context, e *env, o rangesOptions) error {
	started := time.Now()
	rep, src, err := countsql.Ranges(o.counts.query, o.counts.files)
	if err != nil {
		return err
	}
	doc := &rangesCountsReport{Report: rep, CountsSource: src}
	params := ranges.Options{Spec: rep.Population, Layout: rep.Layout}
	run := workspace.Run{Kind: "ranges", Started: started, Params: params, Result: doc, SetID: func(id int64) { rep.RunID = id }}
	if done, err := storeCountsRun(ctx, e, o.db, run, src, o.format); done || err != nil {
		return err
	}
	return printRanges(e.stdout, o.format, rep)
}

// storeCountsRun stores a run made on counts from elsewhere (scan, limits
// or ranges --counts) in the workspace, and writes its JSON document
// (done: nothing more to print) or, before the text, where the counts came
// from.
func storeCountsRun(ctx context.Context, e *env, db dbFlags, run workspace.Run, src *countsql.Source, format string) (done bool, err error) {
	ws, err := e.openWorkspace(ctx, db, false)
	if err != nil {
		return false, err
	}
	defer ws.Close()
	if _, err := ws.SaveRun(ctx, run); err != nil {
		return false, err
	}
	switch format {
	case "json":
		return true, writeJSON(e.stdout, run.Result)
	case "text":
		printCountsSource(e.stdout, src)
	}
	return false, nil
}
