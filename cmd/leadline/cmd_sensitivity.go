package main

import (
	"context"
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/sensitivity"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "sensitivity",
		summary: "measure what the tests would have detected: inject synthetic amounts at several rates",
		usage: `Usage: leadline sensitivity --kind KIND [options]

Documents what the tests could and could not have detected in this
population. The population's bin counts are read once; for each rate and
seed, synthetic amounts of the chosen kind are added to those counts in
memory and the tests are run again. The loaded ledger is never changed or
copied. The table gives, per signal and rate, the share of seeds in which
the signal fired. The signals are the flags scan and limits raise: the bin
flag (exact binomial with Holm's step-down and the materiality margin), the
first-two local surplus flag (adjacent bins above their neighbours' smooth
trend), the runs test's simulated p, chi-square and Cramér-von Mises U² at 5%, the MAD
severity verdict and the limit probe with the density modelled from its
flanking bands; rows named reference are the trade's older rules, kept for
comparison.

Kinds:
  uniform       amounts uniform in --range FROM:TO
  below-limit   amounts uniform just below --limit (within --width)
  repeated      one --amount again and again
  rounded       log-uniform amounts rounded to whole hundreds

--baseline benford (default) draws a conforming population of the same size
afresh for each seed, so the rate-0 column is each signal's false-alarm
rate; --baseline workspace uses the loaded counts as they are, and the
rate-0 column then says whether a signal already fires on them.

Examples:
  leadline sensitivity --kind below-limit --limit 5000
  leadline sensitivity --kind uniform --range 2000:5000 --rates 0,0.005,0.01,0.02,0.05,0.1 --seeds 50
  leadline sensitivity --kind repeated --amount 1847.23 --baseline workspace`,
		flags: thin(sensitivityFlags, runSensitivity),
	})
}

// sensitivityOptions are what sensitivity's flags ask for.
type sensitivityOptions struct {
	db     dbFlags
	format string
	study  sensitivity.Options
	// spec is the rows studied as given: empty fields take the
	// scan's defaults.
	spec population.Spec
}

// sensitivityFlags registers sensitivity's flags; the function it returns
// checks them.
func sensitivityFlags(fs *pflag.FlagSet) func(args []string) (sensitivityOptions, error) {
	var so sensitivityOptions
	var f formatFlag
	var rng, rates string
	o := &so.study
	base := &so.spec
	so.db.add(fs)
	fs.StringVar(&o.Kind, "kind", "", "injection kind: uniform, below-limit, repeated or rounded")
	fs.StringVar(&rng, "range", "", "uniform injections: FROM:TO")
	fs.Float64Var(&o.Limit, "limit", 0, "below-limit injections: the limit")
	fs.Float64Var(&o.Width, "width", 0.10, "below-limit injections: width of the band below the limit, as a fraction")
	fs.Float64Var(&o.Amount, "amount", 0, "repeated injections: the amount")
	fs.StringVar(&rates, "rates", "0,0.005,0.01,0.02,0.05,0.1", "injection rates, as shares of the population")
	fs.IntVar(&o.Seeds, "seeds", 50, "random seeds per rate")
	fs.StringVar(&o.Baseline, "baseline", "benford", "benford (a conforming population per seed) or workspace (the loaded counts)")
	fs.StringVar(&base.Where, "where", "", "filter predicate over the ledger's columns (as in scan)")
	fs.StringVar(&base.Signs, "signs", "", "signs tested: positive (default), negative or both")
	fs.StringVar(&base.Min, "min", "", "smallest absolute amount tested (default 10)")
	f.add(fs)
	return func(args []string) (sensitivityOptions, error) {
		if err := f.check(); err != nil {
			return so, err
		}
		if len(args) > 0 {
			return so, fmt.Errorf("unexpected arguments %q (see --help)", args)
		}
		if rng != "" {
			a, b, ok := strings.Cut(rng, ":")
			var err1, err2 error
			o.From, err1 = strconv.ParseFloat(a, 64)
			o.To, err2 = strconv.ParseFloat(b, 64)
			if !ok || err1 != nil || err2 != nil {
				return so, fmt.Errorf("--range %q: write FROM:TO, e.g. 2000:5000", rng)
			}
		}
		o.Rates = nil
		for _, r := range strings.Split(rates, ",") {
			v, err := strconv.ParseFloat(strings.TrimSpace(r), 64)
			if err != nil {
				return so, fmt.Errorf("--rates: %q is not a number", r)
			}
			o.Rates = append(o.Rates, v)
		}
		if err := o.Validate(); err != nil {
			return so, err
		}
		so.format = f.value
		return so, nil
	}
}

// runSensitivity reads the population's bin counts, runs the injection
// study, stores the run and prints the detection table.
func runSensitivity(ctx context.Context, e *env, so sensitivityOptions) error {
	o := so.study
	base := so.spec
	ws, err := e.openWorkspace(ctx, so.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	started := time.Now()
	pop, err := sensitivity.FromWorkspace(ctx, ws, base.WithDefaults(), o)
	if err != nil {
		return err
	}
	res, err := sensitivity.Run(pop, o)
	if err != nil {
		return err
	}
	params := map[string]any{"options": o, "population": base.WithDefaults()}
	id, err := ws.SaveRun(ctx, workspace.Run{Kind: "sensitivity", Started: started, Params: params, Result: res})
	if err != nil {
		return err
	}
	t := &tabular.Table{Columns: []string{"signal"}}
	for _, r := range res.Rates {
		t.Columns = append(t.Columns, fmt.Sprintf("%g%%", 100*r))
	}
	for _, r := range res.Rows {
		row := []any{r.Signal}
		for _, d := range r.Detection {
			row = append(row, fmt.Sprintf("%.0f%%", 100*d))
		}
		t.Rows = append(t.Rows, row)
	}
	switch so.format {
	case "json":
		return writeJSON(e.stdout, map[string]any{"run_id": id, "result": res})
	case "csv":
		return t.WriteCSV(e.stdout)
	}
	fmt.Fprintf(e.stdout, "Sensitivity study (run %d): %s injections into %d amounts, %d seeds per rate, %s baseline\n\n", id, o.Kind, res.N, o.Seeds, o.Baseline)
	t.WriteText(e.stdout, 0)
	fmt.Fprintln(e.stdout)
	for _, n := range res.Notes {
		fmt.Fprintln(e.stdout, "note:", n)
	}
	return nil
}
