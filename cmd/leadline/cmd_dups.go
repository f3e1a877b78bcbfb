package main

import (
	"context"
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "dups",
		summary: "duplicate tests: exact duplicates, double payments, reused documents, spread amounts, size factor",
		usage: `Usage: leadline dups [options]

Runs the duplicate tests over the amounts kept by --signs, --min and
--where (the scan's population: positive amounts of at least 10 unless told
otherwise), ranks the groups of each test and stores the run in the
workspace:

  exact        same amount, counterparty, posted date and document, twice or more
  same_amount  same amount and counterparty under two or more documents
               (possible double payments); with --window-days N only where
               two documents fall within N days of each other
  same_doc     same document and counterparty with different amounts,
               leaving out the lines of documents that net to zero (the
               lines of one balanced document differ by design)
  spread       one amount paid to or received from many counterparties
  rsf          relative size factor per counterparty: the largest amount
               divided by the second largest (Nigrini 2012)

Groups are ranked by the money at stake: the amount times its extra copies
(exact, same_amount: documents - 1, spread: counterparties - 1), or what a
document holds beyond its largest line (same_doc). Groups whose amounts are
all below --floor (100 by default; 0 lists every group) are left out, and
each test says how many groups and records it left out, and why.

A test whose columns the ledger lacks (no doc_id mapped, say) is reported as
skipped with the column it needs. Every group gets a reference RUN:TEST:GROUP
that lists its records:

  leadline drill --dup 12:same_amount:1
  leadline drill --dup 12:spread:2 --group counterparty

Groups are signals for follow-up, never proof of fraud: recurring
payments, instalments and fixed prices make innocent groups.

Examples:
  leadline dups
  leadline dups --window-days 10 --tests same_amount,exact
  leadline dups --signs both --min 0 --where "source = 'AP'" --top 50
  leadline dups --floor 1000 --tests same_amount,same_doc
  leadline dups --format json > dups.json`,
		flags: thin(dupsFlags, runDups),
	})
}

// dupsOptions are what dups' flags ask for.
type dupsOptions struct {
	db     dbFlags
	format string
	dups   duplicates.Options
}

// dupsFlags registers dups' flags; the function it returns checks them.
func dupsFlags(fs *pflag.FlagSet) func(args []string) (dupsOptions, error) {
	var o dupsOptions
	var f formatFlag
	var tests string
	o.db.add(fs)
	fs.StringVar(&tests, "tests", strings.Join(duplicates.Tests, ","), "tests to run, comma-separated")
	fs.IntVar(&o.dups.WindowDays, "window-days", 0, "same_amount: only documents within this many days of each other (0: any dates)")
	fs.IntVar(&o.dups.MinCounterparties, "min-counterparties", duplicates.DefaultMinCounterparties, "spread: counterparties an amount must reach")
	fs.IntVar(&o.dups.MinRecords, "min-records", duplicates.DefaultMinRecords, "rsf: records a counterparty must have")
	fs.IntVar(&o.dups.Top, "top", duplicates.DefaultTop, "groups kept per test, largest first (-1: all)")
	fs.StringVar(&o.dups.Floor, "floor", duplicates.DefaultFloor, "smallest absolute amount a group must reach to be listed (0: every group)")
	fs.StringVar(&o.dups.Signs, "signs", population.DefaultSigns, "amounts tested: positive, negative (as absolute values) or both")
	fs.StringVar(&o.dups.Min, "min", population.DefaultMin, "smallest absolute amount tested")
	fs.StringVar(&o.dups.Where, "where", "", `filter on the ledger's columns, e.g. "source = 'AP'" (read-only)`)
	var currency string
	fs.StringVar(&currency, "currency", "", `test the amounts of one currency, e.g. EUR ("none" for rows without one); needed when the amounts are in several`)
	f.add(fs)
	return func(args []string) (dupsOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) > 0 {
			return o, fmt.Errorf("unexpected argument %q (see --help)", args[0])
		}
		for _, t := range strings.Split(tests, ",") {
			if t = strings.TrimSpace(t); t != "" {
				o.dups.Tests = append(o.dups.Tests, t)
			}
		}
		if o.dups.Top == 0 {
			return o, fmt.Errorf("--top 0: give a number of groups, or -1 for all")
		}
		o.dups.Where = population.CurrencyWhere(o.dups.Where, currency)
		o.format = f.value
		return o, nil
	}
}

// runDups runs the duplicate tests, stores the run and prints it.
func runDups(ctx context.Context, e *env, o dupsOptions) error {
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	res, err := duplicates.Run(ctx, ws, o.dups)
	if err != nil {
		return err
	}
	if err := duplicates.Save(ctx, ws, res); err != nil {
		return err
	}
	return printDups(e.stdout, o.format, res, o.db.path)
}

// dupsColumns are the columns of each test's table in the terminal, and of
// the one CSV table (which holds every column, docs/json.md).
var dupsColumns = map[string][]string{
	duplicates.Exact:      {"ref", "amount", "counterparty", "posted", "doc_id", "records", "excess"},
	duplicates.SameAmount: {"ref", "amount", "counterparty", "documents", "records", "first_posted", "last_posted", "excess"},
	duplicates.SameDoc:    {"ref", "doc_id", "counterparty", "amounts", "records", "min_amount", "max_amount", "first_posted", "last_posted", "excess", "total"},
	duplicates.Spread:     {"ref", "amount", "counterparties", "records", "excess", "total"},
	duplicates.RSF:        {"ref", "counterparty", "records", "largest", "second", "rsf", "total"},
}

