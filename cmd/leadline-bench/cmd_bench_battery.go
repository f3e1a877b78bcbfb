package main

import (
	"context"
	"fmt"
	"io"
	"slices"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/queries"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "bench-battery",
		summary: "time the one-scan digit battery against a single first-two digits GROUP BY",
		usage: `Usage: leadline-bench bench-battery [options]

Generates a synthetic ledger (the demo's generator, Parquet), loads it into
a fresh workspace and times, in the same run and on the same workspace:

  (b) reference: one hand-written first-two digits GROUP BY over the
      positive amounts of at least 10 (the exact integer digit rule);
  (a) the battery's one aggregate scan and the statistics of its six
      count-based tests (first, second, first-two, first-three, last-two,
      summation) on the whole ledger, as leadline scan runs them;
  (c) the same with segments (--by, default entity, account and month:
      about 1,400 segments on the generated ledger), from the same one scan;

and, for the record, the second-order test and number duplication (each
its own query: a sort and a GROUP BY amount) and a full default scan.

Each step runs --repeat times; ratios are taken between the fastest runs
of one invocation (the machine's other load moves all figures together).
Generation and loading are timed too but are not the benchmark.

Examples:
  leadline-bench bench-battery                        # 20,000,000 rows in a temporary folder
  leadline-bench bench-battery --rows 2000000 --repeat 3
  leadline-bench bench-battery --dir /data/bench --keep   # keep the Parquet file and workspace
  leadline-bench bench-battery --by counterparty      # 5,000-odd segments`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			o := benchBatteryOptions{benchData: benchData{prefix: "leadline-bench-battery-"}}
			var f formatFlag
			o.add(fs, 3)
			fs.StringSliceVar(&o.by, "by", []string{"entity", "account", "month"}, "segment columns of step (c)")
			fs.BoolVar(&o.extra, "extra", true, "also time the second-order test, number duplication and a full default scan")
			f.add(fs)
			return func(ctx context.Context, args []string, e *env) error {
				if err := f.check(); err != nil {
					return err
				}
				if len(args) > 0 {
					return fmt.Errorf("unexpected argument %q (see --help)", args[0])
				}
				if err := o.check(); err != nil {
					return err
				}
				return benchBattery(ctx, e, o, f.value)
			}
		},
	})
}

type benchBatteryOptions struct {
	benchData
	by    []string
	extra bool
}

// countTests are the tests the one scan feeds.
var countTests = []benford.Test{benford.FirstDigit, benford.SecondDigit, benford.FirstTwo, benford.FirstThree, benford.LastTwo, benford.Summation}

