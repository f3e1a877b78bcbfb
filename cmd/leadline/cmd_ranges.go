package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "ranges",
		summary: "count amounts in bands and flag the ranges inflated against their neighbours",
		usage: `Usage: leadline ranges [options]

Counts the tested amounts in bands, either of a fixed width (--width 500
over [--from, --to)) or of equal width on a logarithmic scale (--per-decade
10, the default), and compares each band with a smooth expectation fitted
to its neighbouring bands, the band itself left out: a local line or
quadratic on the log scale (log count per unit of log width against the
log amount), made robust to inflated bands (a least-median-of-squares
start, then Tukey-biweight reweighting, so one inflated band or a block of
them does not lift its neighbours' expectations). How many neighbours on
each side (2 to 64) and which degree are chosen by leave-one-out
cross-validation over the bands: the widest window within one standard
error of the best. No band is judged against an extrapolation: the first
and the last band that could be scored (with a quadratic, the first two
and the last two) are listed as "not scored", as are bands cut by the
minimum amount or reaching past the largest amount. Bands well above their
expectation are flagged (one-sided quasi-Poisson test with a dispersion
estimated from all scored bands, Holm-adjusted over the scored bands at
5%), and adjacent flagged bands are joined into inflated ranges, each with
the drill command that lists its records. The rates at which it flags
bands without cause, and finds injected ones, are in the README (Range
table: false alarms and detection).

The amounts tested are those of the digit battery and the drill-down:
positive amounts of at least 10 by default (--signs, --min), narrowed by
--where. Bands are on absolute amounts: with --signs negative, 4500:5000
holds the amounts from -4,999.99 to -4,500.00.

A flag is a signal for follow-up, never proof of fraud: price lists, fee
scales and contract values inflate ranges for ordinary reasons.

With --counts FILE... --count-query QUERY the bands are counted by another
engine (leadline count-sql --test ranges): the files are added up
exactly, the layout and population are the query's, and each flagged
range's drill is that engine's query listing the records.

Examples:
  leadline ranges                                   # logarithmic bands, 10 a decade
  leadline ranges --width 500 --from 0 --to 20000   # fixed-width bands of 500
  leadline ranges --per-decade 20 --where "entity = 'KELP'"
  leadline ranges --width 1000 --to 50000 --signs negative --format csv > bands.csv`,
		flags: thin(rangesFlags, runRanges),
	})
}

// rangesOptions are what ranges' flags ask for.
type rangesOptions struct {
	db     dbFlags
	format string
	ranges ranges.Options
	counts countsFlags // --counts, --count-query: the bands on counts made elsewhere
}

// rangesFlags registers ranges' flags; the function it returns checks them.
func rangesFlags(fs *pflag.FlagSet) func(args []string) (rangesOptions, error) {
	var o rangesOptions
	var f formatFlag
	var pop bandPopulation
	o.db.add(fs)
	fs.Float64Var(&o.ranges.Width, "width", 0, "fixed band width in currency units, e.g. 500 (default: logarithmic bands)")
	fs.IntVar(&o.ranges.PerDecade, "per-decade", 0, "logarithmic bands to a decade (default 10 when --width is not given)")
	fs.Float64Var(&o.ranges.From, "from", 0, "start of the bands (default: 0 for fixed-width bands, the smallest tested amount for logarithmic ones)")
	fs.Float64Var(&o.ranges.To, "to", 0, "end of the bands (default: the largest tested amount)")
	pop.add(fs)
	pop.addCurrency(fs)
	f.add(fs)
	o.counts.add(fs)
	return func(args []string) (rangesOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) > 0 {
			return o, fmt.Errorf("unexpected argument %q (see --help)", args[0])
		}
		if o.counts.given() {
			if err := o.counts.check(fs, "width", "per-decade", "from", "to"); err != nil {
				return o, err
			}
		}
		o.ranges.Spec = pop.base()
		if err := o.ranges.Layout.Check(); err != nil {
			return o, err
		}
		o.format = f.value
		return o, nil
	}
}

