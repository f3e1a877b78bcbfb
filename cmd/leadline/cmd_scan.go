package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "scan",
		summary: "run the digit battery (Benford's law) on the ledger, whole and per segment",
		usage: `Usage: leadline scan [options]

Runs the digit-frequency battery built on Benford's law on the workspace's
amounts: the first-digit, second-digit, first-two digits, first-three
digits, last-two digits and summation tests from ONE aggregate scan, the
second-order test (first two digits of the differences between sorted
amounts) and number duplication (the most frequent exact amounts) from a
query each. Digits come from the exact decimal amount, never from a float:
0.29 has first three digits 290, 10.00 has 100, 99.99 has 999. The last
two digits are the two rightmost digits of the amount as the ledger writes
it (1234.56 -> 56); --last-two units reads them from the whole-currency
part (1234.56 -> 34), as is often done for whole-number amounts. The
last-two test takes only amounts whose two digits read are the fourth
significant digit or later (at least 100.00 at scale 2, 10,000 for whole
numbers or --last-two units), where they are close to uniform; for 10.00
to 99.99 the cents are the third and fourth significant digits, which
Benford's law does not spread evenly. The output says how many amounts it
left out; --last-two-all tests them all. In the second-order test,
amounts held in whole units of the ledger's scale have discrete
differences (bins 10, 20, ..., 90 take every difference of 1 to 9 units),
so the expected shares are not Benford's own but those of amounts
following Benford's law over the population's range (from --min, over
the decades whose mean is its mean |amount|) held in whole units; the
note says how many bins Benford's own shares would have flagged.

Which amounts: positive amounts by default (--signs), because debits and
credits (invoices and credit notes, payments and refunds) are different
populations with different drivers, and the trade analyses them apart
(Nigrini 2012); run --signs negative for the other side, or both (absolute
values) when the sign carries no meaning. Amounts below --min (10 by
default, common practice: smaller amounts carry too few significant digits
of their own for the first-two digits test) are left out, and so is zero.
--where narrows the rows with a read-only predicate over the ledger's
columns. Every row left out is counted, by reason, so N is explained.

With --by, every test also runs per segment (entity, account,
counterparty, user_id, source, or any original column; year, quarter or
month of the posted date, labelled 2025, 2025-Q1, 2025-01, records
without a date in the blank segment), all from the same one scan, and a
ranking per test orders the segments by excess MAD (MAD less
the MAD expected from sampling alone at the segment's N), so that segments
of different sizes compare fairly. Segments with fewer than --min-segment
tested amounts (1,000 by default: below that the smallest first-two bins
expect fewer than about four amounts each) are listed as too small to
judge, not ranked. Several --by columns make segments of their
combinations: --by entity --by quarter (or --by entity,quarter) is one
ranking of entity-quarters, as a pack's segments = ["entity+quarter"];
a pack's segments = ["entity", "quarter"] is two rankings.

A bin is flagged when its count is beyond chance and material: its exact
binomial p-value, adjusted by Holm's step-down over the test's bins, is
below 5% (so a population that follows Benford's law has a flagged bin in
at most 5% of tests, at any N and in any segment), and it is off by at
least --min-excess (20%) of its expected share (for first digit 1, 6
percentage points: about where the published MAD classes turn from
acceptable to marginal). The per-bin
Z-statistic and its 1.96 bounds stay in the tables as the trade's
reference: they mark about 5% of the bins of any population by chance.
The first-two test also raises a local surplus flag: each stretch of up
to 6 adjacent first-two bins is compared with a smooth curve fitted
through the 6 bins on either side of it (on the log scale), so a population
whose digits drift smoothly away from Benford's law, as large real
populations do, raises none, while amounts pushed into a narrow range
(just under an approval limit, a price list) do. A stretch is flagged when
its surplus is beyond chance, calibrated by simulation so that a
population following Benford's law has a flagged stretch in at most 5% of
tests at any N, and at least 5% above the curve. Segment rankings show
the flagged stretches in the column local.
A flagged bin, test or segment is a signal for follow-up, never proof of
fraud. Drill into a bin with: leadline drill --test first_two --bin 47.

Every run is stored in the workspace (table runs, kind scan) with its
parameters and the JSON document --format json prints (docs/json.md).
--format csv prints the bins in long format: test, segment, bin, ...

Examples:
  leadline scan
  leadline scan --tests first,first_two,summation --signs negative
  leadline scan --by entity --by month
  leadline scan --where "source = 'AP'" --min 100 --format json > ap.json
  leadline scan --by user_id --format csv > bins.csv

With --counts FILE... --count-query QUERY, the battery runs on counts made
by another engine (see leadline count-sql): the files are added up exactly
and the results, rankings and notes are those of a local scan of the same
records; the population is the query's, and the run records the engine,
the query's SHA-256 and each file's.
  leadline scan --counts shard1.csv,shard2.csv --count-query gl.sql --by entity`,
		flags: thin(scanFlags, runScan),
	})
}

