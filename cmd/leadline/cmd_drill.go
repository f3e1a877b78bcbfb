package main

import (
	"context"
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "drill",
		summary: "list the records behind a digit bin, amount, range, segment or duplicate group",
		usage: `Usage: leadline drill [selection] [options]

Lists the records behind a result: every ledger column (the canonical ones
and every original column as the client sent it) plus the file each record
came from. Every part of the selection narrows it further:

  --test T --bin N     a bin of a digit test: first (1-9), second (0-9),
                       first_two (10-99), first_three (100-999), last_two (0-99);
                       digits come from the exact decimal (0.29 is first-two 29,
                       0.5 is first-three 500, 1234.56 is last-two 56)
  --amount X           one exact amount (a leading minus selects negative amounts)
  --range FROM:TO      FROM <= |amount| < TO, e.g. a band just below a limit;
                       either end may be left out (4500: or :5000)
  --segment COL=VALUE  records whose column holds exactly VALUE (repeatable);
                       COL= selects blanks; year=YYYY, quarter=YYYY-Qn, month=YYYY-MM select a period of posted
  --dup RUN:TEST:GROUP a group of a stored duplicates run, as printed by
                       leadline dups (TEST:GROUP for the latest run)
  --where SQL          the same filter predicate as the scan (read-only)

Amounts are compared by absolute value among the amounts kept by --signs
and --min, the scan's population: positive amounts of at least 10 unless
told otherwise. A duplicate group keeps the population of its run.

--group COLUMN gives one row per value of any column (counterparty, user_id,
account, entity, an original column, file_name, year, quarter or month) with its records,
total, distinct amounts and the most repeated amounts ("1847.23×312"),
most records first. --out FILE writes every record (or every group) to a
.csv, .json or .parquet file; --limit only cuts what is shown. Every
exported record ends in four empty follow-up columns (followup_status,
followup_note, followup_reviewer, followup_reviewed_on) for the team to
fill; leadline followup FILE reads them back into the workspace.

--sample random|monetary draws a reproducible sample of the selected
records to vouch: random draws --sample-size records with equal
probability; monetary draws by |amount| (monetary-unit sampling: interval
= total / size rounded up, a random start, every record of at least the
interval always selected). Records are numbered in file order (by file as
loaded, then line: the order of --out without --sort), so the same
records and --seed draw the same sample again. The method, seed,
interval, population count and total are printed, stored as a drill run
(the report shows it) and, with --out, written beside the file as
NAME.sample.json; --out then holds the sample's records.

Examples:
  leadline drill --test first_two --bin 47
  leadline drill --test first_two --bin 47 --group counterparty
  leadline drill --range 4500:5000 --segment user_id=wtennick --sort posted
  leadline drill --amount 1847.23 --group user_id
  leadline drill --amount -250 --group counterparty --limit 20
  leadline drill --dup 7:same_amount:1
  leadline drill --test last_two --bin 0 --where "entity = 'HAUL'" --out round.parquet
  leadline drill --test first_two --bin 47 --sample monetary --sample-size 30 --seed 7 --out vouch.csv`,
		flags: thin(drillFlags, runDrill),
	})
}

// drillOptions are what drill's flags ask for.
type drillOptions struct {
	db      dbFlags
	format  string
	sel     drill.Selection
	dup     string // RUN:TEST:GROUP of --dup
	records drill.RecordOptions
	group   drill.GroupOptions
	out     string
	// limitGiven: --limit was given, so --out writes only that many.
	limitGiven bool
	sample     drillSample
}

