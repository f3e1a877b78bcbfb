package loadtest

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"strings"

	"github.com/parquet-go/parquet-go"
)

// Generator writes one generated input of the corpus.
type Generator struct {
	Name  string // file name of the input (its extension sets the format)
	Write func(path string) error
}

// Generators are the corpus inputs written by code: Parquet files (written
// with parquet-go, an independent writer) and files too large to check in.
var Generators = map[string]Generator{
	"wide_row":            {"wide_5000_columns.csv", writeWide},
	"long_header":         {"long_header.csv", writeLongHeader},
	"megabyte_field":      {"one_megabyte_field.csv", writeMegabyteField},
	"unclosed_quote_big":  {"unclosed_quote_big.csv", writeUnclosedBig},
	"nul_late":            {"nul_late_in_body.csv", writeNulLate},
	"pq_nan_inf":          {"double_nan_inf.parquet", writeNaNInf},
	"pq_truncated":        {"truncated.parquet", writeTruncated},
	"pq_no_amount":        {"no_amount.parquet", writeNoAmount},
	"pq_amount_string":    {"amount_as_string.parquet", writeAmountString},
	"pq_nested":           {"nested_columns.parquet", writeNested},
	"pq_amount_struct":    {"amount_is_struct.parquet", writeAmountStruct},
	"pq_empty":            {"zero_rows.parquet", writeEmpty},
	"pq_int64_overflow":   {"int64_amounts.parquet", writeInt64},
	"pq_decimal_rounding": {"decimal_scale3.parquet", writeDecimalScale3},
	"pq_dates":            {"dates.parquet", writeDates},
}

