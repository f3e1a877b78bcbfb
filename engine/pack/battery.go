package pack

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/tabular"
)

// batteryStep runs the digit battery: one run over the whole population
// (every test, number duplication), then one run per segmentation. Its tables: the tests' statistics, each test's
// bins, number duplication, and the segment rankings per segmentation.
// Timings are left out of results.json so that it is the same on every
// run.
func (r *runner) batteryStep(ctx context.Context) error {
	bp := r.pl.Battery
	// The whole population on its own, without segments: with segments,
	// engine/battery adds the segments' summation sums (floats in currency
	// units) in the order the scan returns them, which varies from run to
	// run in the last bits; without segments each bin's sum comes from one
	// exact aggregate.
	o := bp.Options
	o.By = nil
	rep, err := battery.Run(ctx, r.ws, o)
	if err != nil {
		return err
	}
	rep.Seconds = battery.Timing{}
	rep.Params.By = bp.Options.By
	r.battery = rep
	segs := map[string]*battery.Segments{}
	var order []string
	for _, cols := range bp.Segmentations {
		o := bp.Options
		o.By = cols
		o.Duplication = false
		sr, err := battery.Run(ctx, r.ws, o)
		if err != nil {
			return fmt.Errorf("segments by %s: %w", strings.Join(cols, "+"), err)
		}
		name := strings.Join(cols, "+")
		segs[name] = sr.Segments
		order = append(order, name)
		if rep.Segments == nil {
			rep.Segments = sr.Segments // the first segmentation, as a scan with --by would give it
		}
	}

	// The tests' statistics over the whole population.
	st := &tabular.Table{Columns: []string{"test", "name", "n", "mad", "conformity", "expected_mad", "excess_mad", "chi2", "df", "p_value",
		"ks_d", "ks_critical", "cvm_u2", "cvm_u2_p", "cvm_w2", "cvm_w2_p", "flagged", "outside_goodman", "top_flagged", "runs", "runs_expected", "runs_p", "notes"}}
	for _, t := range rep.Tests {
		var runs, runsExp, runsP any
		if t.Runs != nil {
			runs, runsExp, runsP = int64(t.Runs.Runs), t.Runs.Expected, t.Runs.P
		}
		st.Add(string(t.Test), t.Test.Name(), t.N, t.MAD, t.Conformity, t.ExpectedMAD, t.ExcessMAD, t.Chi2, int64(t.DF), t.PValue,
			t.KSD, t.KSCritical, t.CvMU2, t.CvMU2P, t.CvMW2, t.CvMW2P, int64(t.Flagged), int64(t.OutsideGoodman), binsText(t.Test, t.TopFlagged), runs, runsExp, runsP, strings.Join(t.Notes, " "))
	}
	r.add(output.FromTabular(st, "digit_tests", "Digit tests on the whole population: MAD, conformity, chi-square, Kolmogorov-Smirnov, Cramér-von Mises, runs", "battery",
		map[string]output.Kind{"n": output.Count, "mad": output.Number, "expected_mad": output.Number, "excess_mad": output.Number, "chi2": output.Number,
			"df": output.Count, "p_value": output.Proportion, "ks_d": output.Number, "ks_critical": output.Number, "cvm_u2": output.Number, "cvm_u2_p": output.Proportion,
			"cvm_w2": output.Number, "cvm_w2_p": output.Proportion, "flagged": output.Count, "outside_goodman": output.Count, "top_flagged": output.Text, "runs": output.Count, "runs_expected": output.Number, "runs_p": output.Proportion, "notes": output.Text}))
	for _, t := range rep.Tests {
		bt := &tabular.Table{Columns: []string{"bin", "count", "amount", "actual", "expected", "diff", "z", "lower", "upper", "flagged",
			"goodman_lower", "goodman_upper", "outside_goodman"}}
		if t.Test != benford.Summation {
			bt.Columns = append(bt.Columns[:2], bt.Columns[3:]...)
		}
		for _, b := range t.Bins {
			row := []any{b.Label, b.Count}
			if t.Test == benford.Summation {
				row = append(row, b.Amount)
			}
			row = append(row, b.Actual, b.Expected, b.Diff, b.Z, b.Lower, b.Upper, b.Flagged, b.GoodmanLower, b.GoodmanUpper, b.OutsideGoodman)
			bt.Rows = append(bt.Rows, row)
		}
		r.add(output.FromTabular(bt, "digits_"+string(t.Test), fmt.Sprintf("%s: actual against expected proportion per bin", capital(t.Test.Name())), "battery",
			map[string]output.Kind{"bin": output.Text, "count": output.Count, "amount": output.Number, "actual": output.Proportion, "expected": output.Proportion,
				"diff": output.Proportion, "z": output.Number, "lower": output.Proportion, "upper": output.Proportion, "flagged": output.Bool,
				"goodman_lower": output.Proportion, "goodman_upper": output.Proportion, "outside_goodman": output.Bool}))
	}
	if d := rep.Duplication; d != nil {
		dt := &tabular.Table{Columns: []string{"rank", "amount", "count", "share"}}
		for _, x := range d.Top {
			dt.Add(int64(x.Rank), dec(x.Amount), x.Count, x.Share)
		}
		t := output.FromTabular(dt, "number_duplication", "Number duplication: the most frequent exact amounts", "battery",
			map[string]output.Kind{"rank": output.Count, "amount": output.Money, "count": output.Count, "share": output.Percent})
		t.Note = fmt.Sprintf("%s amounts tested, %s distinct", numfmt.Int(d.N), numfmt.Int(d.Distinct))
		r.add(t)
	}
	for _, name := range order {
		sg := segs[name]
		if sg == nil {
			continue
		}
		t := &tabular.Table{Columns: []string{"test", "rank", "segment", "n", "mad", "conformity", "expected_mad", "excess_mad", "chi2", "df", "p_value",
			"cvm_u2", "cvm_u2_p", "flagged", "p_segments", "local_flagged", "local_p_segments", "outside_goodman", "top_flagged", "runs", "runs_p"}}
		for _, rk := range sg.Rankings {
			for _, row := range rk.Rows {
				var runs, runsP any
				if row.Runs != nil {
					runs = int64(*row.Runs)
				}
				if row.RunsP != nil {
					runsP = *row.RunsP
				}
				var local, localP any
				if row.LocalFlagged != nil {
					local = int64(*row.LocalFlagged)
				}
				if row.LocalPSegments != nil {
					localP = *row.LocalPSegments
				}
				t.Add(string(rk.Test), int64(row.Rank), row.Segment, row.N, row.MAD, row.Conformity, row.ExpectedMAD, row.ExcessMAD, row.Chi2, int64(row.DF),
					row.PValue, row.CvMU2, row.CvMU2P, int64(row.Flagged), row.PSegments, local, localP, int64(row.OutsideGoodman), binsText(rk.Test, row.TopFlagged), runs, runsP)
			}
		}
		ot := output.FromTabular(t, "segments_"+output.SafeName(strings.ReplaceAll(name, "+", "_")),
			fmt.Sprintf("Segments by %s ranked per test, most distorted first (excess MAD)", strings.ReplaceAll(name, "+", " and ")), "battery",
			map[string]output.Kind{"rank": output.Count, "n": output.Count, "mad": output.Number, "expected_mad": output.Number, "excess_mad": output.Number,
				"chi2": output.Number, "df": output.Count, "p_value": output.Proportion, "cvm_u2": output.Number, "cvm_u2_p": output.Proportion,
				"flagged": output.Count, "p_segments": output.Proportion, "local_flagged": output.Count, "local_p_segments": output.Proportion, "outside_goodman": output.Count,
				"top_flagged": output.Text, "runs": output.Count, "runs_p": output.Proportion, "segment": output.Text, "conformity": output.Text})
		ot.Note = fmt.Sprintf("%s segments, %s with at least %s amounts ranked; flags adjusted over the ranked segments (Holm: p_segments)", numfmt.Int(int64(sg.Count)), numfmt.Int(int64(sg.Ranked)), numfmt.Int(int64(sg.MinRows)))
		r.add(ot)
	}
	r.run.Results["battery"] = rep
	if len(order) > 0 {
		doc := map[string]*battery.Segments{}
		for _, n := range order {
			doc[n] = segs[n]
		}
		r.run.Results["battery_segments"] = doc
	}

	// Findings.
	var parts []string
	for _, t := range rep.Tests {
		if t.Test == benford.Summation {
			parts = append(parts, fmt.Sprintf("summation %s bin(s) flagged", numfmt.Int(int64(t.Flagged))))
			continue
		}
		parts = append(parts, fmt.Sprintf("%s MAD %s (%s)", t.Test, numfmt.Stat(t.MAD), t.Conformity))
	}
	r.finding("battery", "digit_tests", "Digit tests on %s amounts: %s.", numfmt.Int(rep.Tested), strings.Join(parts, "; "))
	for _, t := range rep.Tests {
		if t.Test == benford.FirstTwo && len(t.TopFlagged) > 0 {
			r.finding("battery", "digits_first_two", "First-two digits test: %d bin(s) flagged; follow up first: %s.", t.Flagged, binsText(t.Test, t.TopFlagged))
		}
		for _, n := range t.Notes {
			if strings.HasPrefix(strings.ToLower(n), strings.ToLower(t.Test.Name())) {
				r.note("%s", capital(n))
			} else {
				r.note("%s: %s", capital(t.Test.Name()), n)
			}
		}
	}
	if d := rep.Duplication; d != nil && len(d.Top) > 0 {
		var top []string
		for _, x := range d.Top[:min(3, len(d.Top))] {
			top = append(top, fmt.Sprintf("%s × %s", numfmt.Money(x.Amount), numfmt.Int(x.Count)))
		}
		r.finding("battery", "number_duplication", "Number duplication: most frequent amounts %s.", strings.Join(top, ", "))
	}
	for _, name := range order {
		sg := segs[name]
		if sg == nil {
			continue
		}
		for _, rk := range sg.Rankings {
			if rk.Test != benford.FirstTwo || len(rk.Rows) == 0 {
				continue
			}
			var top []string
			for _, row := range rk.Rows[:min(3, len(rk.Rows))] {
				top = append(top, fmt.Sprintf("%s (excess MAD %s, %s)", row.Segment, numfmt.Stat(row.ExcessMAD), row.Conformity))
			}
			r.finding("battery", "segments_"+output.SafeName(strings.ReplaceAll(name, "+", "_")),
				"Segments by %s, first-two digits test, most distorted: %s.", strings.ReplaceAll(name, "+", " and "), strings.Join(top, "; "))
		}
	}
	return nil
}

