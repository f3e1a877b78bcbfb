package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"syscall"
	"time"

	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/fixtures"
	"github.com/spf13/pflag"
	"github.com/xuri/excelize/v2"
)

func init() {
	register(&command{
		name:    "bench-xlsx",
		summary: "measure a load of an XLSX workbook beside a load of the same rows as CSV, with peak memory",
		usage: `Usage: leadline-bench bench-xlsx [options]

Writes the synthetic ledger's rows once as CSV and once as an XLSX workbook
(excelize's stream writer; posting dates as date cells, amounts as number
cells), then loads each with leadline, each load its own process, in one
run, and reports wall time and peak resident memory. The two loads must
give the same rows and net.

Examples:
  go build -o leadline ./cmd/leadline
  go run ./cmd/leadline-bench bench-xlsx --rows 1000000 --leadline ./leadline`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var o benchOptions
			fs.Int64Var(&o.rows, "rows", 1_000_000, "ledger rows to generate")
			fs.StringVar(&o.dir, "dir", "", "work folder (default: a temporary folder, removed afterwards)")
			fs.BoolVar(&o.keep, "keep", false, "keep the work folder and reuse its generated files")
			fs.StringVar(&o.leadline, "leadline", "", "the leadline program (default: beside this program, else on the PATH)")
			return func(ctx context.Context, args []string, e *env) error {
				return runBenchXLSX(ctx, e, o)
			}
		},
	})
}

func runBenchXLSX(ctx context.Context, e *env, o benchOptions) error {
	leadline, dir, made, err := benchSetup(o.leadline, o.dir, "leadline-bench-xlsx-")
	if err != nil {
		return err
	}
	if made && !o.keep {
		defer os.RemoveAll(dir)
	}
	cfg := fixtures.Config{Rows: o.rows, Seed: 2025}
	csvPath, xlsxPath := filepath.Join(dir, "ledger.csv"), filepath.Join(dir, "ledger.xlsx")
	var results []benchResult
	if _, err := os.Stat(xlsxPath); err != nil || !o.keep {
		t0 := time.Now()
		if _, err := fixtures.WriteCSV(csvPath, cfg); err != nil {
			return err
		}
		if err := writeXLSX(xlsxPath, cfg); err != nil {
			return err
		}
		fmt.Fprintf(e.stderr, "  generate files       %8.2fs\n", time.Since(t0).Seconds())
	}
	nets := map[string]string{}
	for _, f := range []struct{ name, path string }{{"load CSV", csvPath}, {"load XLSX", xlsxPath}} {
		db := filepath.Join(dir, filepath.Base(f.path)+".duckdb")
		os.Remove(db)
		os.Remove(db + ".wal")
		args := []string{"load", "--db", db, "--format", "json", f.path}
		cmd := exec.CommandContext(ctx, leadline, args...)
		cmd.Env = append(os.Environ(), "LEADLINE_NO_PROGRESS=1")
		var out, errb bytes.Buffer
		cmd.Stdout, cmd.Stderr = &out, &errb
		t0 := time.Now()
		err := cmd.Run()
		r := benchResult{name: f.name, command: "leadline " + joinArgs(args), seconds: time.Since(t0).Seconds()}
		if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
			r.peakMB = float64(ru.Maxrss) / 1024 // Linux reports kilobytes
		}
		if err != nil {
			return fmt.Errorf("%s: %v\n%s", f.name, err, errb.String())
		}
		var rep struct {
			RowsLoaded int64 `json:"rows_loaded"`
			Files      []struct {
				Net      string `json:"net"`
				Positive string `json:"sum_positive"`
			} `json:"files"`
		}
		if err := json.Unmarshal(out.Bytes(), &rep); err != nil || len(rep.Files) != 1 {
			return fmt.Errorf("%s: reading its report: %v", f.name, err)
		}
		nets[f.name] = fmt.Sprintf("%d rows, sum of positives %s, net %s", rep.RowsLoaded, rep.Files[0].Positive, rep.Files[0].Net)
		fmt.Fprintf(e.stderr, "  %-20s %8.2fs  peak %7.0f MB  %s\n", f.name, r.seconds, r.peakMB, nets[f.name])
		results = append(results, r)
		os.Remove(db)
	}
	if nets["load CSV"] != nets["load XLSX"] {
		return fmt.Errorf("the two loads differ: CSV %s, XLSX %s", nets["load CSV"], nets["load XLSX"])
	}
	t := &tabular.Table{Columns: []string{"step", "seconds", "peak_mb", "file_mb", "command"}}
	for i, r := range results {
		p := []string{csvPath, xlsxPath}[i]
		st, _ := os.Stat(p)
		t.Add(r.name, fmt.Sprintf("%.2f", r.seconds), fmt.Sprintf("%.0f", r.peakMB), fmt.Sprintf("%.0f", float64(st.Size())/(1<<20)), r.command)
	}
	fmt.Fprintf(e.stdout, "%d rows (%s each)\n\n", o.rows, nets["load CSV"])
	if err := t.WriteText(e.stdout, 0); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "\nXLSX / CSV: %.1fx the time, %.1fx the peak memory\n", results[1].seconds/results[0].seconds, results[1].peakMB/results[0].peakMB)
	return nil
}

// writeXLSX writes cfg's rows to one sheet with excelize's stream writer:
// the CSV's columns, posted as a date cell, the amount as a number cell.
func writeXLSX(path string, cfg fixtures.Config) error {
	f := excelize.NewFile()
	defer f.Close()
	ds, err := f.NewStyle(&excelize.Style{NumFmt: 14})
	if err != nil {
		return err
	}
	sw, err := f.NewStreamWriter("Sheet1")
	if err != nil {
		return err
	}
	head := make([]any, len(fixtures.Columns))
	for i, c := range fixtures.Columns {
		head[i] = c
	}
	if err := sw.SetRow("A1", head); err != nil {
		return err
	}
	epoch := time.Date(1899, 12, 30, 0, 0, 0, 0, time.UTC) // serials from 1900-03-01 on
	n := 1
	row := make([]any, len(fixtures.Columns))
	err = fixtures.Generate(cfg, func(r fixtures.Row) error {
		n++
		row[0], row[1], row[2], row[3], row[4] = r.DocID, int(r.LineID), r.Entity, r.Account, r.Counterparty
		row[5] = excelize.Cell{StyleID: ds, Value: int(r.Posted.Sub(epoch).Hours() / 24)}
		row[6], row[7], row[8] = r.UserID, r.Source, r.Descr
		row[9] = float64(r.Cents) / 100
		return sw.SetRow("A"+strconv.Itoa(n), row)
	})
	if err != nil {
		return err
	}
	if err := sw.Flush(); err != nil {
		return err
	}
	return f.SaveAs(path)
}