func benchBattery(ctx context.Context, e *env, o benchBatteryOptions, format string) error {
	ws, dir, steps, done, err := openBenchWorkspace(ctx, e, o.benchData)
	if err != nil {
		return err
	}
	defer done()
	say := func(msg string, a ...any) { fmt.Fprintf(e.stderr, msg, a...) }
	var n int64
	if err := ws.Conn.QueryRowContext(ctx, queries.Get("bench_ledger_rows")).Scan(&n); err != nil {
		return err
	}
	if err := battery.CreateMacros(ctx, ws); err != nil {
		return err
	}
	time1 := func(name, cmd string, fn func() (string, error)) error {
		return o.timeStep(e, &steps, name, cmd, fn)
	}
	// Interleave (b), (a) and (c) run by run, so that the machine's other
	// load falls on all three alike.
	type job struct {
		key, name, cmd string
		fn             func() (string, error)
	}
	runBattery := func(by []string) func() (string, error) {
		return func() (string, error) {
			r, err := battery.Run(ctx, ws, battery.Options{Tests: countTests, By: by})
			if err != nil {
				return "", err
			}
			s := fmt.Sprintf("%s amounts tested; scan %.2fs, statistics %.2fs", numfmt.Int(r.Tested), r.Seconds.Scan, r.Seconds.Statistics)
			if r.Segments != nil {
				s += fmt.Sprintf("; %s segments, %s ranked", numfmt.Int(int64(r.Segments.Count)), numfmt.Int(int64(r.Segments.Ranked)))
			}
			return s, nil
		}
	}
	jobs := []job{
		{"b", "(b) first-two digits GROUP BY, hand-written", "SQL battery_bench_first_two (queries/battery.sql)", func() (string, error) {
			rows, err := ws.Conn.QueryContext(ctx, queries.Get("battery_bench_first_two"))
			if err != nil {
				return "", err
			}
			defer rows.Close()
			var k int
			var total int64
			for rows.Next() {
				var bin, c int64
				if err := rows.Scan(&bin, &c); err != nil {
					return "", err
				}
				k++
				total += c
			}
			return fmt.Sprintf("%s amounts in %d bins", numfmt.Int(total), k), rows.Err()
		}},
		{"a", "(a) battery: one scan, six count-based tests", "leadline scan --tests " + testNames(countTests), runBattery(nil)},
		{"c", "(c) battery by " + strings.Join(o.by, ", "), "leadline scan --tests " + testNames(countTests) + " --by " + strings.Join(o.by, " --by "), runBattery(o.by)},
	}
	byKey := map[string]int{} // index into steps
	cpuRuns := map[string][]float64{}
	for i := 0; i < o.repeat; i++ {
		for _, j := range jobs {
			say("%s (run %d of %d) ...\n", j.name, i+1, o.repeat)
			t0 := time.Now()
			c0 := processCPU()
			res, err := j.fn()
			if err != nil {
				return fmt.Errorf("%s: %w", j.name, err)
			}
			d := time.Since(t0).Seconds()
			cpuRuns[j.key] = append(cpuRuns[j.key], processCPU()-c0)
			k, ok := byKey[j.key]
			if !ok {
				steps = append(steps, benchStep{Step: j.name, Command: j.cmd})
				k = len(steps) - 1
				byKey[j.key] = k
			}
			st := &steps[k]
			st.Runs = append(st.Runs, d)
			st.Result = res
		}
	}
	if o.extra {
		if err := time1("second-order test (its own query)", "leadline scan --tests second_order", func() (string, error) {
			r, err := battery.Run(ctx, ws, battery.Options{Tests: []benford.Test{benford.SecondOrder}})
			if err != nil {
				return "", err
			}
			return fmt.Sprintf("%s differences", numfmt.Int(r.Tests[0].N)), nil
		}); err != nil {
			return err
		}
		if err := time1("number duplication (its own query)", "leadline scan --tests duplication", func() (string, error) {
			r, err := battery.Run(ctx, ws, battery.Options{Duplication: true})
			if err != nil {
				return "", err
			}
			return fmt.Sprintf("%s distinct amounts", numfmt.Int(r.Duplication.Distinct)), nil
		}); err != nil {
			return err
		}
		if err := time1("full default scan (all tests)", "leadline scan", func() (string, error) {
			r, err := battery.Run(ctx, ws, battery.Options{})
			if err != nil {
				return "", err
			}
			return fmt.Sprintf("scan %.2fs, second-order %.2fs, duplication %.2fs", r.Seconds.Scan, r.Seconds.SecondOrder, r.Seconds.Duplication), nil
		}); err != nil {
			return err
		}
	}
	// Ratios of the fastest runs, wall and CPU time.
	best := func(k string) float64 { return steps[byKey[k]].fastest() }
	bestCPU := func(k string) float64 { return slices.Min(cpuRuns[k]) }
	ratios := map[string]float64{}
	if best("b") > 0 {
		ratios["a_over_b"] = best("a") / best("b")
	}
	if best("a") > 0 {
		ratios["c_over_a"] = best("c") / best("a")
	}
	if bestCPU("b") > 0 {
		ratios["a_over_b_cpu"] = bestCPU("a") / bestCPU("b")
	}
	if bestCPU("a") > 0 {
		ratios["c_over_a_cpu"] = bestCPU("c") / bestCPU("a")
	}
	for k, i := range byKey {
		steps[i].Result += fmt.Sprintf(" [CPU s: %s]", cpuList(cpuRuns[k]))
	}
	ver, _ := ws.DuckDBVersion(ctx)
	return printBenchBattery(e.stdout, format, o, n, ver, steps, ratios, dir)
}

func cpuList(xs []float64) string {
	s := make([]string, len(xs))
	for i, x := range xs {
		s[i] = fmt.Sprintf("%.2f", x)
	}
	return strings.Join(s, " ")
}

func testNames(ts []benford.Test) string {
	s := make([]string, len(ts))
	for i, t := range ts {
		s[i] = string(t)
	}
	return strings.Join(s, ",")
}

func printBenchBattery(w io.Writer, format string, o benchBatteryOptions, rows int64, duckdbVersion string, steps []benchStep, ratios map[string]float64, dir string) error {
	if format == "json" {
		doc := o.describe(rows, duckdbVersion, steps)
		doc["by"], doc["ratios"] = o.by, ratios
		return writeJSON(w, doc)
	}
	if err := o.printSteps(w, format, "Digit battery", rows, duckdbVersion, steps); err != nil || format == "csv" {
		return err
	}
	fmt.Fprintf(w, "\nFastest runs, wall time (CPU time of the process):\n")
	fmt.Fprintf(w, "  (a) battery / (b) first-two GROUP BY = %.2f (%.2f); goal: at most 1.3\n", ratios["a_over_b"], ratios["a_over_b_cpu"])
	fmt.Fprintf(w, "  (c) battery by %s / (a) battery = %.2f (%.2f); goal: at most 1.5\n", strings.Join(o.by, ", "), ratios["c_over_a"], ratios["c_over_a_cpu"])
	o.printKept(w, dir)
	return nil
}
