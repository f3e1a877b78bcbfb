package load

import (
	"context"
	"database/sql"
	"fmt"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/engine/xlsxin"
	"github.com/leadline/leadline/queries"
)

// A separator kind is what one amount text says about the file's decimal
// mark: "point" (1,234.56, 12.50, 0.125, 1,234,567), "comma" (1.234,56,
// 7,50, 1.234.567), or one of the two ambiguous shapes, a lone separator
// followed by exactly three digits after one to three digits (1.234,
// 12,345), which read as a decimal or as a thousands mark alike.
const (
	sepPoint    = "point"
	sepComma    = "comma"
	sepAmbPoint = "ambiguous_point"
	sepAmbComma = "ambiguous_comma"
)

type sepSeen struct {
	n    int64
	pos  int64 // first record (CSV: good record number; Parquet: row) holding it
	text string
	// of the ambiguous ones, those whose reading as decimals the scale
	// would round (1.234 at two places; not 3.000)
	rn    int64
	rpos  int64
	rtext string
}

// checkSeparators decides, from every amount text of the file, whether the
// file's amounts can be read without a guess. An amount such as 1.234 is
// 1.234 under a decimal point and 1234 under a decimal comma; it is read
// the convention's way only when other amounts of the file show that
// convention and none shows the other, or when the user settled it with
// --decimal-comma or --decimal-point. Even then, a reading as three
// decimal places that the scale would round, with nothing in the file
// backing the decimal mark, is refused. Otherwise the file is refused
// with the line and the flag that settles it: never a silent factor of
// 1,000.
func checkSeparators(ctx context.Context, ws *workspace.Workspace, src *Source, opts Options, scale int) error {
	texts := amountTexts(src)
	if texts == "" {
		return nil
	}
	q := queries.Render("load_separator_evidence", map[string]string{"texts": texts})
	lost := max(3-scale, 0)
	rows, err := ws.Conn.QueryContext(ctx, q, lost, lost, lost, lost, lost, lost)
	if err != nil {
		return fmt.Errorf("%s: reading the amounts' separators: %s", src.Path, oneLine(err))
	}
	seen := map[string]sepSeen{}
	for rows.Next() {
		var kind string
		var s sepSeen
		if err := rows.Scan(&kind, &s.n, &s.pos, &s.text, &s.rn, &s.rpos, &s.rtext); err != nil {
			rows.Close()
			return err
		}
		seen[kind] = s
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	comma := opts.DecimalComma
	flagged := opts.DecimalComma || opts.DecimalPoint
	conv, other, ambDec, ambThou := sepPoint, sepComma, sepAmbPoint, sepAmbComma
	mark, otherMark := "point", "comma"
	if comma {
		conv, other, ambDec, ambThou = sepComma, sepPoint, sepAmbComma, sepAmbPoint
		mark, otherMark = "comma", "point"
	}
	line := func(pos int64) int64 { return lineOf(ctx, ws, src, pos) }
	// The first ambiguous amount, whichever its shape.
	amb, ok := seen[ambDec], seen[ambDec].n > 0
	if a := seen[ambThou]; a.n > 0 && (!ok || a.pos < amb.pos) {
		amb, ok = a, true
	}
	if !ok {
		return nil
	}
	count := seen[ambDec].n + seen[ambThou].n
	asDecimal, asThousands := readTwoWays(amb.text)
	keep := ""
	if seen[sepAmbPoint].rn+seen[sepAmbComma].rn > 0 {
		keep = fmt.Sprintf(" and --scale 3 (at %d decimal places it would be rounded)", scale)
	}
	var settle string
	if pointReading(amb.text, asDecimal, asThousands) == asDecimal {
		settle = fmt.Sprintf("give --decimal-comma if %q means %s, or --decimal-point%s if it means %s", amb.text, asThousands, keep, asDecimal)
	} else {
		settle = fmt.Sprintf("give --decimal-comma%s if %q means %s, or --decimal-point if it means %s", keep, amb.text, asDecimal, asThousands)
	}
	others := ""
	if count > 1 {
		others = fmt.Sprintf(" (%d amounts of the file have this shape)", count)
	}
	if !flagged {
		if o := seen[other]; o.n > 0 {
			return fmt.Errorf("%s: line %d: amount %q reads as %s under a decimal point, but line %d writes %q with a decimal comma, so the file does not say which it means%s; %s; nothing was loaded",
				src.Path, line(amb.pos), amb.text, pointReading(amb.text, asDecimal, asThousands), line(o.pos), o.text, others, settle)
		}
		if seen[conv].n == 0 {
			return fmt.Errorf("%s: line %d: amount %q reads two ways, as %s (decimal point) or %s (decimal comma), and no amount of the file settles which%s; %s; nothing was loaded",
				src.Path, line(amb.pos), amb.text, pointReading(amb.text, asDecimal, asThousands), commaReading(amb.text, asDecimal, asThousands), others, settle)
		}
		return nil
	}
	// Settled by a flag; refuse only a reading that the scale would round
	// with no amount in the file writing the decimal mark that way.
	d := seen[ambDec]
	if d.rn == 0 || seen[conv].n > 0 {
		return nil
	}
	flag := "--decimal-" + mark
	if d.rn > 1 {
		others = fmt.Sprintf(" (%d amounts of the file have this shape)", d.rn)
	} else {
		others = ""
	}
	return fmt.Errorf("%s: line %d: amount %q under %s is %s, which the scale of %d decimal places would round, and no other amount of the file writes a decimal %s%s; if the %s groups thousands (%s) give --decimal-%s instead; if the amounts have three decimal places give --scale 3; nothing was loaded",
		src.Path, line(d.rpos), d.rtext, flag, asDecimalOf(d.rtext), scale, mark, others, mark, asThousandsOf(d.rtext), otherMark)
}

// readTwoWays gives the two readings of an ambiguous amount text: its lone
// separator as the decimal mark, and as a thousands mark.
func readTwoWays(text string) (asDecimal, asThousands string) {
	return asDecimalOf(text), asThousandsOf(text)
}

func asDecimalOf(text string) string {
	return strings.NewReplacer(",", ".").Replace(keepNumber(text))
}

func asThousandsOf(text string) string {
	return strings.NewReplacer(",", "", ".", "").Replace(keepNumber(text))
}

// keepNumber keeps the sign, digits and separators of an amount text.
func keepNumber(text string) string {
	var b strings.Builder
	neg := strings.ContainsAny(text, "-(") || strings.HasSuffix(strings.ToUpper(strings.TrimSpace(text)), "CR")
	if neg {
		b.WriteByte('-')
	}
	for _, r := range text {
		if r >= '0' && r <= '9' || r == '.' || r == ',' {
			b.WriteRune(r)
		}
	}
	return b.String()
}

// pointReading is the value of an ambiguous text under a decimal point:
// a point is the decimal mark, a comma groups thousands.
func pointReading(text, asDecimal, asThousands string) string {
	if strings.Contains(text, ".") {
		return asDecimal
	}
	return asThousands
}

// commaReading is its value under a decimal comma.
func commaReading(text, asDecimal, asThousands string) string {
	if strings.Contains(text, ",") {
		return asDecimal
	}
	return asThousands
}

// amountTexts is a select of (pos, text) over the file's amount texts:
// the amount column, or the debit and credit columns, that hold text.
func amountTexts(src *Source) string {
	m := src.mapping
	cols := []string{m.Columns["amount"]}
	if m.Debit != "" {
		cols = []string{m.Debit, m.Credit}
	}
	from, pos := "", ""
	if src.stage != "" {
		from, pos = queries.QuoteIdent(src.stage), fmt.Sprintf("rowid - %d + 1", src.stageFirst)
		if src.sheet != nil {
			pos = xlsxin.LineColumn // the sheet row number: lineOf leaves it as it is
		}
	} else {
		from, pos = readerSQL(src, ""), "ll_file_row + 1"
	}
	var parts []string
	for _, c := range cols {
		if c == "" {
			continue
		}
		if src.Format == "parquet" {
			typ := ""
			for i, n := range src.Columns {
				if n == c && i < len(src.types) {
					typ = src.types[i]
				}
			}
			if !strings.HasPrefix(strings.ToUpper(typ), "VARCHAR") {
				continue
			}
		}
		parts = append(parts, "SELECT "+pos+" AS pos, CAST("+src.ref(c)+" AS VARCHAR) AS text FROM "+from)
	}
	return strings.Join(parts, " UNION ALL ")
}

// lineOf turns a record's position in the reading into its line: for a
// Parquet file the row itself; for a CSV file the good record's number
// plus the header and the records the reader rejected before it.
func lineOf(ctx context.Context, ws *workspace.Workspace, src *Source, pos int64) int64 {
	if src.Format != "csv" {
		return pos
	}
	line := pos + 1
	rows, err := ws.Conn.QueryContext(ctx, queries.Render("load_rejected_lines", map[string]string{"rejects_table": queries.QuoteIdent(src.rejects)}))
	if err != nil {
		return line
	}
	defer rows.Close()
	for rows.Next() {
		var l sql.NullInt64
		if rows.Scan(&l) == nil && l.Valid && l.Int64 <= line {
			line++
		}
	}
	return line
}

// scaleOf reads the scale of a DECIMAL(p,s) type.
func scaleOf(amountType string) int {
	if i := strings.LastIndexByte(amountType, ','); i >= 0 {
		if s, err := strconv.Atoi(strings.TrimSuffix(amountType[i+1:], ")")); err == nil {
			return s
		}
	}
	return 2
}
