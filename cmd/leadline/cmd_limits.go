package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "limits",
		summary: "look for amounts piled up just below approval or testing limits",
		usage: `Usage: leadline limits [options]

For each limit T, compares the count of amounts just below it, in
[T(1 - w), T), with the count just above it, in [T, T(1 + w)), w a
fraction (--width, 10% by default: 4,500 to 5,000 against 5,000 to 5,500). Where amounts spread smoothly over several
orders of magnitude (a density falling like 1/amount, as with Benford's
law) the two counts stand in a fixed ratio, 1.105 for a width of 10%; a
split tilted towards the amounts below the limit is tested with an exact
binomial test, and the excess below is reported. A pile-up just below a
limit is the classic trace of entries kept away from a reviewer.

Limits are the client's (--limits 1000,5000,10000) or, by default, the
round values 1, 2, 2.5 and 5 x 10^k whose band lies within the amounts.
With --by, every limit is also probed in every segment (entity, account,
counterparty, user_id, source, year, quarter, month of the posted date,
or any original column; several --by columns make segments of their
combinations, as a pack's limits.by does), all from one scan. A
limit is tested in a segment when its band lies within that segment's
amounts and holds at least --min-count of them; all tests of the run are
adjusted together (Holm, 5% family-wise), then ranked.

The amounts tested are those of the digit battery and the drill-down:
positive amounts of at least 10 by default (--signs, --min), narrowed by
--where. Limits apply to absolute amounts: with --signs negative the band
below 5,000 holds the amounts from -4,999.99 to -4,500.00.

A flag is a signal for follow-up, never proof of fraud. Each row carries
the band below its limit and the drill command that lists its records.

With --counts FILE... --count-query QUERY the probe runs on band counts
made by another engine (leadline count-sql --test limits): the files are
added up exactly, the limits, width and population are the query's, and
each row's drill is that engine's query listing the records.

Examples:
  leadline limits                                   # round limits, whole ledger
  leadline limits --limits 1000,5000,10000 --by user_id
  leadline limits --by entity --by month --top 30
  leadline limits --limits 2500 --width 0.05 --where "source = 'AP'" --format json`,
		flags: thin(limitsFlags, runLimits),
	})
}

// limitsOptions are what limits' flags ask for.
type limitsOptions struct {
	db     dbFlags
	format string
	limits limits.Options
	top    int
	counts countsFlags // --counts, --count-query: the probe on counts made elsewhere
}

// limitsFlags registers limits' flags; the function it returns checks them.
func limitsFlags(fs *pflag.FlagSet) func(args []string) (limitsOptions, error) {
	var o limitsOptions
	var f formatFlag
	var pop bandPopulation
	var texts []string
	o.db.add(fs)
	fs.StringSliceVar(&texts, "limits", nil, "limits to probe, e.g. 1000,5000,10000 (default: round values within the amounts)")
	fs.Float64Var(&o.limits.Width, "width", limits.DefaultWidth, "band width on each side, as a fraction of the limit (0 < width < 1)")
	fs.StringSliceVar(&o.limits.By, "by", nil, "segment column(s): entity, account, counterparty, user_id, source, year, quarter, month or an original column (repeatable; several make one segmentation of their combinations)")
	fs.Int64Var(&o.limits.MinCount, "min-count", limits.DefaultMinCount, "fewest amounts in a band (below + above) for its limit to be tested")
	fs.IntVar(&o.top, "top", 20, "rows to print in text format (0 = all tested)")
	pop.add(fs)
	pop.addCurrency(fs)
	f.add(fs)
	o.counts.add(fs)
	return func(args []string) (limitsOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) > 0 {
			return o, fmt.Errorf("unexpected argument %q (see --help)", args[0])
		}
		if o.counts.given() {
			if err := o.counts.check(fs, "limits", "width"); err != nil {
				return o, err
			}
		}
		if fs.Changed("limits") {
			l, err := limits.ParseLimits(texts)
			if err != nil {
				return o, err
			}
			if len(l) == 0 {
				return o, fmt.Errorf("--limits: give at least one limit, e.g. --limits 5000")
			}
			o.limits.Limits = l
		}
		if err := limits.CheckWidth(o.limits.Width); err != nil {
			return o, err
		}
		o.limits.Spec = pop.base()
		o.format = f.value
		return o, nil
	}
}

// runLimits runs the probe, stores the run and prints it.
func runLimits(ctx context.Context, e *env, o limitsOptions) error {
	if o.counts.given() {
		return limitsCounts(ctx, e, o)
	}
	started := time.Now()
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	rep, err := limits.Run(ctx, ws, o.limits)
	if err != nil {
		return err
	}
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: "limits", Started: started, Params: o.limits, Result: rep, SetID: func(id int64) { rep.RunID = id }}); err != nil {
		return err
	}
	return printLimits(e.stdout, o.format, rep, o.top)
}

