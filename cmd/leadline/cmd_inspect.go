package main

import (
	"context"
	"fmt"
	"io"
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

Reads a CSV, TSV, Parquet or XLSX file and proposes the whole load command: the
column mapping (with the header each canonical column matched and why), the
delimiter, the text encoding (with the evidence: byte-order marks, NUL
bytes of UTF-16, invalid UTF-8, bytes 0x80-0x9F of Windows-1252, the euro
sign 0xA4 of ISO-8859-15), the decimal mark and the date format of the
posting dates. For a workbook it lists the sheets and shows the one read
and its header row. Nothing is written anywhere.

Headers are recognised in English, German, French, Spanish, Italian, Dutch,
Portuguese, Swedish, Danish, Norwegian and Finnish, ignoring case, accents,
spaces and punctuation. --map, --debit and --credit fix a column as the
load would, and the suggested command carries them.

Examples:
  leadline inspect gl_2025.csv
  leadline inspect --encoding windows-1252 --map amount=Betrag buchungen.csv
  leadline inspect --rows 10 --format json payables.parquet
  leadline inspect --sheet 2 journal.xlsx`,
		flags: thin(inspectFlags, runInspect),
	})
}

// inspectOptions are what inspect's flags ask for.
type inspectOptions struct {
	file   string
	format string
	rows   int
	load   load.Options // delimiter, encoding, mapping
}

// inspectFlags registers inspect's flags; the function it returns checks them.
func inspectFlags(fs *pflag.FlagSet) func(args []string) (inspectOptions, error) {
	var o inspectOptions
	var f formatFlag
	var maps []string
	fs.IntVar(&o.rows, "rows", 5, "sample rows to show")
	fs.StringVar(&o.load.Delimiter, "delimiter", "", "CSV field delimiter (default: guessed)")
	fs.StringVar(&o.load.Encoding, "encoding", "", "CSV text encoding (default: from the file's bytes): "+load.EncodingNames())
	fs.StringVar(&o.load.Sheet, "sheet", "", "XLSX: the sheet to inspect, by name or 1-based position (default: the first sheet holding a value)")
	fs.StringArrayVar(&maps, "map", nil, "map a canonical column to a file column, CANONICAL=COLUMN (repeatable)")
	fs.StringVar(&o.load.Debit, "debit", "", "debit column of a two-column ledger (amount = debit - credit)")
	fs.StringVar(&o.load.Credit, "credit", "", "credit column of a two-column ledger")
	f.add(fs)
	return func(args []string) (inspectOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		o.format = f.value
		if len(args) != 1 {
			return o, fmt.Errorf("give exactly one file to inspect")
		}
		o.file = args[0]
		if o.rows < 0 {
			return o, fmt.Errorf("--rows %d: give 0 or more", o.rows)
		}
		var err error
		if o.load.Encoding, err = load.NormalizeEncoding(o.load.Encoding); err != nil {
			return o, err
		}
		if len(maps) > 0 {
			if o.load.Map, err = parseMaps(maps); err != nil {
				return o, err
			}
		}
		if err := load.CheckDebitCredit(false, o.load.Debit, o.load.Credit); err != nil {
			return o, err
		}
		return o, nil
	}
}

func runInspect(ctx context.Context, e *env, o inspectOptions) error {
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		return err
	}
	defer ws.Close()
	in, err := load.Inspect(ctx, ws, o.file, o.load, o.rows)
	if err != nil {
		return err
	}
	if o.format == "json" {
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
	if o.format == "csv" {
		return cols.WriteCSV(e.stdout)
	}
	return printInspection(e.stdout, in)
}

func printInspection(w io.Writer, in *load.Inspection) error {
	fmt.Fprintf(w, "%s (%s, %d bytes", in.Path, in.Format, in.SizeBytes)
	if in.Format == "csv" {
		fmt.Fprintf(w, ", delimiter %q, %s", in.Delimiter, in.Encoding)
	}
	fmt.Fprintf(w, ")\nSHA-256 %s\n", in.SHA256)
	if in.EncodingWhy != "" {
		fmt.Fprintf(w, "Encoding %s: %s\n", in.Encoding, in.EncodingWhy)
	}
	fmt.Fprintln(w)
	printInspectSheets(w, in.Sheet)
	mapsTo := map[string]string{}
	for c, n := range in.Mapping.Columns {
		mapsTo[n] = c
	}
	if in.Mapping.Debit != "" {
		mapsTo[in.Mapping.Debit] = "amount (+debit)"
		mapsTo[in.Mapping.Credit] = "amount (-credit)"
	}
	cols := &tabular.Table{Columns: []string{"column", "detected_type", "maps_to"}}
	for _, c := range in.Columns {
		cols.Add(c.Name, c.Detected, mapsTo[c.Name])
	}
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
	why := &tabular.Table{Columns: []string{"canonical", "column", "why"}}
	for _, c := range append(append([]string{}, load.Canonical...), "debit", "credit") {
		if m, ok := in.MappingWhy[c]; ok {
			reason := m.Why
			if len(m.Others) > 0 {
				reason += "; also matched: " + strings.Join(m.Others, ", ")
			}
			why.Add(c, m.Column, reason)
		}
	}
	if len(why.Rows) > 0 {
		fmt.Fprintln(w, "\nMapping:")
		why.WriteText(w, 0)
	}
	for _, a := range in.Ambiguities {
		fmt.Fprintf(w, "AMBIGUOUS %s\n", a)
	}
	if ac := in.AmountCheck; ac != nil {
		fmt.Fprintf(w, "\nAmounts in %q: of %d sampled, %d parse with a decimal point, %d with a decimal comma.\n", ac.Column, ac.Sampled, ac.ParsePoint, ac.ParseComma)
	}
	if in.DateWhy != "" {
		f := in.DateFormat
		if f == "" {
			f = "YYYY-MM-DD (no --date-format)"
		}
		fmt.Fprintf(w, "Posting dates: %s: %s.\n", f, in.DateWhy)
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