// scanOptions are what scan's flags ask for.
type scanOptions struct {
	db      dbFlags
	format  string
	battery battery.Options
	print   scanPrint
	counts  countsFlags // --counts, --count-query: the battery on counts made elsewhere
}

// scanFlags registers scan's flags; the function it returns checks them.
func scanFlags(fs *pflag.FlagSet) func(args []string) (scanOptions, error) {
	var o scanOptions
	var f formatFlag
	var pop bandPopulation
	var tests []string
	o.db.add(fs)
	fs.StringSliceVar(&tests, "tests", []string{"all"}, "tests: first, second, first_two, first_three, last_two, summation, second_order, duplication, or all")
	pop.add(fs)
	fs.StringSliceVar(&o.battery.By, "by", nil, "segment column(s): entity, account, counterparty, user_id, source, year, quarter, month or an original column (repeatable; several make one segmentation of their combinations)")
	fs.Int64Var(&o.battery.MinSegmentRows, "min-segment", battery.DefaultMinSegmentRows, "fewest tested amounts for a segment to be ranked")
	fs.StringVar(&o.battery.LastTwo, "last-two", battery.LastTwoScale, "last two digits of the amount as written at the ledger's scale (scale) or of its whole-currency part (units)")
	fs.IntVar(&o.battery.Top, "top", battery.DefaultTop, "exact amounts listed by number duplication")
	fs.BoolVar(&o.battery.LastTwoAll, "last-two-all", false, "last-two digits test on every amount (default: only where the two digits read are the fourth significant digit or later, e.g. amounts of 100.00 and more at scale 2)")
	minExcess := fs.Float64("min-excess", benford.DefaultMinExcess, "materiality margin of the bin flag: a flagged bin is off by at least this share of its expectation; 0 flags on significance alone")
	fs.IntVar(&o.print.rankRows, "rank-rows", 20, "segments shown per ranking in text format (0 = all)")
	fs.BoolVar(&o.print.allBins, "all-bins", false, "text format: print all 900 first-three digits bins (default: the flagged ones)")
	f.add(fs)
	o.counts.add(fs)
	return func(args []string) (scanOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) > 0 {
			return o, fmt.Errorf("unexpected argument %q (see --help)", args[0])
		}
		var err error
		if o.battery.Tests, o.battery.Duplication, err = battery.ParseTests(tests); err != nil {
			return o, err
		}
		if o.counts.given() {
			if err := o.counts.check(fs); err != nil {
				return o, err
			}
			if !fs.Changed("tests") {
				o.battery.Tests, o.battery.Duplication = battery.CountTests(), false
			}
		}
		o.battery.Spec = pop.base()
		m := *minExcess
		o.battery.MinExcess = &m
		o.format = f.value
		return o, nil
	}
}

