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

With --by, the table is also run in every segment (entity, account,
counterparty, user_id, source, year, quarter, month of the posted date,
or any original column; several --by columns make segments of their
combinations), all from one scan. The bands are those of the whole
selection, so they line up across segments; each segment with at least
--min-segment tested amounts is scored on its own counts (bands its
amounts do not reach are "not scored", as at the edges of the whole
table). The segments' flags are adjusted together: Holm over all scored
(segment, band) pairs of the segments at 5%, so that the chance of a
flag anywhere in the segments stays at 5% however many there are (the
whole selection's table stays its own family). Segments are ranked by
their strongest band, and each flagged range in a segment has the drill
command that lists its records in that segment.

The amounts tested are those of the digit battery and the drill-down:
positive amounts of at least 10 by default (--signs, --min), narrowed by
--where. Bands are on absolute amounts: with --signs negative, 4500:5000
holds the amounts from -4,999.99 to -4,500.00.

A flag is a signal for follow-up, never proof of fraud: price lists, fee
scales and contract values inflate ranges for ordinary reasons.

With --counts FILE... --count-query QUERY the bands are counted by another
engine (leadline count-sql --test ranges): the files are added up
exactly, the layout and population are the query's, and each flagged
range's drill is that engine's query listing the records. --by does not
go with --counts: count-sql --test ranges counts no segments (count one
segment at a time with count-sql --where).

Examples:
  leadline ranges                                   # logarithmic bands, 10 a decade
  leadline ranges --width 500 --from 0 --to 20000   # fixed-width bands of 500
  leadline ranges --per-decade 20 --where "entity = 'KELP'"
  leadline ranges --width 500 --to 20000 --by cost_centre  # every cost centre on the same bands
  leadline ranges --width 1000 --to 50000 --signs negative --format csv > bands.csv`,
		flags: thin(rangesFlags, runRanges),
	})
}

// rangesOptions are what ranges' flags ask for.
type rangesOptions struct {
	db     dbFlags
	format string
	ranges ranges.Options
	top    int         // segments shown in text format (0 = all)
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
	fs.StringSliceVar(&o.ranges.By, "by", nil, "segment column(s): entity, account, counterparty, user_id, source, year, quarter, month or an original column (repeatable; several make one segmentation of their combinations); flags adjusted over all (segment, band) pairs")
	fs.Int64Var(&o.ranges.MinSegment, "min-segment", ranges.DefaultMinSegment, "with --by: fewest tested amounts for a segment to be scored")
	fs.IntVar(&o.top, "top", 20, "with --by: segments shown in text format (0 = all)")
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
			for _, name := range []string{"by", "min-segment"} {
				if fs.Changed(name) {
					return o, fmt.Errorf("--%s: ranges --counts scores the whole selection only (count-sql --test ranges counts no segments); run ranges --by on the workspace, or count one segment at a time with count-sql --where", name)
				}
			}
			if err := o.counts.check(fs, "width", "per-decade", "from", "to"); err != nil {
				return o, err
			}
		}
		if fs.Changed("by") && len(o.ranges.By) == 0 {
			return o, fmt.Errorf("--by: give a column name, e.g. --by entity")
		}
		if fs.Changed("min-segment") && len(o.ranges.By) == 0 {
			return o, fmt.Errorf("--min-segment goes with --by: give the segment column(s), e.g. --by entity")
		}
		if o.top < 0 {
			return o, fmt.Errorf("--top %d: give 0 (all) or more", o.top)
		}
		o.ranges.Spec = pop.base()
		if err := o.ranges.Layout.Check(); err != nil {
			return o, err
		}
		if err := ranges.CheckMinSegment(o.ranges.MinSegment); err != nil {
			return o, err
		}
		var err error
		if o.ranges.By != nil {
			if o.ranges, err = o.ranges.CheckSegments(); err != nil {
				return o, err
			}
		} else {
			o.ranges.By, o.ranges.MinSegment = nil, 0
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
	return printRangesTop(e.stdout, o.format, rep, o.top)
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
	return printRangesTop(w, format, rep, 20)
}

// printRangesTop prints a range table; with segments, top of them in text
// (0 = all).
func printRangesTop(w io.Writer, format string, rep *ranges.Report, top int) error {
	if format == "json" {
		return writeJSON(w, rep)
	}
	scale := bf.scale(rep.AmountType)
	t := &tabular.Table{Name: "ranges", Columns: []string{"from", "to", "count", "expected", "ratio", "z", "p", "p_adjusted", "flagged", "note", "range"}}
	if format == "csv" {
		if rep.Segments != nil {
			return rangesSegmentsCSV(w, rep)
		}
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
	switch {
	case rep.Scored == 0:
		fmt.Fprintln(w, "\nNo band could be scored: each needs scorable bands on both sides; give more bands (--per-decade, a smaller --width).")
	case len(rep.Stretches) == 0:
		fmt.Fprintln(w, "\nNo range stands out against its neighbours at the 5% family-wise level.")
	default:
		fmt.Fprintln(w, "\nInflated ranges (adjacent flagged bands), largest excess first:")
		printStretches(w, rep.Stretches, 5, "  ", scale)
	}
	if rep.Segments != nil {
		return printRangeSegments(w, rep.Segments, top, scale)
	}
	return nil
}

// printStretches lists the first n inflated ranges with their drill.
func printStretches(w io.Writer, st []ranges.Stretch, n int, indent string, scale int) {
	for i, s := range st {
		if i == n {
			fmt.Fprintf(w, "%s... and %d more (--format json lists them all)\n", indent, len(st)-i)
			break
		}
		fmt.Fprintf(w, "%s%s to %s: %d band(s), %s amounts against %s expected (excess %s)\n%s  %s\n",
			indent, bandAmount(s.From, scale), bandAmount(s.To, scale), s.Bands,
			numfmt.Int(s.Count), numfmt.Int(int64(s.Expected+0.5)), numfmt.Int(int64(math.Round(s.Excess))), indent, s.Drill)
	}
}

// printRangeSegments prints the segment part of a range table: the
// ranking by strongest band and the inflated ranges of the flagged
// segments.
func printRangeSegments(w io.Writer, st *ranges.SegmentTable, top, scale int) error {
	fmt.Fprintf(w, "\nSegments by %s: %s with rows; %s with at least %s tested amounts scored on the bands above",
		strings.Join(st.By, ", "), numfmt.Int(int64(st.Count)), numfmt.Int(int64(st.Scored)), numfmt.Int(st.MinSegment))
	if st.TooSmall > 0 {
		fmt.Fprintf(w, ", %s with fewer (%s amounts) not scored", numfmt.Int(int64(st.TooSmall)), numfmt.Int(st.TooSmallTested))
	}
	if st.NoBand > 0 {
		fmt.Fprintf(w, ", %s whose amounts (%s) span too few bands to score one", numfmt.Int(int64(st.NoBand)), numfmt.Int(st.NoBandTested))
	}
	fmt.Fprintf(w, ".\nFlags Holm-adjusted over all %s scored (segment, band) pairs of the segments at 5%% (the whole selection's table is its own family): %s flagged in %s segment(s).\n\n",
		numfmt.Int(int64(st.Pairs)), numfmt.Int(int64(st.Flagged)), numfmt.Int(int64(st.FlaggedSegments)))
	if len(st.Rows) == 0 {
		fmt.Fprintln(w, "No segment could be scored: a segment needs --min-segment tested amounts spread over enough bands; choose a coarser --by, or lower --min-segment.")
		return nil
	}
	t := &tabular.Table{Name: "ranges_segments"}
	t.Columns = append([]string{"rank"}, st.By...)
	t.Columns = append(t.Columns, "tested", "scored", "flagged", "strongest_band", "count", "expected", "ratio", "z", "p_adjusted", "flag")
	shown := 0
	for _, r := range st.Rows {
		if top > 0 && shown == top {
			break
		}
		row := append([]any{r.Rank}, segmentCells(st.By, r.Segment)...)
		row = append(row, numfmt.Int(r.Counts.Tested), numfmt.Int(int64(r.Scored)), numfmt.Int(int64(r.Flagged)))
		if b := r.Strongest; b != nil {
			row = append(row, bandAmount(b.From, scale)+" to "+bandAmount(b.To, scale), numfmt.Int(b.Count), numfmt.Int(int64(b.Expected+0.5)),
				numfmt.Stat(b.Ratio), numfmt.Stat(b.Z), bf.p(b.PAdjusted), bf.flag(b.Flagged))
		} else {
			row = append(row, "(none scored)", "", "", "", "", "", "")
		}
		t.Add(row...)
		shown++
	}
	fmt.Fprintln(w, "Segments ranked by their strongest band (smallest adjusted p, then largest z):")
	if err := t.WriteText(w, 0); err != nil {
		return err
	}
	if shown < len(st.Rows) {
		fmt.Fprintf(w, "(first %d of %d segments; --top 0 for all, or --format csv)\n", shown, len(st.Rows))
	}
	if st.Flagged == 0 {
		fmt.Fprintln(w, "\nNo range stands out in any segment at the 5% family-wise level over the segments.")
		return nil
	}
	fmt.Fprintln(w, "\nInflated ranges per flagged segment, largest excess first:")
	printed := 0
	for _, r := range st.Rows {
		if r.Flagged == 0 {
			continue
		}
		if top > 0 && printed == top {
			fmt.Fprintf(w, "  ... %d segments flagged in all (--format json has every drill command)\n", st.FlaggedSegments)
			break
		}
		fmt.Fprintf(w, "  %s:\n", r.Label)
		printStretches(w, r.Stretches, 3, "    ", scale)
		printed++
	}
	return nil
}

// segmentCells writes a segment's value of each --by column ("(all)" for
// the whole selection, "(blank)" for a blank value).
func segmentCells(by []string, seg map[string]*string) []any {
	var out []any
	for _, name := range by {
		switch v, ok := seg[name]; {
		case seg == nil:
			out = append(out, "(all)")
		case !ok || v == nil:
			out = append(out, "(blank)")
		default:
			out = append(out, *v)
		}
	}
	return out
}

// rangesSegmentsCSV prints the bands of the whole selection and of every
// scored segment, one row per (segment, band).
func rangesSegmentsCSV(w io.Writer, rep *ranges.Report) error {
	st := rep.Segments
	t := &tabular.Table{Name: "ranges"}
	t.Columns = append(append([]string{}, st.By...), "from", "to", "count", "expected", "ratio", "z", "p", "p_adjusted", "flagged", "note", "range", "drill")
	add := func(seg map[string]*string, b ranges.Row) {
		row := segmentCells(st.By, seg)
		row = append(row, b.From, b.To, b.Count, b.Expected, b.Ratio, b.Z, b.P, b.PAdjusted, b.Flagged, b.Note, b.Range, b.Drill)
		t.Add(row...)
	}
	for _, b := range rep.Bands {
		add(nil, b)
	}
	for _, r := range st.Rows {
		for _, b := range r.Bands {
			add(r.Segment, b)
		}
	}
	return t.WriteCSV(w)
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