func writeLines(path string, n int, line func(i int, w *bufio.Writer)) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	for i := 0; i < n; i++ {
		line(i, w)
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// writeLongHeader: a header of 2,000 columns with names of 150 characters
// (about 300 KB, longer than the head examined first) and three rows.
func writeLongHeader(path string) error {
	return writeLines(path, 4, func(i int, w *bufio.Writer) {
		for c := 1; c <= 2000; c++ {
			if c > 1 {
				w.WriteByte(',')
			}
			switch {
			case i == 0 && c == 1:
				w.WriteString("amount")
			case i == 0:
				fmt.Fprintf(w, "%s_%04d", strings.Repeat("column_with_a_long_name_", 6), c)
			case c == 1:
				fmt.Fprintf(w, "%d.25", i)
			default:
				fmt.Fprintf(w, "r%dc%d", i, c)
			}
		}
		w.WriteByte('\n')
	})
}

// writeWide: a header of 5,000 columns (amount and c0002..c5000) and three rows.
func writeWide(path string) error {
	return writeLines(path, 4, func(i int, w *bufio.Writer) {
		for c := 1; c <= 5000; c++ {
			if c > 1 {
				w.WriteByte(',')
			}
			switch {
			case i == 0 && c == 1:
				w.WriteString("amount")
			case i == 0:
				fmt.Fprintf(w, "c%04d", c)
			case c == 1:
				fmt.Fprintf(w, "%d.25", i)
			default:
				fmt.Fprintf(w, "r%dc%d", i, c)
			}
		}
		w.WriteByte('\n')
	})
}

// writeMegabyteField: the second of three rows has a 1 MiB description.
func writeMegabyteField(path string) error {
	big := strings.Repeat("abcdefghij", 1<<20/10) + "xyzuvw" // 1,048,576 characters
	return writeLines(path, 4, func(i int, w *bufio.Writer) {
		switch i {
		case 0:
			w.WriteString("entity,amount,descr\n")
		case 2:
			w.WriteString("E2,2.00," + big + "\n")
		default:
			fmt.Fprintf(w, "E%d,%d.00,short\n", i, i)
		}
	})
}

// writeUnclosedBig: 20,000 data lines; line 12 opens a quote it never
// closes, so a CSV reader takes the rest of the file as one field.
func writeUnclosedBig(path string) error {
	return writeLines(path, 20001, func(i int, w *bufio.Writer) {
		switch {
		case i == 0:
			w.WriteString("entity,amount,descr\n")
		case i == 11:
			w.WriteString("E9,5.00,\"never closed\n")
		default:
			fmt.Fprintf(w, "E%d,%d.00,filler\n", i%3, i)
		}
	})
}

// writeNulLate: 20,000 data lines (past the 256 KiB the header check
// reads); line 15,001 has a NUL byte inside a text field and line 15,002
// inside its amount.
func writeNulLate(path string) error {
	return writeLines(path, 20001, func(i int, w *bufio.Writer) {
		switch i {
		case 0:
			w.WriteString("entity,amount,descr\n")
		case 15000:
			w.WriteString("EX,5.00,has\x00nul\n")
		case 15001:
			w.WriteString("EY,5\x00,amount with nul\n")
		default:
			fmt.Fprintf(w, "E%d,1.00,filler text to pass the examined head\n", i%3)
		}
	})
}

func writeParquet[T any](path string, rows []T) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := parquet.NewGenericWriter[T](f)
	if len(rows) > 0 {
		if _, err := w.Write(rows); err != nil {
			f.Close()
			return err
		}
	}
	if err := w.Close(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

type doubleRow struct {
	Entity string   `parquet:"entity"`
	Amount *float64 `parquet:"amount,optional"`
}

func fp(v float64) *float64 { return &v }

// writeNaNInf: DOUBLE amounts with NaN, +Inf, -Inf, -0, a null, values
// beyond DECIMAL(18,2), and doubles whose shortest text ends in 5.
func writeNaNInf(path string) error {
	return writeParquet(path, []doubleRow{
		{"E1", fp(1.5)},
		{"E2", fp(math.NaN())},
		{"E3", fp(math.Inf(1))},
		{"E4", fp(math.Inf(-1))},
		{"E5", fp(math.Copysign(0, -1))},
		{"E6", nil},
		{"E7", fp(1e300)},
		{"E8", fp(2.675)},     // the double is 2.67499999...; its text is 2.675
		{"E9", fp(0.1 + 0.2)}, // 0.30000000000000004
		{"E10", fp(-1.005)},   // -1.00499999...; text -1.005
	})
}

// writeTruncated: a valid Parquet file cut to half its length.
func writeTruncated(path string) error {
	if err := writeAmountString(path); err != nil {
		return err
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return err
	}
	return os.WriteFile(path, b[:len(b)/2], 0o644)
}

type noAmountRow struct {
	Entity string  `parquet:"entity"`
	Value  float64 `parquet:"value_eur"`
}

func writeNoAmount(path string) error {
	return writeParquet(path, []noAmountRow{{"E1", 1}, {"E2", 2}})
}

type stringAmountRow struct {
	Entity string  `parquet:"entity"`
	Amount *string `parquet:"amount,optional"`
}

func sp(s string) *string { return &s }

// writeAmountString: amounts stored as text, parsed by the amount grammar.
func writeAmountString(path string) error {
	return writeParquet(path, []stringAmountRow{
		{"E1", sp("1,234.56")},
		{"E2", sp("(5.00)")},
		{"E3", sp("abc")},
		{"E4", sp("")},
		{"E5", nil},
		{"E6", sp("+7")}, // a currency marker here beside unmarked amounts would refuse the file
	})
}

type meta struct {
	Code string `parquet:"code"`
	N    int32  `parquet:"n"`
}

type nestedRow struct {
	Entity string   `parquet:"entity"`
	Amount int64    `parquet:"amount,decimal(2:18)"`
	Meta   meta     `parquet:"meta"`
	Tags   []string `parquet:"tags,list"`
}

// writeNested: a struct column and a list column beside a DECIMAL amount.
func writeNested(path string) error {
	return writeParquet(path, []nestedRow{
		{"E1", 1050, meta{"A", 1}, []string{"x", "y"}},
		{"E2", -250, meta{"B", 2}, nil},
	})
}

type structAmountRow struct {
	Entity string `parquet:"entity"`
	Amount meta   `parquet:"amount"`
}

// writeAmountStruct: the amount column is a struct, not a number.
func writeAmountStruct(path string) error {
	return writeParquet(path, []structAmountRow{{"E1", meta{"5", 5}}, {"E2", meta{"6", 6}}})
}

func writeEmpty(path string) error { return writeParquet[doubleRow](path, nil) }

type int64Row struct {
	Entity string `parquet:"entity"`
	Amount int64  `parquet:"amount"`
}

// writeInt64: whole-number amounts, one at the INT64 maximum (beyond
// DECIMAL(18,2)) and one just inside DECIMAL(18,2).
func writeInt64(path string) error {
	return writeParquet(path, []int64Row{
		{"E1", 42},
		{"E2", math.MaxInt64},
		{"E3", math.MinInt64},
		{"E4", 9999999999999999},
		{"E5", 10000000000000000},
	})
}

type decimal3Row struct {
	Entity string `parquet:"entity"`
	Amount int64  `parquet:"amount,decimal(3:18)"`
}

// writeDecimalScale3: DECIMAL(18,3) amounts, to be rounded to 2 places
// half away from zero (docs/design.md, "Exact amounts").
func writeDecimalScale3(path string) error {
	return writeParquet(path, []decimal3Row{{"E1", 1235}, {"E2", -1235}, {"E3", 99995}, {"E4", 1234}})
}

type dateRow struct {
	Entity  string `parquet:"entity"`
	Amount  int64  `parquet:"amount,decimal(2:18)"`
	Posted  int32  `parquet:"posted,date"`
	Written string `parquet:"written_on"`
}

// writeDates: a typed DATE column (days since 1970-01-01), with the
// earliest and a far-future day.
func writeDates(path string) error {
	return writeParquet(path, []dateRow{
		{"E1", 100, 20119, "2025-01-31"},   // 2025-01-31
		{"E2", 200, 0, "1970-01-01"},       // 1970-01-01
		{"E3", 300, 2932896, "9999-12-31"}, // 9999-12-31
	})
}