// runScan runs the battery, stores the run and prints it.
func runScan(ctx context.Context, e *env, o scanOptions) error {
	if o.counts.given() {
		return scanCounts(ctx, e, o)
	}
	started := time.Now()
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	rep, err := battery.Run(ctx, ws, o.battery)
	if err != nil {
		return err
	}
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: "scan", Started: started, Params: rep.Params, Result: rep, SetID: func(id int64) { rep.RunID = id }}); err != nil {
		return err
	}
	return printScan(e.stdout, o.format, rep, o.print)
}

type scanPrint struct {
	rankRows int
	allBins  bool
}

func printScan(w io.Writer, format string, rep *battery.Report, sp scanPrint) error {
	switch format {
	case "json":
		return writeJSON(w, rep)
	case "csv":
		return scanBinsTable(rep).WriteCSV(w)
	}
	return printScanText(w, rep, sp)
}

// scanBinsTable is the long format: one row per bin of every test, for the
// whole selection (segment empty) and every ranked segment; number
// duplication adds one row per amount listed (bin = rank).
func scanBinsTable(rep *battery.Report) *tabular.Table {
	t := &tabular.Table{Name: "bins", Columns: []string{"run_id", "test", "segment", "bin", "label", "count", "amount", "actual", "expected", "z", "lower", "upper", "flagged", "outside_goodman"}}
	add := func(seg string, r benford.Result) {
		for _, b := range r.Bins {
			var amount any
			if r.Test == benford.Summation {
				amount = b.Amount
			}
			t.Add(rep.RunID, string(r.Test), seg, b.Bin, b.Label, b.Count, amount, b.Actual, b.Expected, b.Z, b.Lower, b.Upper, b.Flagged, b.OutsideGoodman)
		}
	}
	for _, r := range rep.Tests {
		add("", r)
	}
	for _, s := range rep.SegmentResults {
		for _, r := range s.Results {
			add(s.Key.Label(), r)
		}
	}
	if d := rep.Duplication; d != nil {
		for _, x := range d.Top {
			t.Add(rep.RunID, "duplication", "", x.Rank, x.Amount, x.Count, nil, x.Share, nil, nil, nil, nil, nil, nil)
		}
	}
	return t
}

