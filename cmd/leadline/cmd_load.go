package main

import (
	"context"
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "load",
		summary: "load CSV, TSV, Parquet or XLSX extracts into the workspace and prove completeness",
		usage: `Usage: leadline load [options] FILE|PATTERN...

Loads every file in one transaction: if any file fails, the workspace is left
exactly as it was. Every record read is either loaded or stored in the
workspace's rejects table with its file, line and reason, so that
rows read = rows loaded + rows rejected for every file.

Columns named like the canonical columns (amount, entity, account,
counterparty, doc_id, line_id, posted, user_id, source, descr, currency)
map themselves; map others with --map. Amounts are parsed exactly into
DECIMAL: thousands separators, currency symbols and ISO codes, (parentheses),
trailing minus, CR/DR suffixes and scientific notation are understood.

After the load, the journal checks count documents that do not sum to zero,
postings outside --period and repeated line keys (entity, doc_id, line_id)
over the whole workspace; --control reconciles the ledger against the
client's totals or trial balance (see leadline reconcile --help), and a
difference makes the command fail unless --accept-differences is given.
Control totals are per currency, never summed across currencies. Without a
currency column, a file whose every amount names its currency (EUR 12.00,
$12.00) takes each row's currency from its marker; one in which some
amounts name a currency and others none is refused (--map currency=COLUMN,
or split the file). A debit/credit extract reports each side's count and
total, the rows with both sides filled (listed; all in the both_sides
table) and that debits - credits = net, per currency.

Examples:
  leadline load ledger_2025.csv
  leadline load --db acme.duckdb 'extracts/*.parquet'
  leadline load --map amount=Betrag --map entity=Buchungskreis --decimal-comma --delimiter ';' gl.csv
  leadline load --debit Debit --credit Credit --date-format '%d/%m/%Y' journal.csv
  leadline load --sheet Journal ledger.xlsx  # one sheet of a workbook, by name or position
  leadline load --format json ledger.csv    # per file rows_read, rows_loaded, rows_rejected, sha256
  leadline load --period 2025-01-01..2025-12-31 --control tb_2025.csv gl.csv   # reconcile to the trial balance
  leadline load --in-place --db big.duckdb 'lake/2025-*.parquet'   # no copy: the ledger is a view over the files

--in-place (Parquet only) records each file's path, size, modification
time, SHA-256 and footer row count, proves completeness in one pass over
the amount and date columns, and makes the ledger a view applying the same
amount rules as a copy. Every later command checks the files (size and
time; SHA-256 when those differ; leadline verify hashes them all) and
refuses to run on a changed or missing one.`,
		flags: thin(loadFlags, runLoad),
	})
}

// loadOptions are what load's flags ask for.
type loadOptions struct {
	db     dbFlags
	format string
	files  []string // files and patterns, as given
	load   load.Options
	checks loadChecks // --period and --control
}

// loadFlags registers load's flags; the function it returns checks them.
func loadFlags(fs *pflag.FlagSet) func(args []string) (loadOptions, error) {
	var o loadOptions
	var f formatFlag
	var maps []string
	var acceptRejects bool
	o.db.add(fs)
	fs.StringArrayVar(&maps, "map", nil, "map a canonical column to a file column, CANONICAL=COLUMN (repeatable)")
	fs.StringVar(&o.load.Debit, "debit", "", "debit column of a two-column ledger (amount = debit - credit)")
	fs.StringVar(&o.load.Credit, "credit", "", "credit column of a two-column ledger")
	fs.BoolVar(&o.load.DecimalComma, "decimal-comma", false, "amounts write the decimal mark as a comma (1.234,56)")
	fs.BoolVar(&o.load.DecimalPoint, "decimal-point", false, "amounts write the decimal mark as a point (1,234.56): settles amounts such as 1.234 that read both ways")
	fs.IntVar(&o.load.Scale, "scale", 2, "decimal places kept in amounts (fixed by a workspace's first load)")
	fs.IntVar(&o.load.Precision, "precision", 18, "total digits of amounts: 18 (fast) or 38")
	fs.StringVar(&o.load.Delimiter, "delimiter", "", `CSV field delimiter (default: guessed from the header among , ; tab |; "\t" for tab)`)
	fs.StringVar(&o.load.Encoding, "encoding", "", "CSV text encoding (default utf-8, or the byte-order mark): "+load.EncodingNames())
	fs.StringVar(&o.load.TimeZone, "time-zone", "", "zone in which Parquet timestamps with a time zone become posting dates, e.g. Europe/Berlin (default UTC)")
	fs.StringVar(&o.load.DateFormat, "date-format", "", "strptime format of the posted column, e.g. %d/%m/%Y (default: YYYY-MM-DD)")
	fs.BoolVar(&o.load.InPlace, "in-place", false, "register Parquet files where they lie instead of copying their rows: the ledger reads them, and every later command refuses to run if one changed")
	fs.BoolVar(&o.load.Replace, "replace", false, "load a file again in place of its earlier load (same content, or the same path with new content), in one transaction")
	fs.StringVar(&o.load.Sheet, "sheet", "", "XLSX: the sheet to read, by name or 1-based position (default: the first sheet holding a value)")
	fs.StringVar(&o.load.MaxRejects, "max-rejects", "", "largest share of a file's rows that may be rejected, e.g. 5% (default "+load.DefaultMaxRejects+"); more fails the load")
	fs.BoolVar(&acceptRejects, "accept-rejects", false, "accept any share of rejected rows (same as --max-rejects 100%)")
	o.checks.add(fs)
	f.add(fs)
	return func(args []string) (loadOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		o.format = f.value
		if len(args) == 0 {
			return o, fmt.Errorf("give one or more files or patterns to load (see --help)")
		}
		o.files = args
		m, err := parseMaps(maps)
		if err != nil {
			return o, err
		}
		o.load.Map = m
		if acceptRejects {
			if o.load.MaxRejects != "" {
				return o, fmt.Errorf("give --max-rejects or --accept-rejects, not both")
			}
			o.load.MaxRejects = "100%"
		}
		return o, o.checks.check()
	}
}

