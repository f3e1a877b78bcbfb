package load

import (
	"context"
	"fmt"
	"sort"
	"strings"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// applyExplicit puts the mapping the options give (--map, --debit,
// --credit) over the suggested one, as the load would.
func applyExplicit(in *Inspection, src *Source, opts Options) error {
	find := func(what, col string) (string, error) {
		for _, n := range src.Columns {
			if strings.EqualFold(n, col) {
				return n, nil
			}
		}
		return "", fmt.Errorf("%s: no column %q for %s; the file has: %s", src.Path, col, what, strings.Join(src.Columns, ", "))
	}
	release := func(col string) {
		for c, n := range in.Mapping.Columns {
			if n == col {
				delete(in.Mapping.Columns, c)
				delete(in.MappingWhy, c)
			}
		}
		if in.Mapping.Debit == col || in.Mapping.Credit == col {
			in.Mapping.Debit, in.Mapping.Credit = "", ""
			delete(in.MappingWhy, "debit")
			delete(in.MappingWhy, "credit")
		}
	}
	for c, col := range opts.Map {
		if err := CheckCanonical(c, col); err != nil {
			return err
		}
		n, err := find(c, col)
		if err != nil {
			return err
		}
		release(n)
		in.Mapping.Columns[c] = n
		in.MappingWhy[c] = Match{Column: n, Rule: "map", Why: "explicit --map"}
		if c == "amount" {
			in.Mapping.Debit, in.Mapping.Credit = "", ""
			delete(in.MappingWhy, "debit")
			delete(in.MappingWhy, "credit")
		}
	}
	if err := CheckDebitCredit(false, opts.Debit, opts.Credit); err != nil {
		return fmt.Errorf("%s: %w", src.Path, err)
	}
	if opts.Debit != "" {
		d, err := find("debit", opts.Debit)
		if err != nil {
			return err
		}
		c, err := find("credit", opts.Credit)
		if err != nil {
			return err
		}
		release(d)
		release(c)
		delete(in.Mapping.Columns, "amount")
		delete(in.MappingWhy, "amount")
		in.Mapping.Debit, in.Mapping.Credit = d, c
		in.MappingWhy["debit"] = Match{Column: d, Rule: "map", Why: "explicit --debit"}
		in.MappingWhy["credit"] = Match{Column: c, Rule: "map", Why: "explicit --credit"}
	}
	return nil
}

// amountMarks samples the amount column (or the debit and credit columns)
// with either decimal mark.
func amountMarks(ctx context.Context, ws *workspace.Workspace, src *Source, m Mapping, reader string) *AmountCheck {
	cols := []string{m.Columns["amount"]}
	if m.Debit != "" {
		cols = []string{m.Debit, m.Credit}
	}
	if cols[0] == "" {
		return nil
	}
	ac := &AmountCheck{Column: strings.Join(cols, " | ")}
	for _, c := range cols {
		var n, point, comma, largePoint, largeComma int64
		q := queries.Render("inspect_amount_marks", map[string]string{"column": src.ref(c), "reader": reader})
		if err := ws.Conn.QueryRowContext(ctx, q).Scan(&n, &point, &comma, &largePoint, &largeComma); err != nil {
			return nil
		}
		ac.Sampled += n
		ac.ParsePoint += point
		ac.ParseComma += comma
		if ac.SuggestDecComma = comma > point; ac.SuggestDecComma {
			ac.Large += largeComma
		} else {
			ac.Large += largePoint
		}
	}
	ac.SuggestDecComma = ac.ParseComma > ac.ParsePoint
	ac.SuggestPrecision = ac.Large > 0
	return ac
}

// dateFormats are the posting-date formats inspect tries, in order of
// preference: two-digit years first (a four-digit year never reads as
// two), day first before month first.
var dateFormats = []string{
	"%d.%m.%y", "%d/%m/%y", "%d.%m.%Y", "%d/%m/%Y", "%d-%m-%Y",
	"%m/%d/%y", "%m/%d/%Y", "%m-%d-%Y",
	"%Y%m%d", "%Y/%m/%d", "%Y.%m.%d", "%d-%b-%Y",
}

func monthFirst(f string) bool { return strings.HasPrefix(f, "%m") }

// dayMonthTwin is the day-first format with the same separators and year
// as a month-first one.
func dayMonthTwin(f string) string {
	return strings.Replace(strings.Replace(strings.Replace(f, "%m", "%X", 1), "%d", "%m", 1), "%X", "%d", 1)
}

// dateFormat finds the strptime format that reads every sampled posting
// date, "" when YYYY-MM-DD does, with the reason; warns when the sample
// cannot tell day first from month first or no format reads it all.
func dateFormat(ctx context.Context, ws *workspace.Workspace, src *Source, m Mapping, reader string, warnings *[]string) (string, string) {
	col := m.Columns["posted"]
	if col == "" {
		return "", ""
	}
	q := queries.Render("inspect_date_formats", map[string]string{"column": src.ref(col), "reader": reader})
	args := make([]any, len(dateFormats))
	for i, f := range dateFormats {
		args[i] = f
	}
	counts := make([]int64, len(dateFormats))
	var n, iso int64
	var firstOther string
	dest := []any{&n, &iso}
	for i := range counts {
		dest = append(dest, &counts[i])
	}
	dest = append(dest, &firstOther)
	if err := ws.Conn.QueryRowContext(ctx, q, args...).Scan(dest...); err != nil {
		*warnings = append(*warnings, "could not sample the posting dates: "+oneLine(err))
		return "", ""
	}
	switch {
	case n == 0:
		return "", "no posting dates in the sample"
	case iso == n:
		return "", fmt.Sprintf("all %d sampled dates read YYYY-MM-DD", n)
	}
	best := -1
	for i, c := range counts {
		if c == n {
			best = i
			break
		}
	}
	if best < 0 {
		for i, c := range counts {
			if best < 0 || c > counts[best] {
				best = i
			}
		}
		if counts[best] == 0 || counts[best] < iso {
			*warnings = append(*warnings, fmt.Sprintf("no date format reads the sampled posting dates (e.g. %q); give --date-format", firstOther))
			return "", fmt.Sprintf("%d of %d sampled dates read YYYY-MM-DD; no other format reads more", iso, n)
		}
		*warnings = append(*warnings, fmt.Sprintf("no one date format reads all %d sampled posting dates: %s reads %d (e.g. not %q); those rows would be rejected", n, dateFormats[best], counts[best], firstOther))
		return dateFormats[best], fmt.Sprintf("reads %d of %d sampled dates, more than any other format", counts[best], n)
	}
	f := dateFormats[best]
	why := fmt.Sprintf("reads all %d sampled dates", n)
	if strings.HasPrefix(f, "%d") {
		twin := dayMonthTwin(f)
		why += ", day first"
		for i, g := range dateFormats {
			switch {
			case g != twin:
			case counts[i] == n:
				*warnings = append(*warnings, fmt.Sprintf("CHECK the date format: every sampled posting date reads both day first (%s) and month first (%s); day first assumed", f, twin))
				why += "; month first reads them too (no day above 12), so day first is assumed"
			default:
				why += fmt.Sprintf(" (month first, %s, does not read %d of them)", twin, n-counts[i])
			}
		}
	} else if monthFirst(f) {
		why += fmt.Sprintf(", month first (day first, %s, does not read them all)", dayMonthTwin(f))
	}
	return f, why
}

// separatorCheck runs the load's own decimal-mark check (checkSeparators)
// on a sample of the file, under the suggested mark: the message the load
// would refuse the file with, "" when it would not. Amounts such as 1.234
// with nothing in the file to settle them need the analyst's word.
func separatorCheck(ctx context.Context, ws *workspace.Workspace, src *Source, m Mapping, reader string, ac *AmountCheck) string {
	if ac == nil {
		return ""
	}
	const stage = "ll_inspect_stage"
	q := queries.Render("load_stage", map[string]string{"stage": queries.QuoteIdent(stage), "reader": "(SELECT * FROM " + reader + " LIMIT 200000)"})
	if _, err := ws.Conn.ExecContext(ctx, q); err != nil {
		return ""
	}
	defer ws.Conn.ExecContext(context.WithoutCancel(ctx), queries.Render("load_drop_temp", map[string]string{"table": queries.QuoteIdent(stage)}))
	probe := *src
	probe.stage, probe.mapping = stage, m
	if err := ws.Conn.QueryRowContext(ctx, queries.Render("load_stage_first", map[string]string{"stage": queries.QuoteIdent(stage)})).Scan(&probe.stageFirst); err != nil {
		return ""
	}
	prec := 18
	if ac.SuggestPrecision {
		prec = 38
	}
	o := Options{DecimalComma: ac.SuggestDecComma, Scale: 2, Precision: prec}
	if err := checkSeparators(ctx, ws, &probe, o, 2); err != nil {
		return strings.TrimSuffix(strings.TrimPrefix(err.Error(), src.Path+": "), "; nothing was loaded")
	}
	return ""
}

// currencyMarkers says what the sampled amounts of a file without a
// currency column tell about their currency: a warning when some name one
// and others none (the load refuses such a file), a note when every one
// does (the load takes each row's currency from its marker).
func currencyMarkers(ctx context.Context, ws *workspace.Workspace, src *Source, m Mapping, reader string) string {
	if _, ok := m.Columns["currency"]; ok {
		return ""
	}
	cols := []string{m.Columns["amount"]}
	if m.Debit != "" {
		cols = []string{m.Debit, m.Credit}
	}
	var marked, unmarked int64
	codes := map[string]bool{}
	for _, c := range cols {
		if c == "" {
			continue
		}
		var mk, um int64
		var cs string
		q := queries.Render("inspect_currency_markers", map[string]string{"column": src.ref(c), "reader": reader})
		if err := ws.Conn.QueryRowContext(ctx, q).Scan(&mk, &um, &cs); err != nil {
			return ""
		}
		marked, unmarked = marked+mk, unmarked+um
		for _, code := range strings.Split(cs, ", ") {
			if code != "" {
				codes[code] = true
			}
		}
	}
	var list []string
	for c := range codes {
		list = append(list, c)
	}
	sort.Strings(list)
	switch {
	case marked == 0:
		return ""
	case unmarked == 0:
		return fmt.Sprintf("every sampled amount names its currency (%s): the load takes each row's currency from its marker", strings.Join(list, ", "))
	}
	return fmt.Sprintf("CHECK the currency: of the sampled amounts %d name a currency (%s) and %d none; the load refuses such a file unless the file has a currency column (--map currency=COLUMN); otherwise split it so that each part's amounts all carry a marker or none", marked, strings.Join(list, ", "), unmarked)
}