func printScanText(w io.Writer, rep *battery.Report, sp scanPrint) error {
	p := rep.Params
	x := rep.Exclusions
	fmt.Fprintf(w, "Digit battery (run %d): %s amounts tested (%s, |amount| >= %s", rep.RunID, numfmt.Int(rep.Tested), p.Signs, p.Min)
	if strings.TrimSpace(p.Where) != "" {
		fmt.Fprintf(w, ", where %s", strings.TrimSpace(p.Where))
	}
	fmt.Fprintf(w, ") of %s rows\n", numfmt.Int(rep.Rows))
	if in := rep.Input; in != nil {
		fmt.Fprintf(w, "Input: %s rows read from %d file(s) = %s loaded + %s rejected at load (%.2f%% rejected).\n",
			numfmt.Int(in.RowsRead), in.Files, numfmt.Int(in.RowsLoaded), numfmt.Int(in.RowsRejected), 100*in.RejectedShare)
	}
	if rep.CurrencyNote != "" {
		fmt.Fprintf(w, "Note: %s.\n", rep.CurrencyNote)
	}
	var left []string
	if x.Filtered > 0 {
		left = append(left, numfmt.Int(x.Filtered)+" by the filter")
	}
	left = append(left, numfmt.Int(x.Zero)+" zero")
	if p.Signs != "both" {
		other := map[string]string{"positive": "negative", "negative": "positive"}[p.Signs]
		left = append(left, numfmt.Int(x.OtherSign)+" "+other)
	}
	left = append(left, numfmt.Int(x.BelowMin)+" below "+p.Min)
	if x.NoAmount > 0 {
		left = append(left, numfmt.Int(x.NoAmount)+" without an amount")
	}
	fmt.Fprintf(w, "Left out: %s. Amounts as %s; last two digits %s.\n", strings.Join(left, ", "), rep.AmountType,
		map[string]string{battery.LastTwoScale: "at the ledger's scale", battery.LastTwoUnits: "of the whole-currency part"}[p.LastTwo])
	fmt.Fprintf(w, "Time: %.2fs (one scan %.2fs", rep.Seconds.Total, rep.Seconds.Scan)
	if rep.Seconds.SecondOrder > 0 {
		fmt.Fprintf(w, ", second-order %.2fs", rep.Seconds.SecondOrder)
	}
	if rep.Seconds.Duplication > 0 {
		fmt.Fprintf(w, ", duplication %.2fs", rep.Seconds.Duplication)
	}
	fmt.Fprintln(w, ")")

	for _, r := range rep.Tests {
		fmt.Fprintln(w)
		if err := printTestText(w, r, sp.allBins); err != nil {
			return err
		}
	}
	if d := rep.Duplication; d != nil {
		fmt.Fprintf(w, "\nNumber duplication: the %d most frequent of %s distinct amounts (N %s)\n", len(d.Top), numfmt.Int(d.Distinct), numfmt.Int(d.N))
		t := &tabular.Table{Columns: []string{"rank", "amount", "count", "share_%"}}
		for _, x := range d.Top {
			t.Add(x.Rank, x.Amount, numfmt.Int(x.Count), pct(x.Share))
		}
		if err := t.WriteText(w, 0); err != nil {
			return err
		}
	}
	if s := rep.Segments; s != nil {
		fmt.Fprintf(w, "\nSegments by %s: %s found, %s with at least %s amounts ranked\n", strings.Join(s.By, ", "),
			numfmt.Int(int64(s.Count)), numfmt.Int(int64(s.Ranked)), numfmt.Int(s.MinRows))
		for _, rk := range s.Rankings {
			fmt.Fprintf(w, "\n%s by segment, most distorted first (sorted by %s)\n", capitalize(rk.Test.Name()), strings.ReplaceAll(rk.SortBy, "_", " "))
			cols := []string{"rank", "segment", "n", "mad", "conformity", "excess_mad", "chi2_p", "flagged", "runs", "runs_p"}
			local := rk.Test == benford.FirstTwo
			if local {
				cols = append(cols[:8:8], append([]string{"local"}, cols[8:]...)...)
			}
			t := &tabular.Table{Columns: cols}
			for i, r := range rk.Rows {
				if sp.rankRows > 0 && i >= sp.rankRows {
					break
				}
				var runs, runsP any
				if r.Runs != nil {
					runs, runsP = *r.Runs, numfmt.P(*r.RunsP)
				}
				chi := any(numfmt.P(r.PValue))
				excess := any(numfmt.Stat(r.ExcessMAD))
				if rk.Test == benford.Summation {
					chi, excess = nil, nil
				}
				cells := []any{r.Rank, r.Segment, numfmt.Int(r.N), numfmt.Stat(r.MAD), r.Conformity, excess, chi, r.Flagged, runs, runsP}
				if local {
					var lf any
					if r.LocalFlagged != nil {
						lf = *r.LocalFlagged
					}
					cells = append(cells[:8:8], append([]any{lf}, cells[8:]...)...)
				}
				t.Add(cells...)
			}
			if err := t.WriteText(w, 40); err != nil {
				return err
			}
			if sp.rankRows > 0 && len(rk.Rows) > sp.rankRows {
				fmt.Fprintf(w, "(%d more; --rank-rows 0 shows all, --format json or csv has every segment)\n", len(rk.Rows)-sp.rankRows)
			}
			if rk.AdjustedOver > 1 {
				fmt.Fprintf(w, "Flags adjusted over the %s segments ranked (Holm): segments that all follow Benford's law show a flag in at most 5%% of scans.\n", numfmt.Int(int64(rk.AdjustedOver)))
			}
		}
		if len(s.TooSmall) > 0 {
			names := make([]string, 0, 10)
			for i, ts := range s.TooSmall {
				if i == 10 {
					names = append(names, "...")
					break
				}
				names = append(names, fmt.Sprintf("%s (%s)", ts.Segment, numfmt.Int(ts.Tested)))
			}
			fmt.Fprintf(w, "\nToo small to judge (fewer than %s amounts), not ranked: %d segments: %s\n", numfmt.Int(s.MinRows), len(s.TooSmall), strings.Join(names, ", "))
		}
	}
	fmt.Fprintln(w, "\nFlags are signals for follow-up, never proof of fraud.")
	return nil
}

