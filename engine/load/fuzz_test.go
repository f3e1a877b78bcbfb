package load

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"unicode/utf8"

	"github.com/leadline/leadline/engine/amount"
	"github.com/leadline/leadline/engine/workspace"
)

// The fuzzers. In `go test ./...` they run their seed corpus only (the
// seeds below and testdata/fuzz/<name>/); the long runs are commands in the
// README's "Reliability" section, for example
//
//	go test ./engine/load -run '^$' -fuzz '^FuzzAmount$' -fuzztime 5m
//
// Any input a long run finds failing is written by the go tool into
// testdata/fuzz/<name>/ and is committed there, so that every later
// `go test` replays it.

var (
	fuzzMu      sync.Mutex
	fuzzWS      *workspace.Workspace
	fuzzParsers = map[string]*AmountParser{}
)

// fuzzParser returns a prepared amount parser for the decimal mark and type,
// on one in-memory workspace per fuzzing process: opening DuckDB, or
// planning the amount expression, for every input would make each
// execution many times slower.
func fuzzParser(t testing.TB, comma bool, typ string) *AmountParser {
	fuzzMu.Lock()
	defer fuzzMu.Unlock()
	ctx := context.Background()
	if fuzzWS == nil {
		ws, err := workspace.Open(ctx, ":memory:", workspace.Options{Threads: 1})
		if err != nil {
			t.Fatal(err)
		}
		fuzzWS = ws
	}
	key := fmt.Sprint(comma, typ)
	if p := fuzzParsers[key]; p != nil {
		return p
	}
	p, err := NewAmountParser(ctx, fuzzWS, comma, typ)
	if err != nil {
		t.Fatal(err)
	}
	fuzzParsers[key] = p
	return p
}

var fuzzCurrency *CurrencyParser

func fuzzCurrencyParser(t testing.TB) *CurrencyParser {
	fuzzParser(t, false, "DECIMAL(18,2)") // opens the workspace
	fuzzMu.Lock()
	defer fuzzMu.Unlock()
	if fuzzCurrency == nil {
		p, err := NewCurrencyParser(context.Background(), fuzzWS)
		if err != nil {
			t.Fatal(err)
		}
		fuzzCurrency = p
	}
	return fuzzCurrency
}

// FuzzAmount holds the two statements of the amount grammar against each
// other: the SQL macros a load runs (queries/amount.sql, through the same
// fast cast and fallback as a load, by ParseText) and the Go reference
// (engine/amount). For any text, decimal mark, scale and precision they
// must give the same exact value, or reject it for the same reason; and
// neither may panic or fail.
func FuzzAmount(f *testing.F) {
	for _, c := range amountCases {
		f.Add(c.text, c.comma, uint8(2), false)
	}
	for _, s := range []string{
		"0e999", "1e-400", "5e-401", "1E+16", "0,001", "0.001", "00,123", "1_000", "0x1A", "Infinity", "NaN",
		"١٢٣", "１２３", "5\u3000", "\u20035", "5\v", "\u00a05\u00a0", "1\u2009234.5", "1 234 567,891",
		"(EUR 5.00-)", "$-5CR", "5 CR)", "(5)CR", "+.5", "-,5", "12'345.678'9", "1,23,45,678.00",
		"99999999999999999.995", "-0.004", "0.005", "1e2e3", "1e+", "€1.234,56", "1.234,56 €", "-",
		"9999999999999999999999999999999999999", "1e37", "CHF 1'234.50", "1,234.50 USD", "£ 7", "¥500", "₹ 12,34,567.00",
		"EUR 5 USD", "$", "USD", "12 CRC", "(12.00 GBP)", "12 eur", "E U R 5", "1e-99999999999999999999", "1e99999999999999999999",
	} {
		for _, comma := range []bool{false, true} {
			f.Add(s, comma, uint8(2), false)
		}
	}
	f.Add("12.3456789", false, uint8(6), true)
	f.Add("1e35", false, uint8(0), true)
	f.Fuzz(func(t *testing.T, s string, comma bool, scale uint8, wide bool) {
		if !utf8.ValidString(s) {
			// The CSV reader rejects invalid UTF-8 before an amount is
			// parsed (a structural reject), so the grammar never sees it.
			t.Skip()
		}
		sc, prec := int(scale%7), 18
		if wide {
			prec = 38
		}
		typ := fmt.Sprintf("DECIMAL(%d,%d)", prec, sc)
		got, reason, err := fuzzParser(t, comma, typ).Parse(context.Background(), s)
		if err != nil {
			t.Fatalf("SQL parser failed on %q (comma=%v, %s): %v", s, comma, typ, err)
		}
		v, why := amount.Parse(s, comma, sc, prec)
		want := ""
		if v != nil {
			want = amount.Format(v, sc)
		}
		if got != want || reason != why {
			t.Fatalf("%q (comma=%v, %s): SQL gives %q / %q, Go gives %q / %q", s, comma, typ, got, reason, want, why)
		}
		// The currency a marker names: the same code, or no amount.
		cur, isAmount, err := fuzzCurrencyParser(t).Currency(context.Background(), s)
		if err != nil {
			t.Fatalf("SQL currency failed on %q: %v", s, err)
		}
		goCur, goIs := amount.Currency(s)
		if cur != goCur || isAmount != goIs {
			t.Fatalf("%q: SQL names currency %q (amount %v), Go %q (amount %v)", s, cur, isAmount, goCur, goIs)
		}
	})
}

