package pack

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// runner carries one pack run's state between its steps.
type runner struct {
	pl       *Plan
	ws       *workspace.Workspace
	inputs   []inputFile
	run      *output.Run
	scale    int
	stepRuns map[string]int64
	errs     []string // steps that failed: noted, the others still run

	battery    *battery.Report
	limits     *limits.Report
	ranges     *ranges.Report
	duplicates *duplicates.Result
	reconciled *reconcile.Result
}

func (r *runner) add(t *output.Table) {
	t.KeepFormulas = r.pl.KeepFormulas
	r.run.Tables = append(r.run.Tables, t)
}

func (r *runner) finding(section, table, format string, args ...any) {
	r.run.Summary.Findings = append(r.run.Summary.Findings, output.Finding{Section: section, Table: table, Text: fmt.Sprintf(format, args...)})
}

func (r *runner) note(format string, args ...any) {
	r.run.Summary.Notes = append(r.run.Summary.Notes, fmt.Sprintf(format, args...))
}

func (r *runner) stepFailed(step string, err error) {
	msg := fmt.Sprintf("%s: not completed: %s", step, firstLine(err.Error()))
	r.errs = append(r.errs, msg)
	r.note("%s", msg)
	r.run.Results[step] = map[string]any{"error": firstLine(err.Error())}
}

func dec(s string) any {
	if d, ok := output.NewDecimal(s); ok {
		return d
	}
	if s == "" {
		return nil
	}
	return s
}

// amountDec writes a float amount (a limit, a band edge) at the ledger's
// scale.
func (r *runner) amountDec(v float64) output.Decimal {
	d, _ := output.NewDecimal(strconv.FormatFloat(v, 'f', r.scale, 64))
	return d
}