func printTestText(w io.Writer, r benford.Result, allBins bool) error {
	fmt.Fprintf(w, "%s (N %s)\n", capitalize(r.Test.Name()), numfmt.Int(r.N))
	if r.N == 0 && r.Test != benford.Summation {
		fmt.Fprintln(w, "  no amounts")
		return nil
	}
	summation := r.Test == benford.Summation
	cols := []string{"bin", "count", "actual_%", "expected_%", "z", "flag", ""}
	if summation {
		cols = []string{"bin", "count", "amount", "share_%", "expected_%", "flag", ""}
	}
	t := &tabular.Table{Columns: cols}
	maxP := 0.0
	for _, b := range r.Bins {
		maxP = math.Max(maxP, math.Max(b.Actual, b.Expected))
	}
	bins := r.Bins
	if r.Test == benford.FirstThree && !allBins {
		bins = nil
		for _, b := range r.Bins {
			if b.Flagged {
				bins = append(bins, b)
			}
		}
		sort.SliceStable(bins, func(i, j int) bool { return bins[i].Z > bins[j].Z })
		if len(bins) > 30 {
			bins = bins[:30]
		}
		sort.SliceStable(bins, func(i, j int) bool { return bins[i].Bin < bins[j].Bin })
	}
	for _, b := range bins {
		flag := ""
		if b.Flagged {
			flag = "over"
			if b.Diff < 0 {
				flag = "under"
			}
		}
		bar := scanBar(b.Actual, b.Expected, maxP, 30)
		if summation {
			t.Add(b.Label, numfmt.Int(b.Count), numfmt.MoneyFloat(b.Amount), pct(b.Actual), pct(b.Expected), flag, bar)
		} else {
			t.Add(b.Label, numfmt.Int(b.Count), pct(b.Actual), pct(b.Expected), numfmt.Stat(b.Z), flag, bar)
		}
	}
	if r.Test == benford.FirstThree && !allBins {
		fmt.Fprintf(w, "  (flagged bins only, largest Z first, at most 30: --all-bins prints all 900)\n")
	}
	if len(bins) > 0 {
		if err := t.WriteText(w, 0); err != nil {
			return err
		}
	}
	// Summary statistics.
	fmt.Fprintf(w, "MAD %s: %s", numfmt.Stat(r.MAD), r.Conformity)
	if !summation {
		fmt.Fprintf(w, "; expected MAD at this N %s, excess %s", numfmt.Stat(r.ExpectedMAD), numfmt.Stat(r.ExcessMAD))
	}
	fmt.Fprintln(w)
	if m := r.MADNull; m != nil {
		fmt.Fprintf(w, "MAD under conformity at this N: mean %s, sd %s, 95%% below %s (z %s, p %s): %s\n",
			numfmt.Stat(m.Mean), numfmt.Stat(m.SD), numfmt.Stat(m.P95), numfmt.Stat(m.Z), numfmt.P(m.P), r.Severity)
	}
	if r.DF > 0 {
		fmt.Fprintf(w, "Chi-square %s, %d df, p %s; Kolmogorov-Smirnov D %s (5%% critical value %s)\n",
			numfmt.Stat(r.Chi2), r.DF, numfmt.P(r.PValue), numfmt.Stat(r.KSD), numfmt.Stat(r.KSCritical))
		fmt.Fprintf(w, "Cramér-von Mises U² %s, p %s (W² %s, p %s; asymptotic)\n",
			numfmt.Stat(r.CvMU2), numfmt.P(r.CvMU2P), numfmt.Stat(r.CvMW2), numfmt.P(r.CvMW2P))
	}
	lo, hi := r.Test.Bins()
	fmt.Fprintf(w, "Flagged bins: %d of %d", r.Flagged, hi-lo+1)
	if !summation {
		fmt.Fprintf(w, "; outside Goodman's simultaneous 95%% intervals: %d", r.OutsideGoodman)
	}
	if len(r.TopFlagged) > 0 {
		s := make([]string, len(r.TopFlagged))
		for i, b := range r.TopFlagged {
			s[i] = r.Test.Label(b)
		}
		fmt.Fprintf(w, "; follow up first: %s", strings.Join(s, ", "))
	}
	fmt.Fprintln(w)
	if l := r.LocalSurplus; l != nil {
		writeLocalSurplus(w, l)
	}
	if rr := r.Runs; rr != nil {
		fmt.Fprintf(w, "Runs test: %d runs (expected %s, sd %s, z %s, one-sided p %s)\n",
			rr.Runs, numfmt.Stat(rr.Expected), numfmt.Stat(rr.SD), numfmt.Stat(rr.Z), numfmt.P(rr.P))
		var parts []string
		for i, s := range rr.Stretches {
			if i == 3 || s.Kind != benford.Surplus {
				break
			}
			parts = append(parts, fmt.Sprintf("%s to %s (%d bins, %+.2f%% of N)", r.Test.Label(s.From), r.Test.Label(s.To), s.Bins, 100*s.Excess))
		}
		if len(parts) > 0 {
			fmt.Fprintf(w, "Largest surplus stretches: %s\n", strings.Join(parts, "; "))
		}
	}
	for _, n := range r.Notes {
		fmt.Fprintf(w, "Note: %s\n", n)
	}
	return nil
}