// runRanges counts the bands, stores the run and prints it.
func runRanges(ctx context.Context, e *env, o rangesOptions) error {
	if o.counts.given() {
		return rangesCounts(ctx, e, o)
	}
	started := time.Now()
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	rep, err := ranges.Run(ctx, ws, o.ranges)
	if err != nil {
		return err
	}
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: "ranges", Started: started, Params: o.ranges, Result: rep, SetID: func(id int64) { rep.RunID = id }}); err != nil {
		return err
	}
	return printRanges(e.stdout, o.format, rep)
}

// bandPopulation are the flags that choose the amounts tested, as in the
// digit battery and the drill-down.
type bandPopulation struct {
	where, signs, min string
	currency          string // limits and ranges: the one currency tested
}

// addCurrency registers --currency: a limit or a range band is an amount
// in one currency, so a ledger in several currencies is tested one
// currency at a time.
func (p *bandPopulation) addCurrency(fs *pflag.FlagSet) {
	fs.StringVar(&p.currency, "currency", "", `test the amounts of one currency, e.g. EUR ("none" for rows without one); needed when the amounts are in several`)
}

func (p *bandPopulation) add(fs *pflag.FlagSet) {
	fs.StringVar(&p.signs, "signs", population.DefaultSigns, "amounts tested: positive, negative (as absolute values) or both")
	fs.StringVar(&p.min, "min", population.DefaultMin, "smallest absolute amount tested")
	fs.StringVar(&p.where, "where", "", `filter on the ledger's columns, e.g. "entity = 'KELP' AND posted >= '2025-07-01'" (read-only)`)
}

func (p *bandPopulation) base() population.Spec {
	return population.Spec{Where: population.CurrencyWhere(p.where, p.currency), Signs: p.signs, Min: p.min}
}

// bandPopulationLine describes the amounts tested and what was left out.
func bandPopulationLine(b population.Spec, c ranges.Counts) string {
	other := map[string]string{"positive": "negative", "negative": "positive"}[b.Signs]
	s := fmt.Sprintf("%s amounts tested (%s, |amount| >= %s", numfmt.Int(c.Tested), b.Signs, b.Min)
	if strings.TrimSpace(b.Where) != "" {
		s += ", where " + strings.TrimSpace(b.Where)
	}
	s += fmt.Sprintf("); left out: %s zero", numfmt.Int(c.Zero))
	if other != "" {
		s += fmt.Sprintf(", %s %s", numfmt.Int(c.OtherSign), other)
	}
	s += fmt.Sprintf(", %s below %s", numfmt.Int(c.BelowMin), b.Min)
	return s
}

