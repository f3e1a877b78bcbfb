package main

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "inspect",
		summary: "show a file's columns, detected types, sample rows and suggested mapping, without loading",
		usage: `Usage: leadline inspect [options] FILE

Reads the head of a CSV, TSV, Parquet or XLSX file and proposes the column
mapping and the load command. For a workbook it lists the sheets and shows
the one read and its header row. Nothing is written anywhere.

Examples:
  leadline inspect gl_2025.csv
  leadline inspect --rows 10 --format json payables.parquet
  leadline inspect --sheet 2 journal.xlsx`,
		flags: func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
			var f formatFlag
			var rows int
			o := load.Options{}
			fs.IntVar(&rows, "rows", 5, "sample rows to show")
			fs.StringVar(&o.Delimiter, "delimiter", "", "CSV field delimiter (default: guessed)")
			fs.StringVar(&o.Encoding, "encoding", "", "CSV text encoding: utf-8, utf-16 or latin-1")
			fs.StringVar(&o.Sheet, "sheet", "", "XLSX: the sheet to inspect, by name or 1-based position (default: the first sheet holding a value)")
			f.add(fs)
			return func(ctx context.Context, args []string, e *env) error {
				if err := f.check(); err != nil {
					return err
				}
				if len(args) != 1 {
					return fmt.Errorf("give exactly one file to inspect")
				}
				ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
				if err != nil {
					return err
				}
				defer ws.Close()
				in, err := load.Inspect(ctx, ws, args[0], o, rows)
				if err != nil {
					return err
				}
				if f.value == "json" {
					return writeJSON(e.stdout, in)
				}
				cols := &tabular.Table{Columns: []string{"column", "detected_type", "maps_to"}}
				mapsTo := map[string]string{}
				for c, n := range in.Mapping.Columns {
					mapsTo[n] = c
				}
				if in.Mapping.Debit != "" {
					mapsTo[in.Mapping.Debit] = "amount (+debit)"
					mapsTo[in.Mapping.Credit] = "amount (-credit)"
				}
				for _, c := range in.Columns {
					cols.Add(c.Name, c.Detected, mapsTo[c.Name])
				}
				if f.value == "csv" {
					return cols.WriteCSV(e.stdout)
				}
				w := e.stdout
				fmt.Fprintf(w, "%s (%s, %d bytes", in.Path, in.Format, in.SizeBytes)
				if in.Format == "csv" {
					fmt.Fprintf(w, ", delimiter %q, %s", in.Delimiter, in.Encoding)
				}
				fmt.Fprintf(w, ")\nSHA-256 %s\n\n", in.SHA256)
				printInspectSheets(w, in.Sheet)
				cols.WriteText(w, 0)
				sample := &tabular.Table{}
				for _, c := range in.Columns {
					sample.Columns = append(sample.Columns, c.Name)
				}
				for _, r := range in.Sample {
					row := make([]any, len(r))
					for i, v := range r {
						row[i] = v
					}
					sample.Rows = append(sample.Rows, row)
				}
				fmt.Fprintf(w, "\nFirst %d rows:\n", len(in.Sample))
				sample.WriteText(w, 24)
				if ac := in.AmountCheck; ac != nil {
					fmt.Fprintf(w, "\nAmounts in %q: of %d sampled, %d parse with a decimal point, %d with a decimal comma.\n", ac.Column, ac.Sampled, ac.ParsePoint, ac.ParseComma)
				}
				for _, warn := range in.Warnings {
					fmt.Fprintf(w, "note: %s\n", warn)
				}
				if len(in.MissingHints) > 0 {
					fmt.Fprintf(w, "\nNot found (optional unless amount): %s\n", strings.Join(in.MissingHints, ", "))
				}
				if in.Mapping.Columns["amount"] == "" && in.Mapping.Debit == "" {
					fmt.Fprintf(w, "\nNo amount column recognised: map one with --map amount=COLUMN (or --debit/--credit).\n")
				}
				fmt.Fprintf(w, "\nSuggested load:\n  %s\n", in.LoadCommand)
				return nil
			}
		},
	})
}