// FuzzExamineCSV feeds arbitrary bytes to the CSV header examination, as
// any file named .csv (or, gzip-compressed, .csv.gz) would reach it: it must
// return columns or an error that names the file, and never panic.
func FuzzExamineCSV(f *testing.F) {
	seeds := [][]byte{
		[]byte("entity,amount\nE1,5\n"),
		[]byte("\xef\xbb\xbfamount;entity\r\n5;E1\r\n"),
		[]byte("\xff\xfea\x00,\x00b\x00\n\x001\x00,\x002\x00\n\x00"),
		[]byte("\xfe\xff\x00a\x00,\x00b"),
		[]byte("a\tb\tc\n1\t2\t3\n"),
		[]byte("\"a\"\"b\",\"c\nd\"\n1,2\n"),
		[]byte("\"unclosed,header\n1,2\n"),
		[]byte("caf\xe9,amount\n1,2\n"),
		[]byte("a,,a,A, a \n1,2,3,4,5\n"),
		[]byte("\x00\x00\x00"),
		[]byte(""),
		[]byte("\n\n"),
		[]byte("a,b"),
		[]byte("\x1f\x8b\x08\x00"),
	}
	for _, s := range seeds {
		f.Add(s, "", "", false)
	}
	f.Add([]byte("a;b\n1;2\n"), ";", "", false)
	f.Add([]byte("a|b\n1|2\n"), `\t`, "latin-1", false)
	f.Add([]byte("a,b\n1,2\n"), "", "utf-16", true)
	f.Add([]byte("a,b\n1,2\n"), "ab", "ebcdic", false)
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, body []byte, delim, encoding string, gz bool) {
		name := "input.csv"
		if gz {
			name += ".gz"
		}
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, body, 0o644); err != nil {
			t.Fatal(err)
		}
		src, err := ExamineCSV(p, delim, encoding)
		if err != nil {
			if !strings.Contains(err.Error(), p) && !strings.HasPrefix(err.Error(), "--delimiter") {
				t.Fatalf("error does not name the file: %v", err)
			}
			if src != nil {
				t.Fatalf("both a source and an error: %v", err)
			}
			return
		}
		if len(src.Columns) == 0 {
			t.Fatal("no columns and no error")
		}
		seen := map[string]bool{}
		for _, c := range src.Columns {
			if c == "" || c != strings.TrimSpace(c) {
				t.Fatalf("column name %q is empty or padded", c)
			}
			if seen[strings.ToLower(c)] {
				t.Fatalf("column %q twice (case-insensitively) in %q", c, src.Columns)
			}
			seen[strings.ToLower(c)] = true
		}
		if len([]rune(src.Delimiter)) != 1 {
			t.Fatalf("delimiter %q", src.Delimiter)
		}
		if src.Encoding == "utf-8" && bytes.HasPrefix(body, []byte{0xFE, 0xFF}) && !gz {
			t.Fatal("a UTF-16 big-endian file passed as UTF-8")
		}
	})
}
