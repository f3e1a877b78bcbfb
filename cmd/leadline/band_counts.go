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
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	doc := &limitsCountsReport{Report: rep, CountsSource: src}
	params := o.limits
	params.Spec, params.Limits, params.Width = rep.Population, rep.Limits, rep.Width
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: "limits", Started: started, Params: params, Result: doc, SetID: func(id int64) { rep.RunID = id }}); err != nil {
		return err
	}
	if o.format == "json" {
		return writeJSON(e.stdout, doc)
	}
	if o.format == "text" {
		printCountsSource(e.stdout, src)
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
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	doc := &rangesCountsReport{Report: rep, CountsSource: src}
	params := ranges.Options{Spec: rep.Population, Layout: rep.Layout}
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: "ranges", Started: started, Params: params, Result: doc, SetID: func(id int64) { rep.RunID = id }}); err != nil {
		return err
	}
	if o.format == "json" {
		return writeJSON(e.stdout, doc)
	}
	if o.format == "text" {
		printCountsSource(e.stdout, src)
	}
	return printRanges(e.stdout, o.format, rep)
}
