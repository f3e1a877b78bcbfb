package main

import (
	"bytes"
	"context"
	"reflect"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/spf13/pflag"
)

// parseFlags parses args with a command's flag layer as the command line
// does, without running the command: no database is opened.
func parseFlags[O any](flags func(fs *pflag.FlagSet) func(args []string) (O, error), args ...string) (O, error) {
	fs := newFlagSet("leadline test")
	parse := flags(fs)
	if err := fs.Parse(args); err != nil {
		var zero O
		return zero, err
	}
	return parse(fs.Args())
}

// wantErr fails unless err is an error whose text holds want.
func wantErr(t *testing.T, args []string, err error, want string) {
	t.Helper()
	if err == nil || !strings.Contains(err.Error(), want) {
		t.Errorf("%q: error %v, want one containing %q", args, err, want)
	}
}

// defaultDB is the --db flags when none is given.
var defaultDB = dbFlags{path: "leadline.duckdb", memory: "1280MB"}

func TestScanFlags(t *testing.T) {
	got, err := parseFlags(scanFlags, "--tests", "first_two", "--by", "entity", "--min", "5", "--signs", "both")
	if err != nil {
		t.Fatal(err)
	}
	want := scanOptions{
		db:     defaultDB,
		format: "text",
		battery: battery.Options{
			Spec:           population.Spec{Signs: "both", Min: "5"},
			Tests:          []benford.Test{benford.FirstTwo},
			By:             []string{"entity"},
			MinSegmentRows: battery.DefaultMinSegmentRows,
			LastTwo:        battery.LastTwoScale,
			Top:            battery.DefaultTop,
			MinExcess:      ptrTo(benford.DefaultMinExcess),
		},
		print: scanPrint{rankRows: 20},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("scan options\n got %+v\nwant %+v", got, want)
	}

	got, err = parseFlags(scanFlags, "--min-excess", "0.5", "--last-two-all")
	if err != nil {
		t.Fatal(err)
	}
	if got.battery.MinExcess == nil || *got.battery.MinExcess != 0.5 || !got.battery.LastTwoAll {
		t.Errorf("--min-excess 0.5 --last-two-all: %+v", got.battery)
	}

	got, err = parseFlags(scanFlags, "--db", "x.duckdb", "--threads", "2", "--by", "entity", "--by", "month", "--format", "json", "--all-bins", "--rank-rows", "0")
	if err != nil {
		t.Fatal(err)
	}
	if got.db.path != "x.duckdb" || got.db.threads != 2 || got.format != "json" || !got.print.allBins || got.print.rankRows != 0 ||
		!reflect.DeepEqual(got.battery.By, []string{"entity", "month"}) || !got.battery.Duplication || len(got.battery.Tests) != len(benford.AllTests()) {
		t.Errorf("scan options %+v", got)
	}
	if got.battery.Signs != population.DefaultSigns || got.battery.Min != population.DefaultMin {
		t.Errorf("scan population defaults: signs %q min %q", got.battery.Signs, got.battery.Min)
	}

	// Counts made elsewhere: the count-based tests by default, the
	// query's population (its own flags refused beside them).
	got, err = parseFlags(scanFlags, "--counts", "a.csv,b.parquet", "--count-query", "gl.sql", "--by", "entity")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.counts, countsFlags{files: []string{"a.csv", "b.parquet"}, query: "gl.sql"}) ||
		!reflect.DeepEqual(got.battery.Tests, battery.CountTests()) || got.battery.Duplication {
		t.Errorf("scan --counts options %+v", got)
	}
	got, err = parseFlags(scanFlags, "--counts", "a.csv", "--count-query", "gl.sql", "--tests", "first")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.battery.Tests, []benford.Test{benford.FirstDigit}) {
		t.Errorf("scan --counts --tests first: %v", got.battery.Tests)
	}

	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--counts", "a.csv"}, "--counts and --count-query go together"},
		{[]string{"--count-query", "gl.sql"}, "--counts and --count-query go together"},
		{[]string{"--counts", "a.csv", "--count-query", "gl.sql", "--min", "5"}, "--min: with --counts the population is the one the query counted"},
		{[]string{"--counts", "a.csv", "--count-query", "gl.sql", "--where", "1=1"}, "--where: with --counts"},
		{[]string{"--counts", "a.csv", "--count-query", "gl.sql", "--signs", "both"}, "--signs: with --counts"},
		{[]string{"--counts", "a.csv", "--count-query", "gl.sql", "--last-two", "units"}, "--last-two: with --counts"},
		{[]string{"--counts", "a.csv", "--count-query", "gl.sql", "--last-two-all"}, "--last-two-all: with --counts"},
		{[]string{"--format", "xml"}, `--format "xml": give text, csv or json`},
		{[]string{"--tests", "first,fourth"}, "--tests"},
		{[]string{"--bogus"}, "unknown flag: --bogus"},
		{[]string{"--min-segment", "many"}, "invalid argument"},
		{[]string{"extra"}, `unexpected argument "extra"`},
	} {
		_, err := parseFlags(scanFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}

func TestLimitsFlags(t *testing.T) {
	got, err := parseFlags(limitsFlags, "--limits", "1000,5000", "--width", "0.05", "--by", "user_id", "--where", "source = 'AP'", "--top", "0", "--format", "csv")
	if err != nil {
		t.Fatal(err)
	}
	want := limitsOptions{
		db:     defaultDB,
		format: "csv",
		limits: limits.Options{
			Spec:     population.Spec{Where: "source = 'AP'", Signs: population.DefaultSigns, Min: population.DefaultMin},
			Limits:   []float64{1000, 5000},
			Width:    0.05,
			By:       []string{"user_id"},
			MinCount: limits.DefaultMinCount,
		},
		top: 0,
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("limits options\n got %+v\nwant %+v", got, want)
	}
	got, err = parseFlags(limitsFlags)
	if err != nil || got.limits.Limits != nil || got.limits.Width != limits.DefaultWidth || got.top != 20 {
		t.Errorf("limits defaults: %+v, %v", got, err)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--limits", ""}, "--limits: give at least one limit"},
		{[]string{"--limits", "5k"}, "5k"},
		{[]string{"--width", "1.5"}, "1.5"},
		{[]string{"--format", "html"}, `--format "html"`},
	} {
		_, err := parseFlags(limitsFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}

func TestRangesFlags(t *testing.T) {
	got, err := parseFlags(rangesFlags, "--width", "500", "--from", "0", "--to", "20000", "--signs", "negative")
	if err != nil {
		t.Fatal(err)
	}
	want := rangesOptions{db: defaultDB, format: "text", ranges: ranges.Options{
		Spec:   population.Spec{Signs: "negative", Min: population.DefaultMin},
		Layout: ranges.Layout{Width: 500, From: 0, To: 20000},
	}, top: 20}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("ranges options\n got %+v\nwant %+v", got, want)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--width", "500", "--per-decade", "10"}, "not both"},
		{[]string{"--from", "100", "--to", "50"}, "FROM < TO"},
		{[]string{"--per-decade", "-1"}, "--per-decade -1"},
	} {
		_, err := parseFlags(rangesFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}

func TestDupsFlags(t *testing.T) {
	got, err := parseFlags(dupsFlags, "--tests", "same_amount, exact", "--window-days", "10", "--top", "-1", "--min", "0", "--floor", "250.5", "--db", "w.duckdb")
	if err != nil {
		t.Fatal(err)
	}
	want := dupsOptions{db: dbFlags{path: "w.duckdb", memory: "1280MB"}, format: "text", dups: duplicates.Options{
		Spec:              population.Spec{Signs: population.DefaultSigns, Min: "0"},
		Tests:             []string{"same_amount", "exact"},
		WindowDays:        10,
		MinCounterparties: duplicates.DefaultMinCounterparties,
		MinRecords:        duplicates.DefaultMinRecords,
		Top:               -1,
		Floor:             "250.5",
	}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("dups options\n got %+v\nwant %+v", got, want)
	}
	_, err = parseFlags(dupsFlags, "--top", "0")
	wantErr(t, []string{"--top", "0"}, err, "--top 0: give a number of groups, or -1 for all")
}

func TestDrillFlags(t *testing.T) {
	got, err := parseFlags(drillFlags, "--test", "first_two", "--bin", "47", "--group", "counterparty", "--segment", "entity=KELP", "--segment", "month=2025-03")
	if err != nil {
		t.Fatal(err)
	}
	if got.sel.Bin == nil || *got.sel.Bin != 47 || got.sel.Test != "first_two" || got.group.Column != "counterparty" ||
		!reflect.DeepEqual(got.sel.Segments, []string{"entity=KELP", "month=2025-03"}) || got.records.Limit != drill.DefaultLimit || got.limitGiven {
		t.Errorf("drill options %+v", got)
	}
	// Population flags not given stay empty, so that a negative --amount
	// chooses negative amounts by itself.
	if got.sel.Signs != "" || got.sel.Min != "" {
		t.Errorf("drill without --signs/--min: signs %q min %q, want both empty", got.sel.Signs, got.sel.Min)
	}
	got, err = parseFlags(drillFlags, "--amount", "-250", "--signs", "both", "--min", "0", "--limit", "5", "--out", "x.parquet")
	if err != nil {
		t.Fatal(err)
	}
	if got.sel.Bin != nil || got.sel.Amount != "-250" || got.sel.Signs != "both" || got.sel.Min != "0" || !got.limitGiven || got.records.Limit != 5 || got.out != "x.parquet" {
		t.Errorf("drill options %+v", got)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--limit", "0"}, "--limit 0: give 1 or more"},
		{[]string{"--top-amounts", "0"}, "--top-amounts 0: give 1 or more"},
		{[]string{"--out", "records.txt"}, "records.txt"},
		{[]string{"--dup", "7:same_amount:1", "--min", "5"}, "--dup: a duplicate group keeps the --signs and --min of its run"},
		{[]string{"--bin", "x"}, "invalid argument"},
	} {
		_, err := parseFlags(drillFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}

func TestSQLFlags(t *testing.T) {
	got, err := parseFlags(sqlFlags, "--format", "csv", "SELECT 1")
	if err != nil {
		t.Fatal(err)
	}
	if want := (sqlOptions{db: defaultDB, format: "csv", limit: 1000, query: "SELECT 1"}); got != want {
		t.Errorf("sql options %+v, want %+v", got, want)
	}
	for _, args := range [][]string{{}, {"SELECT", "1"}} {
		_, err := parseFlags(sqlFlags, args...)
		wantErr(t, args, err, "give the query as one argument")
	}
}

func TestSensitivityFlags(t *testing.T) {
	got, err := parseFlags(sensitivityFlags, "--kind", "uniform", "--range", "2000:5000", "--rates", "0, 0.01", "--seeds", "7", "--signs", "negative")
	if err != nil {
		t.Fatal(err)
	}
	s := got.study
	if s.Kind != "uniform" || s.From != 2000 || s.To != 5000 || !reflect.DeepEqual(s.Rates, []float64{0, 0.01}) || s.Seeds != 7 || s.Baseline != "benford" {
		t.Errorf("sensitivity study %+v", s)
	}
	if got.spec != (population.Spec{Signs: "negative"}) {
		t.Errorf("sensitivity population %+v", got.spec)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--kind", "uniform", "--range", "5000"}, `--range "5000": write FROM:TO`},
		{[]string{"--kind", "repeated", "--amount", "5", "--rates", "0,x"}, `--rates: "x" is not a number`},
		{[]string{"--kind", "below-limit", "--limit", "5000", "--baseline", "ledger"}, `baseline "ledger"`},
		{[]string{"--kind", "uniform", "--range", "2000:5000", "more"}, "unexpected arguments"},
	} {
		_, err := parseFlags(sensitivityFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}

func TestReportFlags(t *testing.T) {
	got, err := parseFlags(reportFlags, "4", "7", "--out", "r.html", "--title", "FY2025")
	if err != nil {
		t.Fatal(err)
	}
	if got.out != "r.html" || got.report.Title != "FY2025" || !reflect.DeepEqual(got.report.RunIDs, []int64{4, 7}) || got.db != defaultDB {
		t.Errorf("report options %+v", got)
	}
	for _, args := range [][]string{{"four"}, {"0"}, {"--runs", "4,x"}} {
		_, err := parseFlags(reportFlags, args...)
		wantErr(t, args, err, "is not a run id")
	}
	got, err = parseFlags(reportFlags, "--runs", "4,7", "9")
	if err != nil || !reflect.DeepEqual(got.report.RunIDs, []int64{4, 7, 9}) {
		t.Errorf("--runs 4,7 and 9: %v %v", got.report.RunIDs, err)
	}
	got, err = parseFlags(reportFlags, "--set", "latest")
	if err != nil || got.report.Set != "latest" {
		t.Errorf("--set latest: %q %v", got.report.Set, err)
	}
	_, err = parseFlags(reportFlags, "--set", "newest")
	wantErr(t, []string{"--set", "newest"}, err, "give pack or latest")
	_, err = parseFlags(reportFlags, "--set", "pack", "--runs", "4")
	wantErr(t, []string{"--set", "pack", "--runs", "4"}, err, "give one of them")
}

func TestRunPackDemoFlags(t *testing.T) {
	r, err := parseFlags(runFlags, "client.toml", "--out", "res", "-q")
	if err != nil || r.pack != "client.toml" || r.out != "res" || !r.quiet || r.format != "text" || r.fresh {
		t.Errorf("run options %+v, %v", r, err)
	}
	_, err = parseFlags(runFlags, "--out", "res")
	wantErr(t, nil, err, "give one pack file")

	p, err := parseFlags(packFlags, "init", "gl.csv", "--client", "Acme", "--force")
	if err != nil || p.sub != "init" || p.file != "gl.csv" || p.client != "Acme" || !p.force {
		t.Errorf("pack options %+v, %v", p, err)
	}
	p, err = parseFlags(packFlags, "example")
	if err != nil || p.out != "example.toml" {
		t.Errorf("pack example options %+v, %v", p, err)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{nil, "give a subcommand"},
		{[]string{"check"}, "pack check takes one pack file"},
		{[]string{"example", "x"}, "pack example takes no arguments"},
		{[]string{"build"}, `unknown subcommand "build"`},
	} {
		_, err := parseFlags(packFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}

	d, err := parseFlags(demoFlags, "--rows", "200000", "--scenario", "threshold")
	if err != nil || d.rows != 200000 || d.scenario != "threshold" || d.seed != 2025 || d.out != "leadline-demo" {
		t.Errorf("demo options %+v, %v", d, err)
	}
	_, err = parseFlags(demoFlags, "--scenario", "fraud")
	wantErr(t, nil, err, `--scenario "fraud": the only scenario is threshold`)
}

// TestHelpListsNoBenchmarks: the benchmarks are cmd/leadline-bench, not
// commands of the product.
func TestHelpListsNoBenchmarks(t *testing.T) {
	var out, errs bytes.Buffer
	if code := run(context.Background(), []string{"--help"}, &env{stdout: &out, stderr: &errs}); code != 0 {
		t.Fatalf("--help exited %d", code)
	}
	if !strings.Contains(out.String(), "  scan ") || strings.Contains(out.String(), "bench") {
		t.Errorf("help lists a benchmark, or not scan:\n%s", out.String())
	}
	// Looked up, not run: a benchmark run here would start this test
	// binary again as its steps.
	for _, name := range []string{"bench", "bench-battery", "bench-dups", "bench-step"} {
		if _, ok := commands[name]; ok {
			t.Errorf("leadline has a command %q", name)
		}
	}
}

func ptrTo[T any](v T) *T { return &v }