// runLoad reads the control file, loads the files into the workspace
// (created when there is none) and runs the checks on the load.
func runLoad(ctx context.Context, e *env, o loadOptions) error {
	if err := o.checks.readControl(); err != nil {
		return err
	}
	ws, err := e.createWorkspace(ctx, o.db)
	if err != nil {
		return err
	}
	defer ws.Close()
	rep, err := load.Load(ctx, ws, o.files, o.load)
	if err != nil {
		return err
	}
	return o.checks.finish(ctx, ws, e.stdout, o.format, rep)
}

func parseMaps(maps []string) (map[string]string, error) {
	m := map[string]string{}
	for _, s := range maps {
		k, v, ok := strings.Cut(s, "=")
		k = strings.ToLower(strings.TrimSpace(k))
		if !ok || k == "" || strings.TrimSpace(v) == "" {
			return nil, fmt.Errorf("--map %q: write CANONICAL=COLUMN, e.g. --map amount=Betrag", s)
		}
		if err := load.CheckCanonical(k, strings.TrimSpace(v)); err != nil {
			return nil, err
		}
		m[k] = strings.TrimSpace(v)
	}
	return m, nil
}

func printLoad(w io.Writer, format string, rep *load.Report) error {
	if format == "json" {
		return writeJSON(w, rep)
	}
	files := &tabular.Table{Name: "files", Columns: []string{"file", "format", "bytes", "sha256", "rows_read", "rows_loaded", "rows_rejected", "sum_positive", "sum_negative", "net"}}
	for _, f := range rep.Files {
		pos, neg, net := f.Positive, f.Negative, f.Net
		if len(f.Currencies) > 1 && format != "csv" {
			pos, neg, net = "per currency", "below", ""
		}
		files.Add(f.Name, f.Format, f.SizeBytes, f.SHA256[:16]+"…", f.RowsRead, f.RowsLoaded, f.RowsRejected, pos, neg, net)
	}
	if format == "csv" {
		for i := range files.Rows {
			files.Rows[i][3] = rep.Files[i].SHA256
		}
		return files.WriteCSV(w)
	}
	if len(rep.Files) > 0 && rep.Files[0].Mode == load.ModeInPlace {
		fmt.Fprintf(w, "Registered in place in %s (load %d, amounts as %s) in %.1fs: no rows were copied; the ledger reads these files where they lie, and every command refuses to run if one changes\n\n", rep.Workspace, rep.LoadID, rep.AmountType, rep.Seconds)
	} else {
		fmt.Fprintf(w, "Loaded into %s (load %d, amounts as %s) in %.1fs\n\n", rep.Workspace, rep.LoadID, rep.AmountType, rep.Seconds)
	}
	if err := files.WriteText(w, 0); err != nil {
		return err
	}
	fmt.Fprintf(w, "\nTotal: %d rows read = %d loaded + %d rejected", rep.RowsRead, rep.RowsLoaded, rep.RowsRejected)
	if rep.RowsRounded > 0 {
		fmt.Fprintf(w, "; %d amounts rounded to the scale", rep.RowsRounded)
	}
	fmt.Fprintln(w)
	if err := printFileCurrencies(w, rep); err != nil {
		return err
	}
	for _, f := range rep.Files {
		fmt.Fprintf(w, "\n%s: mapping %s", f.Name, f.Mapping.Describe())
		if f.Format == "csv" {
			fmt.Fprintf(w, "; delimiter %q, %s", f.Delimiter, f.Encoding)
		}
		fmt.Fprintln(w)
		printSheet(w, f.Sheet)
		for _, warn := range f.Warnings {
			fmt.Fprintf(w, "  note: %s\n", warn)
		}
		for _, r := range f.RejectReasons {
			first := ""
			if r.FirstLine != nil {
				first = fmt.Sprintf(", first at line %d", *r.FirstLine)
			}
			fmt.Fprintf(w, "  rejected %d: %s%s\n", r.Rows, r.Reason, first)
		}
		printBothSides(w, f)
	}
	if rep.RowsRejected > 0 {
		fmt.Fprintln(w, "\nEvery rejected row is in the workspace: leadline sql \"SELECT * FROM rejects ORDER BY file_id, line\"")
	}
	ent := &tabular.Table{Columns: []string{"entity", "rows", "sum_positive", "sum_negative", "net"}}
	if entitiesHaveCurrency(rep.Entities) {
		ent.Columns = []string{"entity", "currency", "rows", "sum_positive", "sum_negative", "net"}
	}
	for _, e := range rep.Entities {
		if len(ent.Columns) == 6 {
			ent.Add(e.Entity, load.CurrencyLabel(e.Currency), e.Rows, e.Positive, e.Negative, e.Net)
			continue
		}
		ent.Add(e.Entity, e.Rows, e.Positive, e.Negative, e.Net)
	}
	if len(ent.Columns) == 6 {
		fmt.Fprintln(w, "\nControl totals per entity and currency (whole workspace; never summed across currencies):")
		return ent.WriteText(w, 0)
	}
	fmt.Fprintln(w, "\nControl totals per entity (whole workspace):")
	return ent.WriteText(w, 0)
}
