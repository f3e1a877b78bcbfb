package load

import (
	"context"
	"fmt"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/field"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// The load's settings are checked here once, before anything is read: the
// command line stops at the first refusal, the pack checker reports them
// all, each under its own key. Every refusal is a *field.Error naming its
// field as the engine does (scale, precision, decimal_point, max_rejects,
// delimiter, time_zone, date_format, map, debit, in_place).

// CheckAmountType checks the amounts' decimal places and total digits
// (the load reads a scale of 0 as not given, hence 2).
func CheckAmountType(scale, precision int) error {
	if scale < 1 || scale > 6 {
		return &field.Error{Field: "scale", Value: strconv.Itoa(scale), Reason: "give 1 to 6 decimal places"}
	}
	if precision != 18 && precision != 38 {
		return &field.Error{Field: "precision", Value: strconv.Itoa(precision), Reason: fmt.Sprintf("give 18 (fast, amounts below 10^%d) or 38", 18-scale)}
	}
	return nil
}

// CheckSettings checks the settings of o that need no file: the decimal
// marks, the share of rejects, the delimiter, the time zone (a name DuckDB
// knows, hence ws) and the date format. It returns every refusal, in that
// order. (The encoding is NormalizeEncoding's, which the load reports
// with the file it reads.)
func CheckSettings(ctx context.Context, ws *workspace.Workspace, o Options) []error {
	var errs []error
	if o.DecimalComma && o.DecimalPoint {
		errs = append(errs, &field.Error{About: "decimal_point", Reason: "{decimal_comma} and {decimal_point} contradict each other: give one"})
	}
	if o.MaxRejects != "" {
		if _, err := ParseShare(o.MaxRejects); err != nil {
			errs = append(errs, &field.Error{Field: "max_rejects", Value: strconv.Quote(o.MaxRejects), Reason: "give a percentage from 0% to 100%, e.g. 5%"})
		}
	}
	if d := o.Delimiter; d != "" {
		if d == `\t` {
			d = "\t"
		}
		if len([]rune(d)) != 1 {
			errs = append(errs, &field.Error{Field: "delimiter", Value: strconv.Quote(o.Delimiter), Reason: `give a single character ("\t" for tab), or none to guess`})
		}
	}
	if o.TimeZone != "" {
		var ok bool
		if err := ws.Conn.QueryRowContext(ctx, queries.Get("load_time_zone_known"), o.TimeZone).Scan(&ok); err != nil || !ok {
			errs = append(errs, &field.Error{Field: "time_zone", Value: strconv.Quote(o.TimeZone), Reason: "not a time zone name; give one such as UTC, Europe/Berlin or America/New_York"})
		}
	}
	if o.DateFormat != "" && !strings.Contains(o.DateFormat, "%") {
		errs = append(errs, &field.Error{Field: "date_format", Value: strconv.Quote(o.DateFormat), Reason: "write a strptime format such as %d/%m/%Y"})
	}
	return errs
}

// CheckCanonical checks that c, mapped to the file's column col, is a
// canonical column.
func CheckCanonical(c, col string) error {
	if IsCanonical(c) {
		return nil
	}
	return &field.Error{Field: "map", Value: c + "=" + col, Reason: "{0} is not a canonical column (use one of {1})", Args: []any{strconv.Quote(c), strings.Join(Canonical, ", ")}}
}

// CheckDebitCredit checks that a debit column comes with a credit column
// and that the two do not stand beside a mapped amount column.
func CheckDebitCredit(amountMapped bool, debit, credit string) error {
	if (debit == "") != (credit == "") {
		return &field.Error{About: "debit", Reason: "{debit} and {credit} go together (amount = debit - credit)"}
	}
	if debit != "" && amountMapped {
		return &field.Error{About: "debit", Reason: "give either {map} amount=... or {debit}/{credit}, not both"}
	}
	return nil
}

// CheckInPlace checks that a file read as format can be registered in
// place: only Parquet files can.
func CheckInPlace(path, format string) error {
	if format != "parquet" {
		return &field.Error{About: "in_place", Reason: "{0}: {in_place} registers Parquet files only (this is read as {1}); load it by copy, without {in_place}", Args: []any{path, format}}
	}
	return nil
}