// drillFlags registers drill's flags; the function it returns checks them.
func drillFlags(fs *pflag.FlagSet) func(args []string) (drillOptions, error) {
	var o drillOptions
	var f formatFlag
	var bin int
	sel := &o.sel
	o.db.add(fs)
	fs.StringVar(&sel.Test, "test", "", "digit test of the bin: first, second, first_two, first_three or last_two")
	fs.IntVar(&bin, "bin", 0, "the bin, e.g. 47 for first_two")
	fs.StringVar(&sel.LastTwo, "last-two", drill.LastTwoScale, "reading of the last_two test, as in the scan: scale (1234.56 -> 56) or units (1234.56 -> 34)")
	fs.StringVar(&sel.Amount, "amount", "", "an exact amount, e.g. 1847.23")
	fs.StringVar(&sel.Range, "range", "", "FROM:TO, records with FROM <= |amount| < TO")
	fs.StringArrayVar(&sel.Segments, "segment", nil, "COLUMN=VALUE, e.g. counterparty=V00123 (repeatable)")
	fs.StringVar(&o.dup, "dup", "", "a duplicate group RUN:TEST:GROUP from leadline dups, e.g. 7:same_amount:3")
	fs.StringVar(&sel.Where, "where", "", `filter on the ledger's columns, e.g. "entity = 'KELP'" (read-only)`)
	fs.StringVar(&sel.Signs, "signs", population.DefaultSigns, "amounts kept: positive, negative (as absolute values) or both")
	fs.StringVar(&sel.Min, "min", population.DefaultMin, "smallest absolute amount kept")
	fs.StringVar(&o.records.Sort, "sort", "", "sort the records by a column (default: file order)")
	fs.BoolVar(&o.records.Desc, "desc", false, "sort in descending order")
	fs.IntVar(&o.records.Limit, "limit", drill.DefaultLimit, "records (or groups) shown")
	fs.StringVar(&o.group.Column, "group", "", "one row per value of this column: counterparty, user_id, account, entity, any original column, file_name, year, quarter, month")
	fs.IntVar(&o.group.Top, "top-amounts", drill.DefaultTopAmounts, "repeated amounts listed per group")
	fs.StringVar(&o.out, "out", "", "write every record (or group) to a .csv, .json or .parquet file")
	checkSample := o.sample.add(fs)
	f.add(fs)
	return func(args []string) (drillOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) > 0 {
			return o, fmt.Errorf("unexpected argument %q (see --help)", args[0])
		}
		if fs.Changed("bin") {
			b := bin
			sel.Bin = &b
		}
		if o.records.Limit <= 0 {
			return o, fmt.Errorf("--limit %d: give 1 or more", o.records.Limit)
		}
		if o.group.Top <= 0 {
			return o, fmt.Errorf("--top-amounts %d: give 1 or more", o.group.Top)
		}
		if o.out != "" {
			if _, err := drill.ExportFormat(o.out); err != nil {
				return o, err
			}
		}
		if o.dup != "" && (fs.Changed("signs") || fs.Changed("min")) {
			return o, fmt.Errorf("--dup: a duplicate group keeps the --signs and --min of its run; narrow it with --where or --segment instead")
		}
		// Defaults apply unless the flag was given: a negative
		// --amount then selects negative amounts by itself.
		if !fs.Changed("signs") {
			sel.Signs = ""
		}
		if !fs.Changed("min") {
			sel.Min = ""
		}
		o.limitGiven = fs.Changed("limit")
		o.format = f.value
		if err := checkSample(&o); err != nil {
			return o, err
		}
		return o, nil
	}
}

// runDrill builds the selection (within a duplicate group's run for
// --dup) and prints or exports its records or groups.
func runDrill(ctx context.Context, e *env, o drillOptions) error {
	sel := o.sel
	ws, err := e.openWorkspace(ctx, o.db, o.sample.Method == "")
	if err != nil {
		return err
	}
	defer ws.Close()
	var dupRecords int64
	var dupNarrowed bool
	if o.dup != "" {
		ref, err := duplicates.ParseRef(o.dup)
		if err != nil {
			return err
		}
		g, grp, err := drill.DuplicateGroup(ctx, ws, ref)
		if err != nil {
			return err
		}
		// The run's population and the group's key, narrowed by
		// any further selection given here.
		userWhere := strings.TrimSpace(sel.Where)
		sel.Spec = g.Spec
		if runWhere := strings.TrimSpace(g.Where); userWhere != "" && runWhere != "" {
			sel.Where = "(" + runWhere + ") AND (" + userWhere + ")"
		} else if userWhere != "" {
			sel.Where = userWhere
		}
		dupRecords = grp.Records
		dupNarrowed = userWhere != "" || len(sel.Segments) > 0 || sel.Amount != "" || sel.Range != "" || sel.Bin != nil
		sel.Extra = append(g.Extra, sel.Extra...)
		sel.Described = append(g.Described, sel.Described...)
	}
	b, err := drill.Build(ctx, ws, sel)
	if err != nil {
		return err
	}
	sum, err := drill.Summarize(ctx, ws, b)
	if err != nil {
		return err
	}
	if o.dup != "" && !dupNarrowed && sum.Records != dupRecords {
		fmt.Fprintf(e.stderr, "note: the duplicates run counted %d records in this group; the ledger now holds %d (files loaded or replaced since the run?)\n", dupRecords, sum.Records)
	}
	if sum.Records == 0 {
		return drill.NoRecordsError(b)
	}
	if o.sample.Method != "" {
		return runDrillSample(ctx, e, o, ws, b, sum)
	}
	if o.out != "" {
		return drillExport(ctx, e.stdout, o.format, o.limitGiven, b, sum, o.records, o.group, o.out, ws)
	}
	if o.group.Column != "" {
		gopt := o.group
		gopt.Limit = o.records.Limit
		res, err := drill.Group(ctx, ws, b, gopt)
		if err != nil {
			return err
		}
		return printDrillGroups(e.stdout, o.format, b, sum, res)
	}
	t, more, err := drill.Records(ctx, ws, b, o.records)
	if err != nil {
		return err
	}
	return printDrillRecords(e.stdout, o.format, b, sum, t, more)
}

