package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/countsql"
	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/workspace"
)

func TestLoadFlags(t *testing.T) {
	got, err := parseFlags(loadFlags, "--db", "acme.duckdb", "--map", "amount=Betrag", "--decimal-comma", "--delimiter", ";",
		"--scale", "3", "--accept-rejects", "--period", "2025", "--format", "json", "gl.csv", "extracts/*.parquet")
	if err != nil {
		t.Fatal(err)
	}
	period, err := journal.ParsePeriod("2025")
	if err != nil {
		t.Fatal(err)
	}
	want := loadOptions{
		db:     dbFlags{path: "acme.duckdb", memory: "1280MB"},
		format: "json",
		files:  []string{"gl.csv", "extracts/*.parquet"},
		load: load.Options{Map: map[string]string{"amount": "Betrag"}, DecimalComma: true, Delimiter: ";",
			Scale: 3, Precision: 18, MaxRejects: "100%"},
		checks: loadChecks{period: "2025", parsed: &period, opts: reconcile.Options{Map: map[string]string{}, Scale: 6}},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("load options\n got %+v\nwant %+v", got, want)
	}
	got, err = parseFlags(loadFlags, "--control", "tb.csv", "--control-map", "net=Movement", "--accept-differences", "gl.csv")
	if err != nil || got.checks.control.file != "tb.csv" || !got.checks.control.accept || got.checks.opts.Map["net"] != "Movement" ||
		got.checks.parsed != nil || got.load.Scale != 2 || got.load.MaxRejects != "" || got.format != "text" || got.db != defaultDB {
		t.Errorf("--control: %+v, %v", got, err)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{}, "give one or more files"},
		{[]string{"--format", "xml", "gl.csv"}, "xml"},
		{[]string{"--map", "betrag", "gl.csv"}, "CANONICAL=COLUMN"},
		{[]string{"--map", "amout=Betrag", "gl.csv"}, "not a canonical column"},
		{[]string{"--max-rejects", "5%", "--accept-rejects", "gl.csv"}, "not both"},
		{[]string{"--period", "FY2025", "gl.csv"}, "--period"},
		{[]string{"--accept-differences", "gl.csv"}, "need --control FILE"},
		{[]string{"--control", "tb.csv", "--control-map", "net", "gl.csv"}, "ROLE=COLUMN"},
		{[]string{"--control", "tb.csv", "--control-decimal-comma", "--control-decimal-point", "gl.csv"}, "--control-decimal-comma and --control-decimal-point contradict each other"},
		{[]string{"--control", "tb.csv", "--control-map", "nett=Movement", "gl.csv"}, `--control-map nett=Movement: "nett" is not a role of a control file`},
	} {
		_, err := parseFlags(loadFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}

func TestCountSQLFlags(t *testing.T) {
	got, err := parseFlags(countSQLFlags, "--engine", "postgresql", "--table", "gl", "--map", "amount=amt", "--by", "entity", "--by", "month=posted", "--min", "5", "-o", "gl.sql")
	if err != nil {
		t.Fatal(err)
	}
	want := countSQLOptions{out: "gl.sql", spec: countsql.Spec{Engine: "postgresql", Table: "gl", Amount: "amt", Scale: 2, Signs: "positive", Min: "5", LastTwo: "scale", Test: "battery",
		By: []countsql.Segment{{Name: "entity", Column: "entity"}, {Name: "month", Column: "posted", Month: true}}}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("count-sql options\n got %+v\nwant %+v", got, want)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--engine", "duckdb", "--table", "gl", "--map", "amount=a", "extra"}, `unexpected argument "extra"`},
		{[]string{"--engine", "duckdb", "--map", "amount=a"}, "--engine and --table are required"},
		{[]string{"--engine", "duckdb", "--table", "gl"}, "--map amount=COLUMN"},
		{[]string{"--engine", "duckdb", "--table", "gl", "--map", "entity=co"}, "only amount=COLUMN"},
		{[]string{"--engine", "duckdb", "--table", "gl", "--map", "amount=a", "--width", "0.05"}, "--width counts bands: give --test limits or --test ranges"},
		{[]string{"--engine", "duckdb", "--table", "gl", "--map", "amount=a", "--test", "limits", "--per-decade", "5"}, "--per-decade lays out range bands"},
		{[]string{"--engine", "duckdb", "--table", "gl", "--map", "amount=a", "--test", "ranges", "--limits", "1000"}, "limits are probed with --test limits"},
	} {
		_, err := parseFlags(countSQLFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}

// TestLoadRunWithoutFlags loads from an options struct, with a workspace
// opener of the test's own, and runs count-sql from its options: no flag
// is parsed.
func TestLoadRunWithoutFlags(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	csvPath := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(csvPath, []byte("Betrag;entity\n1.234,56;A\n-20,00;B\nx;B\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "ws.duckdb")
	var opened []dbFlags
	var out bytes.Buffer
	e := &env{stdout: &out, stderr: &bytes.Buffer{}, open: func(ctx context.Context, db dbFlags, readOnly bool) (*workspace.Workspace, error) {
		opened = append(opened, db)
		if readOnly {
			t.Error("load opened its workspace read-only")
		}
		return workspace.Open(ctx, path, workspace.Options{})
	}}
	db := dbFlags{path: "not-a-file.duckdb"}
	o := loadOptions{db: db, format: "json", files: []string{csvPath},
		load: load.Options{Map: map[string]string{"amount": "Betrag"}, DecimalComma: true, Scale: 2, Precision: 18, MaxRejects: "100%"}}
	if err := runLoad(ctx, e, o); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		RowsRead     int64 `json:"rows_read"`
		RowsLoaded   int64 `json:"rows_loaded"`
		RowsRejected int64 `json:"rows_rejected"`
		Journal      any   `json:"journal"`
	}
	if err := json.Unmarshal(out.Bytes(), &doc); err != nil {
		t.Fatalf("%v\n%s", err, out.String())
	}
	if doc.RowsRead != 3 || doc.RowsLoaded != 2 || doc.RowsRejected != 1 || doc.Journal == nil {
		t.Errorf("load from options: %+v\n%s", doc, out.String())
	}
	if len(opened) != 1 || opened[0] != db {
		t.Errorf("the load opened %v, want the options' workspace %v once", opened, db)
	}
	if _, err := os.Stat("not-a-file.duckdb"); err == nil {
		t.Error("the load created the workspace its flags name, not the opener's")
	}

	// A control file that cannot be read stops the run before the
	// workspace is opened.
	o.checks = loadChecks{control: controlFlags{file: filepath.Join(dir, "missing.csv")}}
	opened = nil
	if err := runLoad(ctx, e, o); err == nil || !strings.Contains(err.Error(), "nothing was loaded") {
		t.Errorf("missing control file: %v", err)
	}
	if len(opened) != 0 {
		t.Errorf("a missing control file opened the workspace %v", opened)
	}

	out.Reset()
	if err := runCountSQL(ctx, e, countSQLOptions{spec: countsql.Spec{Engine: "duckdb", Table: "ledger", Amount: "amount", Scale: 2, Signs: "positive", Min: "10", LastTwo: "scale"}}); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "ledger") || !strings.Contains(out.String(), "SELECT") {
		t.Errorf("count-sql from options:\n%s", out.String())
	}
}

// TestCountSQLBandFlags: --test limits and --test ranges carry their band
// options into the spec, and --by takes the periods of a date.
func TestCountSQLBandFlags(t *testing.T) {
	got, err := parseFlags(countSQLFlags, "--engine", "clickhouse", "--table", "t", "--map", "amount=a", "--test", "limits", "--limits", "1000,5000", "--width", "0.05", "--by", "quarter=posted")
	if err != nil {
		t.Fatal(err)
	}
	if got.spec.Width != 0.05 || len(got.spec.Limits) != 2 || got.spec.Layout != nil {
		t.Errorf("limits spec %+v", got.spec)
	}
	if len(got.spec.By) != 1 || !got.spec.By[0].Quarter || got.spec.By[0].Column != "posted" {
		t.Errorf("--by quarter=posted: %+v", got.spec.By)
	}
	got, err = parseFlags(countSQLFlags, "--engine", "postgresql", "--table", "t", "--map", "amount=a", "--test", "ranges", "--width", "500", "--to", "20000", "--by", "year=posted")
	if err != nil {
		t.Fatal(err)
	}
	if l := got.spec.Layout; l == nil || l.Width != 500 || l.To != 20000 {
		t.Errorf("ranges layout %+v", got.spec.Layout)
	}
	if !got.spec.By[0].Year {
		t.Errorf("--by year=posted: %+v", got.spec.By)
	}
}