// writeLocalSurplus prints the first-two test's local surplus flag: the
// flagged stretches, or the largest surplus and why it is not flagged.
func writeLocalSurplus(w io.Writer, l *benford.LocalSurplus) {
	if !l.Tested {
		fmt.Fprintf(w, "Local surplus: not tested (fewer than %s amounts)\n", numfmt.Int(benford.LocalMinAmounts))
		return
	}
	one := func(s benford.LocalStretch) string {
		bins := "bins"
		if s.FromBin == s.ToBin {
			bins = "bin"
		}
		return fmt.Sprintf("%s %s: %s amounts, %s expected from the neighbouring bins (%+.1f%%, z %s, adjusted p %s)",
			bins, s.Label(), numfmt.Int(s.Count), numfmt.Int(int64(math.Round(s.Expected))), 100*(s.Ratio-1), numfmt.Stat(s.Z), numfmt.P(s.PAdjusted))
	}
	if len(l.Flagged) == 0 {
		fmt.Fprintf(w, "Local surplus: no stretch of up to %d adjacent bins flagged (beyond chance at 5%% and at least %.0f%% above its neighbours' trend); largest: %s\n",
			l.MaxBins, 100*l.MinExcess, one(l.Largest))
		return
	}
	fmt.Fprintf(w, "Local surplus flagged (beyond chance at 5%% and at least %.0f%% above the neighbours' trend):\n", 100*l.MinExcess)
	for i, s := range l.Flagged {
		if i == 5 {
			fmt.Fprintf(w, "  ... %d more in the JSON output\n", len(l.Flagged)-i)
			break
		}
		fmt.Fprintf(w, "  %s\n", one(s))
	}
}

// scanBar draws actual as a bar of '#' scaled to max, with '|' where the
// expected proportion falls.
func scanBar(actual, expected, max float64, width int) string {
	if max <= 0 {
		return ""
	}
	n := int(math.Round(actual / max * float64(width)))
	e := int(math.Round(expected / max * float64(width)))
	b := []byte(strings.Repeat("#", n) + strings.Repeat(" ", max0(width-n)))
	if e >= 0 && e <= width {
		if e == width {
			e = width - 1
		}
		b[e] = '|'
	}
	return strings.TrimRight(string(b), " ")
}

func max0(n int) int {
	if n < 0 {
		return 0
	}
	return n
}

func pct(x float64) string { return fmt.Sprintf("%.3f", 100*x) }

func capitalize(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}