func printLimits(w io.Writer, format string, rep *limits.Report, top int) error {
	if format == "json" {
		return writeJSON(w, rep)
	}
	t := &tabular.Table{Name: "limits"}
	t.Columns = append(t.Columns, "rank")
	t.Columns = append(t.Columns, rep.By...)
	segCell := func(r limits.Row) []any { return segmentCells(rep.By, r.Segment) }
	if format == "csv" {
		t.Columns = append(t.Columns, "limit", "width", "from", "to", "below", "above", "expected_ratio", "observed_ratio",
			"expected_below", "excess", "excess_vs_above", "z", "p", "p_adjusted", "flagged", "status", "range", "drill")
		for _, r := range rep.Rows {
			row := append([]any{r.Rank}, segCell(r)...)
			row = append(row, r.Limit, r.Width, r.From, r.To, r.Below, r.Above, r.ExpectedRatio, r.ObservedRatio,
				r.ExpectedBelow, r.Excess, r.ExcessVsAbove, r.Z, r.P, r.PAdjusted, r.Flagged, r.Status, r.Range, r.Drill)
			t.Add(row...)
		}
		return t.WriteCSV(w)
	}

	fmt.Fprintf(w, "Limit clustering probe (run %d): %s\n", rep.RunID, bandPopulationLine(rep.Population, rep.Counts))
	src := "given"
	if rep.LimitSource != "given" {
		src = "round values within the amounts"
	}
	fmt.Fprintf(w, "Limits: %d (%s) from %s to %s; band [T - %s%%, T) against [T, T + %s%%)",
		len(rep.Limits), src, numfmt.MoneyFloat(rep.Limits[0]), numfmt.MoneyFloat(rep.Limits[len(rep.Limits)-1]), bf.num(100*rep.Width), bf.num(100*rep.Width))
	if len(rep.By) > 0 {
		fmt.Fprintf(w, "; by %s: %d segments", strings.Join(rep.By, ", "), rep.Segments)
	}
	fmt.Fprintf(w, "\nExpected below/above ratio under a 1/amount density: %s. %s tests, Holm-adjusted at 5%%: %s flagged.\n\n",
		numfmt.Stat(rep.ExpectedRatio), numfmt.Int(int64(rep.Tested)), numfmt.Int(int64(rep.Flagged)))

	t.Columns = append(t.Columns, "limit", "below_band", "below", "above", "ratio", "excess", "excess_vs_above", "z", "p_adjusted", "flag")
	shown := 0
	for _, r := range rep.Rows {
		if r.Status != limits.StatusTested || (top > 0 && shown == top) {
			break
		}
		row := append([]any{r.Rank}, segCell(r)...)
		row = append(row, numfmt.MoneyFloat(r.Limit), r.Range, numfmt.Int(r.Below), numfmt.Int(r.Above), numfmt.Stat(r.ObservedRatio),
			numfmt.Int(int64(math.Round(r.Excess))), numfmt.Int(int64(math.Round(r.ExcessVsAbove))), numfmt.Stat(r.Z), bf.p(r.PAdjusted), bf.flag(r.Flagged))
		t.Add(row...)
		shown++
	}
	if shown > 0 {
		if err := t.WriteText(w, 0); err != nil {
			return err
		}
	}
	if shown < rep.Tested {
		fmt.Fprintf(w, "(first %d of %d tests; --top 0 for all, or --format csv)\n", shown, rep.Tested)
	}
	if rep.TooFew+rep.OutsideRange > 0 {
		fmt.Fprintf(w, "\nNot tested: %d with fewer than %d amounts in the band, %d whose band is not within the amounts",
			rep.TooFew, rep.MinCount, rep.OutsideRange)
		var whole []string
		for _, r := range rep.Rows {
			if r.Status != limits.StatusTested && r.Segment == nil {
				whole = append(whole, fmt.Sprintf("%s (%s)", bf.num(r.Limit), r.Status))
			}
		}
		if len(whole) > 0 {
			fmt.Fprintf(w, "; whole selection: %s", strings.Join(whole, ", "))
		}
		fmt.Fprintln(w)
	}
	fmt.Fprintln(w)
	if rep.Flagged == 0 {
		fmt.Fprintln(w, "No limit stands out at the 5% family-wise level.")
		if rep.Tested > 0 {
			fmt.Fprintf(w, "The records below the strongest limit all the same:\n  %s\n", rep.Rows[0].Drill)
		}
		return nil
	}
	fmt.Fprintln(w, "Records below the flagged limits (strongest first):")
	printed := 0
	for _, r := range rep.Rows {
		if !r.Flagged {
			continue
		}
		if printed == 5 {
			fmt.Fprintf(w, "  ... %d flagged in all (--format json has every drill command)\n", rep.Flagged)
			break
		}
		fmt.Fprintf(w, "  %s\n", r.Drill)
		printed++
	}
	return nil
}