func binsText(t benford.Test, bins []int) string {
	parts := make([]string, len(bins))
	for i, b := range bins {
		parts[i] = t.Label(b)
	}
	return strings.Join(parts, ", ")
}

func capital(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// batteryItems are the extract items of a battery extract: the top flagged
// bins of the test (benford's TopFlagged: surplus first, by Z).
func (r *runner) batteryItems(e ExtractPlan) ([]extractItem, error) {
	if r.battery == nil {
		return nil, fmt.Errorf("the battery step did not complete")
	}
	test := benford.Test(e.Test)
	var res *benford.Result
	for i := range r.battery.Tests {
		if r.battery.Tests[i].Test == test {
			res = &r.battery.Tests[i]
		}
	}
	if res == nil {
		return nil, fmt.Errorf("the battery did not run the %s", test.Name())
	}
	drillTest := test
	if test == benford.Summation {
		drillTest = benford.FirstTwo
	}
	var items []extractItem
	for _, b := range res.TopFlagged {
		if len(items) >= e.Top {
			break
		}
		bin := b
		items = append(items, extractItem{
			label: fmt.Sprintf("%s bin %s", test, test.Label(b)),
			sel:   selectionForBin(r.pl.Battery.Options, string(drillTest), bin),
		})
	}
	return items, nil
}