// drillJSON is the document drill --format json prints (docs/json.md).
type drillJSON struct {
	Selection   []string         `json:"selection"`
	Records     int64            `json:"records"`
	Total       string           `json:"total"`
	GroupBy     string           `json:"group_by,omitempty"`
	GroupsTotal *int64           `json:"groups_total,omitempty"`
	Shown       int              `json:"shown"`
	More        bool             `json:"more"`
	Columns     []string         `json:"columns"`
	Rows        []map[string]any `json:"rows"`
	Out         string           `json:"out,omitempty"`
	OutFormat   string           `json:"out_format,omitempty"`
	// A sample drawn with --sample: how, and the run it is stored as.
	Sample    *drill.SampleDrawn `json:"sample,omitempty"`
	Companion string             `json:"sample_file,omitempty"`
	RunID     int64              `json:"run_id,omitempty"`
}

func printDrillRecords(w io.Writer, format string, b *drill.Built, sum drill.Summary, t *tabular.Table, more bool) error {
	switch format {
	case "json":
		return writeJSON(w, drillJSON{Selection: b.Description, Records: sum.Records, Total: sum.Total,
			Shown: len(t.Rows), More: more, Columns: t.Columns, Rows: t.Records()})
	case "csv":
		return t.WriteCSV(w)
	}
	fmt.Fprintf(w, "Selection: %s\n", strings.Join(b.Description, "; "))
	fmt.Fprintf(w, "%s records, total %s", numfmt.Int(sum.Records), numfmt.Money(sum.Total))
	if more {
		fmt.Fprintf(w, " (showing the first %d: --limit for more, --out FILE for all)", len(t.Rows))
	}
	fmt.Fprint(w, "\n\n")
	dropped := drill.DropEmptyColumns(t)
	if err := t.WriteText(w, 40); err != nil {
		return err
	}
	if len(dropped) > 0 {
		fmt.Fprintf(w, "\n(empty in every row shown, not printed: %s)\n", strings.Join(dropped, ", "))
	}
	return nil
}

func printDrillGroups(w io.Writer, format string, b *drill.Built, sum drill.Summary, res *drill.GroupResult) error {
	more := res.GroupsTotal > int64(len(res.Table.Rows))
	switch format {
	case "json":
		g := res.GroupsTotal
		return writeJSON(w, drillJSON{Selection: b.Description, Records: sum.Records, Total: sum.Total, GroupBy: res.Column,
			GroupsTotal: &g, Shown: len(res.Table.Rows), More: more, Columns: res.Table.Columns, Rows: res.Rows})
	case "csv":
		return res.Table.WriteCSV(w)
	}
	fmt.Fprintf(w, "Selection: %s\n", strings.Join(b.Description, "; "))
	fmt.Fprintf(w, "%s records, total %s, in %s groups by %s", numfmt.Int(sum.Records), numfmt.Money(sum.Total), numfmt.Int(res.GroupsTotal), res.Column)
	if more {
		fmt.Fprintf(w, " (showing the %d with most records: --limit for more, --out FILE for all)", len(res.Table.Rows))
	}
	fmt.Fprint(w, "\n\n")
	for _, r := range res.Table.Rows {
		if r[0] == nil {
			r[0] = "(blank)"
		}
		// The terminal's number format; CSV and JSON keep the plain values.
		for i, v := range r[1:] {
			switch x := v.(type) {
			case int64:
				r[i+1] = numfmt.Int(x)
			case string:
				r[i+1] = numfmt.Money(x)
			}
		}
	}
	return res.Table.WriteText(w, 60)
}

func drillExport(ctx context.Context, w io.Writer, format string, limitGiven bool, b *drill.Built, sum drill.Summary,
	ro drill.RecordOptions, g drill.GroupOptions, out string, ws *workspace.Workspace) error {
	outFormat, _ := drill.ExportFormat(out)
	if err := ws.CheckOutputFile(ctx, out); err != nil {
		return err
	}
	if !limitGiven {
		ro.Limit = 0 // every record
	}
	what := "records"
	n := sum.Records
	var err error
	if g.Column != "" {
		what = "groups"
		if limitGiven {
			g.Limit = ro.Limit
		}
		err = drill.ExportGroups(ctx, ws, b, g, out)
		n = -1
	} else {
		if limitGiven && int64(ro.Limit) < n {
			n = int64(ro.Limit)
		}
		err = drill.Export(ctx, ws, b, ro, out)
	}
	if err != nil {
		return err
	}
	if format == "json" {
		return writeJSON(w, drillJSON{Selection: b.Description, Records: sum.Records, Total: sum.Total, GroupBy: g.Column,
			Columns: []string{}, Rows: []map[string]any{}, Out: out, OutFormat: outFormat})
	}
	if n >= 0 {
		fmt.Fprintf(w, "Wrote %s %s (of %s selected, total %s) to %s\n", numfmt.Int(n), what, numfmt.Int(sum.Records), sum.Total, out)
	} else {
		fmt.Fprintf(w, "Wrote the %s by %s of %s records (total %s) to %s\n", what, g.Column, numfmt.Int(sum.Records), sum.Total, out)
	}
	fmt.Fprintf(w, "Selection: %s\n", strings.Join(b.Description, "; "))
	return nil
}
