package pack

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
)

// StarterOptions name the starter pack.
type StarterOptions struct {
	Name   string // default: the sample's file name
	Client string // default: "client to be named"
	Period string
}

// Starter writes a starter pack for a sample file: the mapping leadline
// suggests for its columns (load.Inspect), the delimiter, encoding,
// decimal mark and date format it finds, and every option of the pack
// present with a comment, ready to edit. packPath is where the pack will
// be written: the sample's path in the pack is relative to its folder.
func Starter(ctx context.Context, sample, packPath string, o StarterOptions) ([]byte, error) {
	mem, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		return nil, err
	}
	defer mem.Close()
	in, err := load.Inspect(ctx, mem, sample, load.Options{}, 50)
	if err != nil {
		return nil, err
	}
	absPack, err := filepath.Abs(packPath)
	if err != nil {
		return nil, err
	}
	rel, err := filepath.Rel(filepath.Dir(absPack), in.Path)
	if err != nil {
		rel = in.Path
	}
	rel = filepath.ToSlash(rel)
	base := strings.TrimSuffix(filepath.Base(in.Path), filepath.Ext(in.Path))
	base = strings.TrimSuffix(base, ".csv")
	if o.Name == "" {
		o.Name = base
	}
	if o.Client == "" {
		o.Client = "client to be named"
	}
	mapped := in.Mapping.Columns
	has := func(c string) bool { return mapped[c] != "" }

	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	w("# A leadline pack, started by `leadline pack init` from %s.", filepath.Base(in.Path))
	w("# Review every line: the column mapping and the parsing rules below are")
	w("# suggestions from the file's header and a sample of its rows.")
	w("#")
	w("# Check it:  leadline pack check %s", filepath.Base(packPath))
	w("# Run it:    leadline run %s --out results", filepath.Base(packPath))
	w("#")
	w("# Relative paths start at this file's folder. docs/packs.md explains every key.")
	w("")
	w("[pack]")
	w("name = %s", q(o.Name))
	w("client = %s", q(o.Client))
	w("period = %s                # what the extract covers, e.g. \"2025-01-01..2025-12-31\": postings outside it are counted", q(o.Period))
	w("description = \"\"")
	w("workspace = %s  # the DuckDB workspace, beside this file", q(strings.TrimSuffix(filepath.Base(packPath), filepath.Ext(packPath))+".duckdb"))
	w("scale = 2                 # decimal places of amounts (1 to 6)")
	w("precision = 18            # total digits: 18 (fast) or 38")
	w("csv_formulas = \"quote\"    # CSV text a spreadsheet would run (=, +, -, @) gets a leading ': \"quote\" or \"keep\"")
	w("")
	w("[[source]]")
	w("name = %s", q(base))
	w("files = [%s]  # files or patterns, e.g. \"extracts/*.csv\"", q(rel))
	delim := in.Delimiter
	if delim == "\t" {
		delim = `\t`
	}
	w("delimiter = %s           # found in the header; \"\" to guess each time", q(delim))
	enc := in.Encoding
	w("encoding = %s       # %s", q(enc), in.EncodingWhy)
	starterSheet(w, in)
	w("# in_place = true        # Parquet only: register the files where they lie instead of copying their rows (leadline load --help)")
	dc := in.AmountCheck != nil && in.AmountCheck.SuggestDecComma
	if in.AmountCheck != nil {
		w("decimal_comma = %v     # of %d sampled amounts, %d read with a decimal point, %d with a decimal comma",
			dc, in.AmountCheck.Sampled, in.AmountCheck.ParsePoint, in.AmountCheck.ParseComma)
	} else {
		w("decimal_comma = %v     # true when amounts read 1.234,56", dc)
	}
	w("# decimal_point = true  # settles amounts such as 1.234 that read both ways, as 1.234 (decimal_comma = true reads 1234)")
	df, dfNote := in.DateFormat, in.DateWhy
	if dfNote == "" {
		dfNote = "strptime format of the posting date, e.g. \"%d/%m/%Y\"; \"\" for YYYY-MM-DD"
	}
	w("date_format = %s        # %s", q(df), dfNote)
	w("# time_zone = \"UTC\"     # zone in which Parquet timestamps with a time zone become posting dates")
	w("# max_rejects = \"1%%\"    # largest share of a file's rows that may be rejected; more fails the load")
	if in.Mapping.Debit != "" {
		w("debit = %s   # amount = debit - credit", q(in.Mapping.Debit))
		w("credit = %s", q(in.Mapping.Credit))
	} else {
		w("# debit = \"\"            # for a two-column ledger: amount = debit - credit")
		w("# credit = \"\"")
	}
	w("")
	w("[source.columns]          # canonical column = the file's column")
	for _, c := range load.Canonical {
		if c == "amount" && in.Mapping.Debit != "" {
			w("# amount: from debit and credit above")
			continue
		}
		if n := mapped[c]; n != "" {
			note := ""
			if cands := in.Candidates[c]; len(cands) > 1 {
				note = "  # other candidates: " + strings.Join(cands[1:], ", ")
			}
			w("%s = %s%s", c, q(n), note)
			continue
		}
		note := "not found in the header"
		if c == "amount" {
			note = "REQUIRED: name the amount column (or give debit and credit)"
		}
		w("# %s = \"\"    # %s", c, note)
	}
	w("")
	w("# The client's own totals to reconcile the ledger against (CSV): keys entity,")
	w("# account and/or currency; totals rows, debit, credit, net, or a trial balance's")
	w("# opening and closing. Any difference fails the run unless accept = true.")
	w("# [control]")
	w("# file = \"trial_balance.csv\"")
	w("# accept = false")
	w("")
	w("# Named predicates over the ledger's columns (SQL, checked read-only), used")
	w("# by [population] or a step's own filter = \"name\".")
	w("[filters]")
	if has("source") {
		w("# without_fee_billing = \"source <> 'FEE'\"")
	}
	w("# large = \"abs(amount) >= 10000\"")
	w("")
	w("# Who is tested unless a step says otherwise.")
	w("[population]")
	w("filter = \"none\"           # a name from [filters], or \"none\"")
	w("signs = \"positive\"        # positive, negative or both")
	w("min_amount = 10           # smallest |amount| tested")
	w("")
	var segs []string
	for _, c := range []string{"entity", "source", "user_id"} {
		if has(c) {
			segs = append(segs, q(c))
		}
	}
	w("# The digit battery (Benford's law).")
	w("[battery]")
	w("enabled = true")
	w("tests = [\"first\", \"second\", \"first_two\", \"first_three\", \"last_two\", \"summation\", \"second_order\", \"duplication\"]")
	w("segments = [%s]  # each on its own; \"entity+user_id\" for a combination; also \"year\", \"quarter\", \"month\" or any original column", strings.Join(segs, ", "))
	w("min_segment_rows = 1000   # smaller segments are listed, not ranked")
	w("duplication_top = 20      # number duplication: the most frequent exact amounts listed")
	w("last_two = \"scale\"        # last-two digits as written (1234.56 -> 56); \"units\" for the whole-currency part")
	w("# filter = \"\"  signs = \"\"  min_amount = 10   # override [population] for this step")
	w("")
	w("# Amounts piled up just below approval limits.")
	w("[limits]")
	w("enabled = true")
	w("values = []               # the client's approval limits, e.g. [1000, 5000, 10000]; [] scans round values")
	w("width = 0.10              # compare [T(1-w), T) with [T, T(1+w))")
	by := ""
	if has("entity") {
		by = q("entity")
	}
	w("by = [%s]                 # also per segment (a combination of these columns)", by)
	w("min_count = 30            # fewest amounts in a band for a limit to be tested")
	w("")
	w("# Which amount ranges stand out from their neighbours.")
	w("[ranges]")
	w("enabled = true")
	w("per_decade = 20           # logarithmic bands; or width = 500 for fixed-width bands (not both)")
	w("# from = 0                # first band's start; default: the smallest amount (or 0 for fixed bands)")
	w("# to = 100000             # last band's end; default: the largest amount")
	w("# by = [%s]               # also per segment, on the same bands (a combination of these columns)", by)
	w("# min_segment = 1000       # with by: fewest tested amounts for a segment to be scored")
	w("")
	w("# Duplicate tests (a test whose columns the ledger lacks is skipped).")
	w("[duplicates]")
	w("enabled = true")
	w("tests = [\"exact\", \"same_amount\", \"same_doc\", \"spread\", \"rsf\"]")
	w("window_days = 0           # same_amount: documents within N days of each other; 0 for any dates")
	w("top = 20                  # groups kept per test")
	w("min_counterparties = 3    # spread: counterparties an amount must reach")
	w("min_records = 3           # rsf: records a counterparty must have")
	w("floor = 100               # groups whose amounts are all below this are left out (and counted); 0 keeps every group")
	w("")
	group := ""
	for _, c := range []string{"user_id", "counterparty", "account"} {
		if has(c) {
			group = c
			break
		}
	}
	w("# Drill-down extracts: the records behind the top results of a step.")
	w("[[extract]]")
	w("name = \"first_two_bins\"")
	w("from = \"battery\"")
	w("test = \"first_two\"        # the top flagged bins of this digit test")
	w("top = 4")
	if group != "" {
		w("group_by = %s", q(group))
	}
	w("max_rows = 1000")
	w("")
	w("[[extract]]")
	w("name = \"limit_bands\"")
	w("from = \"limits\"           # battery, limits, ranges or duplicates")
	w("# test = \"first_two\"      # for extracts from battery (a digit test) or duplicates (a duplicate test)")
	w("top = 1                   # the top flagged results")
	if group != "" {
		w("group_by = %s      # also a table of the records grouped by this column", q(group))
	} else {
		w("# group_by = \"user_id\"   # also a table of the records grouped by this column")
	}
	w("max_rows = 1000            # records in results.json and the report; tables/ hold every record")
	w("# sample = \"monetary\"      # a sample to vouch: \"random\" (simple random) or \"monetary\" (by |amount|)")
	w("# sample_size = 25")
	w("# seed = 1                 # the same seed draws the same sample again")
	w("")
	w("# Extra checks: one read-only SELECT each over ledger, files and rejects;")
	w("# values are bound as $name from [check.params], never pasted into the SQL.")
	cols := func(list ...string) string {
		var out []string
		for _, c := range list {
			if has(c) {
				out = append(out, c)
			}
		}
		return strings.Join(append(out, "amount"), ", ")
	}
	order := "ORDER BY abs(amount) DESC, row_id"
	if has("posted") {
		w("[[check]]")
		w("name = \"weekend_postings\"")
		w("title = \"Entries posted on a Saturday or Sunday\"")
		w("sql = \"\"\"")
		w("SELECT %s, dayname(posted) AS weekday", cols("doc_id", "line_id", "entity", "posted", "user_id", "account", "counterparty"))
		w("FROM ledger")
		w("WHERE dayofweek(posted) IN (0, 6)")
		w("ORDER BY posted, row_id")
		w("\"\"\"")
		w("")
	}
	w("[[check]]")
	w("name = \"round_amounts\"")
	w("title = \"Entries of round thousands, 1,000 or more\"")
	w("sql = \"\"\"")
	w("SELECT %s", cols("doc_id", "line_id", "entity", "posted", "user_id", "account", "counterparty"))
	w("FROM ledger")
	w("WHERE abs(amount) >= $min_amount AND abs(amount) %% $round_to = 0")
	w("%s", order)
	w("\"\"\"")
	w("max_rows = 100000")
	w("finding = \"rows\"          # report the row count among the key findings; \"none\" not to")
	w("[check.params]")
	w("min_amount = 1000")
	w("round_to = 1000")
	w("[check.formats]           # optional: count, money, number, proportion, percent, date, text...")
	w("amount = \"money\"")
	return []byte(b.String()), nil
}

// q quotes a TOML basic string.
func q(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch {
		case r == '"' || r == '\\':
			b.WriteByte('\\')
			b.WriteRune(r)
		case r == '\t':
			b.WriteString(`\t`)
		case r < 0x20 || r == 0x7f:
			fmt.Fprintf(&b, `\u%04X`, r)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('"')
	return b.String()
}

// starterSheet writes the sheet key: the sheet inspected, for a workbook.
func starterSheet(w func(string, ...any), in *load.Inspection) {
	if in.Sheet == nil {
		w("# sheet = \"\"            # .xlsx: the sheet to read, by name or 1-based position (default: the first holding a table)")
		return
	}
	w("sheet = %s           # of %d sheets; header at row %d (.xlsx: name or 1-based position)", q(in.Sheet.Sheet), len(in.Sheet.Sheets), in.Sheet.HeaderRow)
}