var dupsCSVColumns = []string{"run_id", "test", "status", "group", "ref", "amount", "counterparty", "doc_id", "posted", "first_posted", "last_posted",
	"records", "documents", "amounts", "counterparties", "min_amount", "max_amount", "largest", "second", "rsf", "excess", "total"}

func dupsValue(g duplicates.Group, col string) any {
	switch col {
	case "ref":
		return g.Ref
	case "group":
		return g.ID
	case "amount":
		return g.Amount
	case "counterparty":
		return g.Counterparty
	case "doc_id":
		return g.DocID
	case "posted":
		return g.Posted
	case "first_posted":
		return g.FirstPosted
	case "last_posted":
		return g.LastPosted
	case "records":
		return g.Records
	case "documents":
		return g.Documents
	case "amounts":
		return g.Amounts
	case "counterparties":
		return g.Counterparties
	case "min_amount":
		return g.MinAmount
	case "max_amount":
		return g.MaxAmount
	case "largest":
		return g.Largest
	case "second":
		return g.Second
	case "rsf":
		if g.RSF == 0 {
			return ""
		}
		return numfmt.Stat(g.RSF)
	case "excess":
		return g.Excess
	case "total":
		return g.Total
	}
	return ""
}

// dupsLeftOut says which groups a test left out, and why.
func dupsLeftOut(tr duplicates.TestResult, floor string) string {
	var parts []string
	for _, l := range tr.LeftOut {
		why := l.Reason
		switch l.Reason {
		case duplicates.LeftBelowFloor:
			why = "with every amount below the floor of " + floor + " (--floor)"
		case duplicates.LeftBalanced:
			why = "lines of documents that net to zero"
		}
		parts = append(parts, fmt.Sprintf("%s groups (%s records) %s", numfmt.Int(l.Groups), numfmt.Int(l.Records), why))
	}
	return strings.Join(parts, "; ")
}

func printDups(w io.Writer, format string, res *duplicates.Result, dbPath string) error {
	switch format {
	case "json":
		return writeJSON(w, res)
	case "csv":
		t := &tabular.Table{Columns: dupsCSVColumns}
		for _, tr := range res.Tests {
			if tr.Status != "ok" || len(tr.Groups) == 0 {
				status := tr.Status
				if tr.Reason != "" {
					status += ": " + tr.Reason
				}
				row := make([]any, len(dupsCSVColumns))
				row[0], row[1], row[2] = res.RunID, tr.Test, status
				t.Add(row...)
				continue
			}
			for _, g := range tr.Groups {
				row := []any{res.RunID, tr.Test, tr.Status}
				for _, c := range dupsCSVColumns[3:] {
					v := dupsValue(g, c)
					if c == "rsf" && g.RSF != 0 {
						v = g.RSF
					}
					if n, ok := v.(int64); ok && n == 0 && c != "records" {
						v = ""
					}
					row = append(row, v)
				}
				t.Add(row...)
			}
		}
		return t.WriteCSV(w)
	}
	o := res.Options
	signs := map[string]string{"positive": "positive amounts", "negative": "negative amounts", "both": "amounts of either sign"}[o.Signs]
	pop := fmt.Sprintf("%s, |amount| >= %s", signs, o.Min)
	if strings.TrimSpace(o.Where) != "" {
		pop += ", where " + strings.TrimSpace(o.Where)
	}
	fmt.Fprintf(w, "Duplicate tests (run %d) over %s records (%s) in %.1fs\n", res.RunID, numfmt.Int(res.RecordsTested), pop, res.Seconds)
	firstRef := ""
	for _, tr := range res.Tests {
		fmt.Fprintf(w, "\n%s [%s]\n", tr.Title, tr.Test)
		if tr.Status != "ok" {
			fmt.Fprintf(w, "  %s: %s\n", tr.Status, tr.Reason)
			continue
		}
		if left := dupsLeftOut(tr, o.Floor); left != "" {
			fmt.Fprintf(w, "  left out: %s\n", left)
		}
		if tr.GroupsTotal == 0 {
			fmt.Fprintln(w, "  no groups")
			continue
		}
		shown := ""
		if tr.GroupsTotal > int64(len(tr.Groups)) {
			shown = fmt.Sprintf("; the first %d shown (--top for more)", len(tr.Groups))
		}
		extra := ""
		if tr.Test == duplicates.SameAmount && o.WindowDays > 0 {
			extra = fmt.Sprintf(", documents within %d days", o.WindowDays)
		}
		fmt.Fprintf(w, "  %s groups holding %s records%s; ranked by %s%s\n\n", numfmt.Int(tr.GroupsTotal), numfmt.Int(tr.RecordsTotal), extra, tr.Ranking, shown)
		t := &tabular.Table{Columns: dupsColumns[tr.Test]}
		for _, g := range tr.Groups {
			row := make([]any, 0, len(t.Columns))
			for _, c := range t.Columns {
				row = append(row, dupsValue(g, c))
			}
			t.Add(row...)
			if firstRef == "" {
				firstRef = g.Ref
			}
		}
		var b strings.Builder
		if err := t.WriteText(&b, 40); err != nil {
			return err
		}
		for _, line := range strings.SplitAfter(strings.TrimRight(b.String(), "\n"), "\n") {
			fmt.Fprint(w, "  "+line)
		}
		fmt.Fprintln(w)
	}
	if firstRef != "" {
		dbArg := ""
		if dbPath != "leadline.duckdb" {
			dbArg = "--db " + dbPath + " "
		}
		fmt.Fprintf(w, "\nList a group's records: leadline drill %s--dup %s (add --group user_id to see who posted them)\n", dbArg, firstRef)
	}
	fmt.Fprintln(w, res.Note)
	return nil
}