func printRanges(w io.Writer, format string, rep *ranges.Report) error {
	if format == "json" {
		return writeJSON(w, rep)
	}
	scale := bf.scale(rep.AmountType)
	t := &tabular.Table{Name: "ranges", Columns: []string{"from", "to", "count", "expected", "ratio", "z", "p", "p_adjusted", "flagged", "note", "range"}}
	if format == "csv" {
		for _, b := range rep.Bands {
			t.Add(b.From, b.To, b.Count, b.Expected, b.Ratio, b.Z, b.P, b.PAdjusted, b.Flagged, b.Note, b.Range)
		}
		return t.WriteCSV(w)
	}
	fmt.Fprintf(w, "Amount ranges (run %d): %s\n", rep.RunID, bandPopulationLine(rep.Population, rep.Counts))
	l := rep.Layout
	if l.Width > 0 {
		fmt.Fprintf(w, "Bands: %d of fixed width %s from %s to %s", len(rep.Bands), numfmt.MoneyFloat(l.Width), numfmt.MoneyFloat(l.From), numfmt.MoneyFloat(l.To))
	} else {
		fmt.Fprintf(w, "Bands: %d logarithmic, %d to a decade, from %s to %s", len(rep.Bands), l.PerDecade, bandAmount(l.From, scale), bandAmount(l.To, scale))
	}
	fmt.Fprintf(w, "; %s tested amounts below the first band, %s at or above the end of the last\n", numfmt.Int(rep.BelowBands), numfmt.Int(rep.AboveBands))
	fmt.Fprintf(w, "Each band against a smooth expectation from its neighbours (%s); dispersion %s; %s bands scored, Holm-adjusted at 5%%: %s flagged\n\n",
		fitText(rep.Fit), numfmt.Stat(rep.Dispersion), numfmt.Int(int64(rep.Scored)), numfmt.Int(int64(rep.Flagged)))
	t.Columns = []string{"from", "to", "count", "expected", "ratio", "z", "p_adjusted", "flag", "note"}
	for _, b := range rep.Bands {
		if !b.Scored {
			t.Add(bandAmount(b.From, scale), bandAmount(b.To, scale), numfmt.Int(b.Count), "", "", "", "", "", b.Note)
			continue
		}
		t.Add(bandAmount(b.From, scale), bandAmount(b.To, scale), numfmt.Int(b.Count),
			numfmt.Int(int64(b.Expected+0.5)), numfmt.Stat(b.Ratio), numfmt.Stat(b.Z),
			bf.p(b.PAdjusted), bf.flag(b.Flagged), b.Note)
	}
	if err := t.WriteText(w, 0); err != nil {
		return err
	}
	if rep.Scored == 0 {
		fmt.Fprintln(w, "\nNo band could be scored: each needs scorable bands on both sides; give more bands (--per-decade, a smaller --width).")
		return nil
	}
	if len(rep.Stretches) == 0 {
		fmt.Fprintln(w, "\nNo range stands out against its neighbours at the 5% family-wise level.")
		return nil
	}
	fmt.Fprintln(w, "\nInflated ranges (adjacent flagged bands), largest excess first:")
	for i, s := range rep.Stretches {
		if i == 5 {
			fmt.Fprintf(w, "  ... and %d more (--format json lists them all)\n", len(rep.Stretches)-i)
			break
		}
		fmt.Fprintf(w, "  %s to %s: %d band(s), %s amounts against %s expected (excess %s)\n    %s\n",
			bandAmount(s.From, scale), bandAmount(s.To, scale), s.Bands,
			numfmt.Int(s.Count), numfmt.Int(int64(s.Expected+0.5)), numfmt.Int(int64(math.Round(s.Excess))), s.Drill)
	}
	return nil
}

// fitText describes the local fit chosen by cross-validation.
func fitText(f benford.BandFit) string {
	if f.Candidates == 0 {
		return "too few bands to fit"
	}
	shape := "line"
	if f.Degree == 2 {
		shape = "quadratic"
	}
	return fmt.Sprintf("local %s through %d bands on each side, chosen by cross-validation", shape, f.HalfWidth)
}

// bandFormat holds the text formatting of the ranges and limits commands.
type bandFormat struct{}

var bf bandFormat

// scale reads the decimal places of an amount type "DECIMAL(p,s)".
func (bandFormat) scale(t string) int {
	// counts made elsewhere: "whole units of 10^-N, counted by ENGINE"
	if _, rest, ok := strings.Cut(t, "10^-"); ok {
		n, _, _ := strings.Cut(rest, ",")
		if s, err := strconv.Atoi(n); err == nil {
			return s
		}
	}
	if i := strings.LastIndexByte(t, ','); i >= 0 {
		if s, err := strconv.Atoi(strings.TrimSuffix(strings.TrimSpace(t[i+1:]), ")")); err == nil {
			return s
		}
	}
	return 2
}

func (bandFormat) num(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }

// p writes a p-value (numfmt.P: four significant figures, "< 1e-300"
// when it underflowed).
func (bandFormat) p(p float64) string { return numfmt.P(p) }

func (bandFormat) flag(f bool) string {
	if f {
		return "yes"
	}
	return ""
}