// completeness: per input file, rejects by reason, control totals per entity.
func (r *runner) completeness(ctx context.Context) error {
	bySHA := map[string]inputFile{}
	for _, in := range r.inputs {
		bySHA[in.SHA256] = in
	}
	rows, err := r.ws.Conn.QueryContext(ctx, queries.Get("pack_input_files"))
	if err != nil {
		return err
	}
	type fileRow struct {
		id                  int64
		sha, format         string
		size, read, ld, rej int64
		pos, neg, net       any
		source, path        string
		order               int
	}
	var files []fileRow
	for rows.Next() {
		var f fileRow
		if err := rows.Scan(&f.id, &f.sha, &f.format, &f.size, &f.read, &f.ld, &f.rej, &f.pos, &f.neg, &f.net); err != nil {
			rows.Close()
			return err
		}
		files = append(files, f)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	order := map[string]int{}
	for i, in := range r.inputs {
		order[in.SHA256] = i
	}
	for i := range files {
		in, ok := bySHA[files[i].sha]
		if !ok {
			return fmt.Errorf("the workspace holds file %d (SHA-256 %s…) that is not among the pack's inputs", files[i].id, files[i].sha[:12])
		}
		files[i].source = r.pl.Sources[in.Source].Name
		files[i].path = r.pl.rel(in.Path)
		files[i].order = order[files[i].sha]
	}
	sort.SliceStable(files, func(i, j int) bool { return files[i].order < files[j].order })
	if len(files) != len(r.inputs) {
		return fmt.Errorf("the workspace holds %d files, the pack names %d", len(files), len(r.inputs))
	}
	ft := &tabular.Table{Columns: []string{"source", "file", "format", "size_bytes", "sha256", "rows_read", "rows_loaded", "rows_rejected", "sum_positive", "sum_negative", "net"}}
	c := &r.run.Summary.Completeness
	c.Balanced = true
	byFile, err := load.FileTotals(ctx, r.ws.Conn)
	if err != nil {
		return err
	}
	var named []namedFile
	for _, f := range files {
		if len(byFile[f.id]) > 1 {
			// several currencies: the totals are per currency only
			f.pos, f.neg, f.net = nil, nil, nil
		}
		named = append(named, namedFile{f.id, f.source, f.path})
		ft.Add(f.source, f.path, f.format, f.size, f.sha, f.read, f.ld, f.rej, f.pos, f.neg, f.net)
		c.Files++
		c.RowsRead += f.read
		c.RowsLoaded += f.ld
		c.RowsRejected += f.rej
		if f.read != f.ld+f.rej {
			c.Balanced = false
		}
	}
	r.add(output.FromTabular(ft, "inputs", "Input files: rows read, loaded and rejected, control totals", "completeness", nil))
	r.inputCurrencies(named, byFile)

	// Totals over the workspace, exact.
	var pos, neg, net any
	if err := r.ws.Conn.QueryRowContext(ctx, queries.Get("pack_ledger_totals")).Scan(&pos, &neg, &net); err != nil {
		return err
	}
	c.SumPositive = output.FormatValue(output.Normalize(pos))
	c.SumNegative = output.FormatValue(output.Normalize(neg))
	c.Net = output.FormatValue(output.Normalize(net))
	if err := r.ledgerCurrencies(ctx, c); err != nil {
		return err
	}

	rj, err := r.ws.Conn.QueryContext(ctx, queries.Get("pack_rejects_by_file"))
	if err != nil {
		return err
	}
	rt := &tabular.Table{Columns: []string{"file", "reason", "rows", "first_line"}}
	for rj.Next() {
		var sha, reason string
		var n int64
		var line sql.NullInt64
		if err := rj.Scan(&sha, &reason, &n, &line); err != nil {
			rj.Close()
			return err
		}
		var l any
		if line.Valid {
			l = line.Int64
		}
		rt.Add(r.pl.rel(bySHA[sha].Path), reason, n, l)
	}
	rj.Close()
	r.add(output.FromTabular(rt, "rejects", "Rejected rows by file and reason (every rejected row is in the workspace's rejects table)", "completeness",
		map[string]output.Kind{"rows": output.Count, "first_line": output.Count}))

	ents, err := load.EntityTotals(ctx, r.ws)
	if err != nil {
		return err
	}
	et := entityTable(ents)
	r.add(output.FromTabular(et, "entities", "Control totals per entity", "completeness", map[string]output.Kind{"entity": output.Text, "currency": output.Text, "rows": output.Count, "sum_positive": output.Money, "sum_negative": output.Money, "net": output.Money}))

	r.run.Results["completeness"] = map[string]any{
		"files": c.Files, "rows_read": c.RowsRead, "rows_loaded": c.RowsLoaded, "rows_rejected": c.RowsRejected,
		"balanced": c.Balanced, "sum_positive": c.SumPositive, "sum_negative": c.SumNegative, "net": c.Net,
	}
	if len(c.Currencies) > 0 {
		r.run.Results["completeness"].(map[string]any)["currencies"] = c.Currencies
	}
	text := fmt.Sprintf("%d input file(s): %s rows read = %s loaded + %s rejected", c.Files, numfmt.Int(c.RowsRead), numfmt.Int(c.RowsLoaded), numfmt.Int(c.RowsRejected))
	if c.RowsRead > 0 {
		text += fmt.Sprintf(" (%.2f%% rejected)", 100*float64(c.RowsRejected)/float64(c.RowsRead))
	}
	if !c.Balanced {
		text += "; WARNING: a file does not balance, see the inputs table"
	}
	text += currencyFinding(c, byFile)
	r.finding("completeness", "inputs", "%s.", text)
	if err := r.journalChecks(ctx); err != nil {
		return fmt.Errorf("journal checks: %w", err)
	}
	if err := r.reconciliation(ctx); err != nil {
		return fmt.Errorf("reconciliation: %w", err)
	}
	return nil
}

func segmentText(seg map[string]*string) string {
	if len(seg) == 0 {
		return "all"
	}
	keys := make([]string, 0, len(seg))
	for k := range seg {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	parts := make([]string, len(keys))
	for i, k := range keys {
		v := "(blank)"
		if seg[k] != nil {
			v = *seg[k]
		}
		parts[i] = k + "=" + v
	}
	return strings.Join(parts, ", ")
}

func segmentArgs(seg map[string]*string) []string {
	keys := make([]string, 0, len(seg))
	for k := range seg {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	var out []string
	for _, k := range keys {
		v := ""
		if seg[k] != nil {
			v = *seg[k]
		}
		out = append(out, k+"="+v)
	}
	return out
}

func (r *runner) limitsStep(ctx context.Context) error {
	rep, err := limits.Run(ctx, r.ws, *r.pl.Limits)
	if err != nil {
		return err
	}
	r.limits = rep
	t := &tabular.Table{Columns: []string{"rank", "segment", "limit", "width", "band_from", "band_to", "below", "above",
		"expected_ratio", "observed_ratio", "expected_below", "excess", "z", "p", "p_adjusted", "flagged", "status", "range"}}
	for _, row := range rep.Rows {
		t.Add(int64(row.Rank), segmentText(row.Segment), r.amountDec(row.Limit), row.Width, r.amountDec(row.From), r.amountDec(row.To),
			row.Below, row.Above, row.ExpectedRatio, row.ObservedRatio, row.ExpectedBelow, row.Excess, row.Z, row.P, row.PAdjusted,
			row.Flagged, row.Status, row.Range)
	}
	r.add(output.FromTabular(t, "limits", "Limit clustering: amounts just below each limit against just above", "limits",
		map[string]output.Kind{"rank": output.Count, "width": output.Proportion, "below": output.Count, "above": output.Count,
			"expected_ratio": output.Number, "observed_ratio": output.Number, "expected_below": output.Number, "excess": output.Number,
			"z": output.Number, "p": output.Proportion, "p_adjusted": output.Proportion, "flagged": output.Bool}))
	rep.Rows = append([]limits.Row(nil), rep.Rows...)
	for i := range rep.Rows {
		rep.Rows[i].Drill = ""
	}
	r.run.Results["limits"] = rep
	if rep.Flagged == 0 {
		r.finding("limits", "limits", "Limit clustering: none of the %s (segment, limit) pairs tested shows a surplus just below the limit (width %.0f%%, %s limits).",
			numfmt.Int(int64(rep.Tested)), rep.Width*100, rep.LimitSource)
		return nil
	}
	var top []string
	for _, row := range rep.Rows {
		if row.Flagged && len(top) < 3 {
			top = append(top, fmt.Sprintf("limit %s in %s: %s just below against %s just above",
				numfmt.Money(r.amountDec(row.Limit).Text), segmentText(row.Segment), numfmt.Int(row.Below), numfmt.Int(row.Above)))
		}
	}
	r.finding("limits", "limits", "Limit clustering: %s of %s (segment, limit) pairs flagged (expected ratio below/above %s at width %.0f%%); strongest: %s.",
		numfmt.Int(int64(rep.Flagged)), numfmt.Int(int64(rep.Tested)), numfmt.Stat(rep.ExpectedRatio), rep.Width*100, strings.Join(top, "; "))
	return nil
}

func (r *runner) rangesStep(ctx context.Context) error {
	rep, err := ranges.Run(ctx, r.ws, *r.pl.Ranges)
	if err != nil {
		return err
	}
	r.ranges = rep
	t := &tabular.Table{Columns: []string{"from", "to", "count", "expected", "ratio", "z", "p", "p_adjusted", "flagged", "scored", "note", "range"}}
	for _, b := range rep.Bands {
		t.Add(r.amountDec(b.From), r.amountDec(b.To), b.Count, b.Expected, b.Ratio, b.Z, b.P, b.PAdjusted, b.Flagged, b.Scored, b.Note, b.Range)
	}
	kinds := map[string]output.Kind{"from": output.Money, "to": output.Money, "count": output.Count, "expected": output.Number, "ratio": output.Number,
		"z": output.Number, "p": output.Proportion, "p_adjusted": output.Proportion, "flagged": output.Bool, "scored": output.Bool, "note": output.Text}
	r.add(output.FromTabular(t, "ranges", fmt.Sprintf("Amount ranges (%s bands): counts against a smooth expectation from neighbouring bands", rep.BandScale), "ranges", kinds))
	st := &tabular.Table{Columns: []string{"rank", "from", "to", "bands", "count", "expected", "excess", "range"}}
	for i, s := range rep.Stretches {
		st.Add(int64(i+1), r.amountDec(s.From), r.amountDec(s.To), int64(s.Bands), s.Count, s.Expected, s.Excess, s.Range)
	}
	r.add(output.FromTabular(st, "ranges_inflated", "Inflated ranges: adjacent flagged bands joined, largest excess first", "ranges",
		map[string]output.Kind{"rank": output.Count, "from": output.Money, "to": output.Money, "bands": output.Count, "count": output.Count, "expected": output.Number, "excess": output.Number}))
	cp := *rep
	cp.Bands = append([]ranges.Row(nil), rep.Bands...)
	for i := range cp.Bands {
		cp.Bands[i].Drill = ""
	}
	cp.Stretches = append([]ranges.Stretch(nil), rep.Stretches...)
	for i := range cp.Stretches {
		cp.Stretches[i].Drill = ""
	}
	if rep.Segments != nil {
		cp.Segments = r.rangeSegments(rep.Segments)
	}
	r.run.Results["ranges"] = &cp
	if len(rep.Stretches) == 0 {
		r.finding("ranges", "ranges", "Amount ranges: no band of the %s scored stands out from its neighbours.", numfmt.Int(int64(rep.Scored)))
	} else {
		s := rep.Stretches[0]
		r.finding("ranges", "ranges_inflated", "Amount ranges: %s of %s bands flagged in %d inflated range(s); largest excess %s to %s: %s amounts against %s expected.",
			numfmt.Int(int64(rep.Flagged)), numfmt.Int(int64(rep.Scored)), len(rep.Stretches), numfmt.Money(r.amountDec(s.From).Text), numfmt.Money(r.amountDec(s.To).Text),
			numfmt.Int(s.Count), numfmt.Int(int64(math.Round(s.Expected))))
	}
	if st := rep.Segments; st != nil {
		by := strings.Join(st.By, " + ")
		if st.Flagged == 0 {
			r.finding("ranges", "ranges_segments", "Amount ranges by %s: no band stands out in any of the %s segments scored (Holm over all %s scored (segment, band) pairs).",
				by, numfmt.Int(int64(st.Scored)), numfmt.Int(int64(st.Pairs)))
			return nil
		}
		var top []string
		for _, sr := range st.Rows {
			if sr.Flagged == 0 || len(top) == 3 {
				break
			}
			s := sr.Stretches[0]
			top = append(top, fmt.Sprintf("%s %s to %s: %s amounts against %s expected", segmentText(sr.Segment),
				numfmt.Money(r.amountDec(s.From).Text), numfmt.Money(r.amountDec(s.To).Text), numfmt.Int(s.Count), numfmt.Int(int64(math.Round(s.Expected)))))
		}
		r.finding("ranges", "ranges_segments_inflated", "Amount ranges by %s: %s of %s scored (segment, band) pairs flagged (Holm over the pairs) in %s segment(s); largest: %s.",
			by, numfmt.Int(int64(st.Flagged)), numfmt.Int(int64(st.Pairs)), numfmt.Int(int64(st.FlaggedSegments)), strings.Join(top, "; "))
	}
	return nil
}

// rangeSegments writes the tables of a range table run per segment (the
// ranking, and the inflated ranges of each flagged segment) and returns
// the segments for results.json, drill commands left out as for the
// whole table.
func (r *runner) rangeSegments(st *ranges.SegmentTable) *ranges.SegmentTable {
	t := &tabular.Table{Columns: []string{"rank", "segment", "tested", "scored", "flagged", "strongest_from", "strongest_to",
		"strongest_count", "strongest_expected", "strongest_z", "strongest_p_adjusted", "strongest_range"}}
	inf := &tabular.Table{Columns: []string{"segment_rank", "segment", "from", "to", "bands", "count", "expected", "excess", "range"}}
	for _, sr := range st.Rows {
		row := []any{int64(sr.Rank), segmentText(sr.Segment), sr.Counts.Tested, int64(sr.Scored), int64(sr.Flagged)}
		if b := sr.Strongest; b != nil {
			row = append(row, r.amountDec(b.From), r.amountDec(b.To), b.Count, b.Expected, b.Z, b.PAdjusted, b.Range)
		} else {
			row = append(row, nil, nil, nil, nil, nil, nil, nil)
		}
		t.Add(row...)
		for _, s := range sr.Stretches {
			inf.Add(int64(sr.Rank), segmentText(sr.Segment), r.amountDec(s.From), r.amountDec(s.To), int64(s.Bands), s.Count, s.Expected, s.Excess, s.Range)
		}
	}
	r.add(output.FromTabular(t, "ranges_segments", fmt.Sprintf("Amount ranges by %s: segments scored on the same bands, ranked by their strongest band (Holm over all scored (segment, band) pairs)", strings.Join(st.By, " + ")), "ranges",
		map[string]output.Kind{"rank": output.Count, "tested": output.Count, "scored": output.Count, "flagged": output.Count, "strongest_from": output.Money, "strongest_to": output.Money,
			"strongest_count": output.Count, "strongest_expected": output.Number, "strongest_z": output.Number, "strongest_p_adjusted": output.Proportion}))
	r.add(output.FromTabular(inf, "ranges_segments_inflated", "Inflated ranges per segment: adjacent flagged bands joined, segments in rank order, largest excess first", "ranges",
		map[string]output.Kind{"segment_rank": output.Count, "from": output.Money, "to": output.Money, "bands": output.Count, "count": output.Count, "expected": output.Number, "excess": output.Number}))
	cp := *st
	cp.Rows = append([]ranges.SegmentRow(nil), st.Rows...)
	for i := range cp.Rows {
		sr := &cp.Rows[i]
		sr.Bands = append([]ranges.Row(nil), sr.Bands...)
		for j := range sr.Bands {
			sr.Bands[j].Drill = ""
		}
		sr.Stretches = append([]ranges.Stretch(nil), sr.Stretches...)
		for j := range sr.Stretches {
			sr.Stretches[j].Drill = ""
		}
		if sr.Strongest != nil {
			b := *sr.Strongest
			b.Drill = ""
			sr.Strongest = &b
		}
	}
	return &cp
}

// groupColumns is the order of a duplicate group's fields in its table.
var groupColumns = []string{"id", "amount", "counterparty", "doc_id", "posted", "first_posted", "last_posted", "records", "documents",
	"amounts", "counterparties", "min_amount", "max_amount", "largest", "second", "rsf", "excess", "total"}

var moneyFields = map[string]bool{"amount": true, "min_amount": true, "max_amount": true, "largest": true, "second": true, "excess": true, "total": true}

func (r *runner) duplicatesStep(ctx context.Context) error {
	res, err := duplicates.Run(ctx, r.ws, *r.pl.Duplicates)
	if err != nil {
		return err
	}
	if err := duplicates.Save(ctx, r.ws, res); err != nil {
		return err
	}
	r.stepRuns["duplicates"] = res.RunID
	r.duplicates = res
	sum := &tabular.Table{Columns: []string{"test", "title", "status", "reason", "groups_total", "records_total", "ranking"}}
	for _, tr := range res.Tests {
		sum.Add(tr.Test, tr.Title, tr.Status, tr.Reason, tr.GroupsTotal, tr.RecordsTotal, tr.Ranking)
	}
	r.add(output.FromTabular(sum, "duplicates", "Duplicate tests: groups found per test", "duplicates",
		map[string]output.Kind{"groups_total": output.Count, "records_total": output.Count, "reason": output.Text}))
	var parts []string
	for _, tr := range res.Tests {
		if tr.Status != "ok" {
			continue
		}
		// Columns: the fields any group of this test fills.
		present := map[string]bool{}
		recs := make([]map[string]any, len(tr.Groups))
		for i, g := range tr.Groups {
			g.Ref = ""
			b, _ := json.Marshal(g)
			d := json.NewDecoder(strings.NewReader(string(b)))
			d.UseNumber()
			d.Decode(&recs[i])
			for k := range recs[i] {
				present[k] = true
			}
		}
		var cols []string
		for _, c := range groupColumns {
			if present[c] {
				cols = append(cols, c)
			}
		}
		if len(cols) == 0 {
			cols = []string{"id", "records", "total"}
		}
		t := &tabular.Table{Columns: cols}
		kinds := map[string]output.Kind{}
		for _, c := range cols {
			switch {
			case moneyFields[c]:
				kinds[c] = output.Money
			case c == "rsf":
				kinds[c] = output.Number
			case c == "posted" || c == "first_posted" || c == "last_posted" || c == "counterparty" || c == "doc_id":
				kinds[c] = output.Text
			default:
				kinds[c] = output.Count
			}
		}
		for _, rec := range recs {
			row := make([]any, len(cols))
			for i, c := range cols {
				switch v := rec[c].(type) {
				case json.Number:
					if n, err := v.Int64(); err == nil {
						row[i] = n
					} else if f, err := v.Float64(); err == nil {
						row[i] = f
					}
				case string:
					if moneyFields[c] {
						row[i] = dec(v)
					} else {
						row[i] = v
					}
				case nil:
				default:
					row[i] = fmt.Sprint(v)
				}
			}
			t.Rows = append(t.Rows, row)
		}
		ot := output.FromTabular(t, "dups_"+tr.Test, tr.Title, "duplicates", kinds)
		ot.RowsTotal = tr.GroupsTotal
		ot.Truncated = tr.GroupsTotal > int64(len(tr.Groups))
		if ot.Truncated {
			ot.Note = fmt.Sprintf("the top %s of %s groups (duplicates.top)", numfmt.Int(int64(len(tr.Groups))), numfmt.Int(int64(tr.GroupsTotal)))
		}
		r.add(ot)
		if tr.GroupsTotal > 0 {
			parts = append(parts, fmt.Sprintf("%s %s", tr.Test, numfmt.Int(tr.GroupsTotal)))
		}
	}
	cp := *res
	cp.RunID = 0
	cp.StartedAt = time.Time{}
	cp.Seconds = 0
	cp.Tests = append([]duplicates.TestResult(nil), res.Tests...)
	for i := range cp.Tests {
		cp.Tests[i].Seconds = 0
		cp.Tests[i].Groups = append([]duplicates.Group(nil), res.Tests[i].Groups...)
		for j := range cp.Tests[i].Groups {
			cp.Tests[i].Groups[j].Ref = ""
		}
	}
	r.run.Results["duplicates"] = &cp
	if len(parts) == 0 {
		r.finding("duplicates", "duplicates", "Duplicates: no groups found by the tests run.")
	} else {
		r.finding("duplicates", "duplicates", "Duplicates: groups found per test: %s.", strings.Join(parts, ", "))
	}
	return nil
}

// checkStep runs one extra SQL check inside a transaction that is rolled
// back: the SQL was checked read-only, and the rollback makes sure.
func (r *runner) checkStep(ctx context.Context, c CheckPlan) error {
	tx, err := r.ws.Conn.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	rows, err := tx.QueryContext(ctx, c.SQL, c.Args()...)
	if err != nil {
		return err
	}
	tt, more, err := tabular.FromRows(rows, c.MaxRows)
	if err != nil {
		return err
	}
	t := output.FromTabular(tt, "check_"+c.Name, c.Title, "check", c.Kinds)
	if more {
		var n int64
		if err := tx.QueryRowContext(ctx, queries.Render("pack_check_count", map[string]string{"query": strings.TrimRight(strings.TrimSpace(c.SQL), ";")}), c.Args()...).Scan(&n); err == nil {
			t.RowsTotal = n
		}
		t.Truncated = true
		t.Note = fmt.Sprintf("the first %s of %s rows (max_rows)", numfmt.Int(int64(len(t.Rows))), numfmt.Int(int64(t.RowsTotal)))
	}
	r.add(t)
	res := map[string]any{"name": c.Name, "title": c.Title, "table": t.Name, "rows": t.RowsTotal, "truncated": t.Truncated}
	checks, _ := r.run.Results["checks"].([]map[string]any)
	r.run.Results["checks"] = append(checks, res)
	if c.Finding == "rows" && t.RowsTotal > 0 {
		r.finding("check", t.Name, "%s: %s row(s).", c.Title, numfmt.Int(t.RowsTotal))
	}
	return nil
}

// extractItem is one flagged result whose records an extract lists.
type extractItem struct {
	label string
	sel   drill.Selection
}

func (r *runner) extractStep(ctx context.Context, e ExtractPlan) error {
	var items []extractItem
	switch e.From {
	case "battery":
		var err error
		if items, err = r.batteryItems(e); err != nil {
			return err
		}
	case "limits":
		if r.limits == nil {
			return fmt.Errorf("the limits step did not complete")
		}
		for _, row := range r.limits.Rows {
			if len(items) >= e.Top || row.Rank == 0 || !row.Flagged {
				continue
			}
			items = append(items, extractItem{
				label: fmt.Sprintf("limit %s, %s, %s", r.amountDec(row.Limit).Text, segmentText(row.Segment), row.Range),
				sel:   drill.Selection{Spec: r.pl.Limits.Spec, Range: row.Range, Segments: segmentArgs(row.Segment)},
			})
		}
	case "ranges":
		if r.ranges == nil {
			return fmt.Errorf("the ranges step did not complete")
		}
		for i, s := range r.ranges.Stretches {
			if i >= e.Top {
				break
			}
			items = append(items, extractItem{label: fmt.Sprintf("inflated range %d, %s", i+1, s.Range),
				sel: drill.Selection{Spec: r.pl.Ranges.Spec, Range: s.Range}})
		}
		// Then the flagged segments' inflated ranges, in rank order.
		if st := r.ranges.Segments; st != nil {
			for _, sr := range st.Rows {
				for _, s := range sr.Stretches {
					if len(items) >= e.Top {
						break
					}
					items = append(items, extractItem{label: fmt.Sprintf("inflated range in %s, %s", segmentText(sr.Segment), s.Range),
						sel: drill.Selection{Spec: r.pl.Ranges.Spec, Range: s.Range, Segments: segmentArgs(sr.Segment)}})
				}
			}
		}
	case "duplicates":
		if r.duplicates == nil {
			return fmt.Errorf("the duplicates step did not complete")
		}
		for _, tr := range r.duplicates.Tests {
			if e.Test != "" && tr.Test != e.Test || tr.Status != "ok" {
				continue
			}
			for i := range tr.Groups {
				if i >= e.Top {
					break
				}
				sel, g, err := drill.DuplicateGroup(ctx, r.ws, duplicates.Ref{Run: r.duplicates.RunID, Test: tr.Test, Group: i + 1})
				if err != nil {
					return err
				}
				items = append(items, extractItem{label: fmt.Sprintf("%s group %d", tr.Test, g.ID), sel: sel})
			}
		}
	default:
		return fmt.Errorf("extracts from %s are not wired yet", e.From)
	}
	recCols := []string{}
	var recRows [][]any
	var grpCols []string
	var grpRows [][]any
	var total int64
	var parts []string // one query per item, for the source of every record
	var args []any
	for n, it := range items {
		b, err := drill.Build(ctx, r.ws, it.sel)
		if err != nil {
			return fmt.Errorf("%s: %w", it.label, err)
		}
		sum, err := drill.Summarize(ctx, r.ws, b)
		if err != nil {
			return err
		}
		total += sum.Records
		q, a, err := drill.RecordsQuery(ctx, r.ws, b, drill.RecordOptions{})
		if err != nil {
			return err
		}
		parts = append(parts, queries.Render("extract_item", map[string]string{
			"n": strconv.Itoa(n + 1), "records": strings.TrimSuffix(strings.TrimSpace(q), ";")}))
		args = append(append(args, it.label), a...)
		limit := e.MaxRows - len(recRows)
		if limit > 0 {
			t, _, err := drill.Records(ctx, r.ws, b, drill.RecordOptions{Limit: limit})
			if err != nil {
				return err
			}
			if len(recCols) == 0 {
				recCols = append([]string{"item"}, t.Columns...)
			}
			for _, row := range t.Rows {
				recRows = append(recRows, append([]any{it.label}, row...))
			}
		}
		if e.GroupBy != "" {
			g, err := drill.Group(ctx, r.ws, b, drill.GroupOptions{Column: e.GroupBy, Limit: e.MaxRows})
			if err != nil {
				return err
			}
			if len(grpCols) == 0 {
				grpCols = append([]string{"item"}, g.Table.Columns...)
			}
			for _, row := range g.Table.Rows {
				grpRows = append(grpRows, append([]any{it.label}, row...))
			}
		}
	}
	if len(recCols) == 0 {
		recCols = []string{"item"}
	}
	kinds := map[string]output.Kind{"item": output.Text, "line": output.Count, "row_id": output.Count, "file_id": output.Count, "amount": output.Money}
	if len(recCols) > 1 {
		recCols, recRows = withFollowup(recCols, recRows, kinds)
	}
	rt := output.NewTable("extract_"+e.Name, fmt.Sprintf("Extract %s: records behind the top %d result(s) of %s", e.Name, e.Top, e.From), "extract", recCols, recRows, kinds)
	rt.RowsTotal = total
	rt.Truncated = total > int64(len(recRows))
	stage := queries.QuoteIdent("ll_extract_" + e.Name)
	if len(parts) > 0 && len(recCols) > 1 {
		// Every record goes to tables/ (and the workbook, up to its row
		// limit) straight from DuckDB, from a temporary table filled once;
		// Rows keeps the first max_rows for results.json and the report.
		q := queries.Render("extract_stage", map[string]string{"table": stage, "items": strings.Join(parts, "\nUNION ALL\n")})
		if _, err := r.ws.Conn.ExecContext(ctx, q, args...); err != nil {
			return err
		}
		rt.Source = &output.Source{DB: r.ws.Conn, SQL: followup.WithColumns(queries.Render("pack_extract_rows", map[string]string{"table": stage}))}
		rt.Complete = true
	}
	var drawn *SampleDrawn
	var sampleTable *output.Table
	if e.Sample != "" && rt.Source != nil && total > 0 {
		var err error
		if sampleTable, drawn, err = r.drawSample(ctx, e, stage, total, kinds); err != nil {
			return fmt.Errorf("sample: %w", err)
		}
		for i := range r.pl.Extracts {
			if r.pl.Extracts[i].Name == e.Name {
				r.pl.Extracts[i].Drawn = drawn
			}
		}
	}
	if rt.Truncated {
		rt.Note = fmt.Sprintf("results.json and the report list the first %s of %s records (max_rows)", numfmt.Int(int64(len(recRows))), numfmt.Int(total))
		if rt.Complete {
			rt.Note += fmt.Sprintf("; all %s are in %s/%s.csv and %s/%s.parquet", numfmt.Int(total), output.TablesDir, rt.Name, output.TablesDir, rt.Name)
		}
	}
	r.add(rt)
	if sampleTable != nil {
		r.add(sampleTable)
	}
	if e.GroupBy != "" {
		if len(grpCols) == 0 {
			grpCols = []string{"item", e.GroupBy, "records", "total", "distinct_amounts", "repeated_amounts"}
		}
		gk := map[string]output.Kind{"item": output.Text, "records": output.Count, "distinct_amounts": output.Count, "total": output.Money, "repeated_amounts": output.Text}
		for i := range grpRows {
			if s, ok := grpRows[i][3].(string); ok {
				grpRows[i][3] = dec(s)
			}
		}
		gt := output.NewTable("extract_"+e.Name+"_by_"+e.GroupBy, fmt.Sprintf("Extract %s grouped by %s", e.Name, e.GroupBy), "extract", grpCols, grpRows, gk)
		r.add(gt)
	}
	ex, _ := r.run.Results["extracts"].([]map[string]any)
	labels := make([]string, len(items))
	for i, it := range items {
		labels[i] = it.label
	}
	doc := map[string]any{"name": e.Name, "from": e.From, "test": e.Test, "items": labels, "records": total, "group_by": e.GroupBy}
	if drawn != nil {
		doc["sample"] = drawn
	}
	r.run.Results["extracts"] = append(ex, doc)
	if len(items) > 0 {
		r.finding("extract", rt.Name, "Extract %s: %s record(s) behind %d result(s) of %s.", e.Name, numfmt.Int(total), len(items), e.From)
	}
	return nil
}

// selectionForBin selects the records of one bin of a digit test within
// the battery's population.
func selectionForBin(o battery.Options, test string, bin int) drill.Selection {
	b := bin
	return drill.Selection{Spec: o.Spec, Test: test, Bin: &b}
}

// drawSample draws the extract's sample from the table stage, the
// extract's records with their position (ll_pos, from 0), and returns its table
// and what was drawn. Simple random: sample_size records with equal
// probability; monetary: by |amount| (see engine/sample).
func (r *runner) drawSample(ctx context.Context, e ExtractPlan, stage string, records int64, kinds map[string]output.Kind) (*output.Table, *SampleDrawn, error) {
	tt, d, err := drill.DrawSample(ctx, r.ws.Conn, stage, []string{"ll_item_no"}, e.Sample, e.SampleSize, e.Seed, r.scale,
		"the extract's records in its order: by item, then row_id (file order)")
	if err != nil {
		return nil, nil, err
	}
	if d.PopulationRecords != records {
		return nil, nil, fmt.Errorf("the extract holds %d records, the sample read %d", records, d.PopulationRecords)
	}
	cols, rows := withFollowup(tt.Columns, tt.Rows, kinds)
	t := output.NewTable("extract_"+e.Name+"_sample", fmt.Sprintf("Extract %s: sample of %d record(s) to vouch", e.Name, len(tt.Rows)), "extract", cols, rows, kinds)
	t.Note = d.Describe() + "; drawn again by the same pack on the same records"
	return t, d, nil
}

// withFollowup adds the empty follow-up columns (engine/followup) to an
// extract's records, so that the team can record what it found in the
// CSV, Parquet or workbook and return it (leadline followup).
func withFollowup(cols []string, rows [][]any, kinds map[string]output.Kind) ([]string, [][]any) {
	cols = append(append([]string(nil), cols...), followup.Columns...)
	for i := range rows {
		rows[i] = append(rows[i], make([]any, len(followup.Columns))...)
	}
	for _, c := range followup.Columns {
		kinds[c] = output.Text
	}
	return cols, rows
}
