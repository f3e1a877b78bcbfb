package load

import (
	"context"
	"math/big"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/amount"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
)

func openWS(t *testing.T, path string) *workspace.Workspace {
	t.Helper()
	ws, err := workspace.Open(context.Background(), path, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	return ws
}

func writeFile(t *testing.T, dir, name, body string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// amountCase is one amount text with its exact expected value at scale 2, or
// the reason it is rejected. The shapes are those ledgers really export
// (docs/design.md, "Exact amounts"); each expected value is worked by hand.
type amountCase struct {
	text   string
	comma  bool
	want   string // exact DECIMAL text, "" when rejected
	reason string
}

var amountCases = []amountCase{
	{"1234.56", false, "1234.56", ""},
	{"-1234.56", false, "-1234.56", ""},
	{"+7", false, "7.00", ""},
	{"0", false, "0.00", ""},
	{"-0.00", false, "0.00", ""}, // negative zero is zero
	{"0.29", false, "0.29", ""},
	{".5", false, "0.50", ""},
	{"5.", false, "5.00", ""},
	{"  42.10  ", false, "42.10", ""},
	{"1,234.56", false, "1234.56", ""},
	{"1,234,567.89", false, "1234567.89", ""},
	{"12,34,567.00", false, "1234567.00", ""}, // Indian grouping
	{"1'234'567.50", false, "1234567.50", ""},
	{"1 234 567.50", false, "1234567.50", ""},
	{"1\u00a0234.50", false, "1234.50", ""}, // no-break space as thousands mark
	{"(1,234.56)", false, "-1234.56", ""},
	{"1234.56-", false, "-1234.56", ""},
	{"100.00 CR", false, "-100.00", ""},
	{"100.00 DR", false, "100.00", ""},
	{"$ 1,234.56", false, "1234.56", ""},
	{"-$5", false, "-5.00", ""},
	{"$-5", false, "-5.00", ""},
	{"EUR 1234.56", false, "1234.56", ""},
	{"1234.56 USD", false, "1234.56", ""},
	{"£12", false, "12.00", ""},
	{"1.23456E+03", false, "1234.56", ""},
	{"1.5e3", false, "1500.00", ""},
	{"2.5E-1", false, "0.25", ""},
	{"99.995", false, "100.00", ""}, // rounded half away from zero (docs/design.md)
	{"-99.995", false, "-100.00", ""},
	{"12.344", false, "12.34", ""},
	{"9999999999999999.99", false, "9999999999999999.99", ""}, // largest DECIMAL(18,2)
	{"1.234,56", true, "1234.56", ""},
	{"1234,5", true, "1234.50", ""},
	{"1 234,56", true, "1234.56", ""},
	{"(1.234,56)", true, "-1234.56", ""},
	{"EUR 1.234.567,89", true, "1234567.89", ""},
	{"", false, "", amount.Blank},
	{"   ", false, "", amount.Blank},
	{"N/A", false, "", amount.NotANumber},
	{"12,3x4", false, "", amount.NotANumber},
	{"abc", false, "", amount.NotANumber},
	{"--5", false, "", amount.TwoSigns},
	{"(-5)", false, "", amount.TwoSigns},
	{"-5-", false, "", amount.TwoSigns},
	{"(5", false, "", amount.Parentheses},
	{"$5 EUR", false, "", amount.TwoCurrency},
	{"1.2.3", false, "", amount.BadGrouping},
	{"12,34", false, "", amount.BadGrouping},
	{"5 5", false, "", amount.BadGrouping},
	{"1,234.56", true, "", amount.BadGroupingC},
	{"1e40", false, "", amount.OutOfRange},
	{"10000000000000000.00", false, "", amount.OutOfRange}, // 10^16 does not fit DECIMAL(18,2)
}

func TestAmountTable(t *testing.T) {
	if len(amountCases) < 40 {
		t.Fatalf("the amount table should hold at least 40 cases, have %d", len(amountCases))
	}
	ctx := context.Background()
	ws := openWS(t, ":memory:")
	for _, c := range amountCases {
		got, reason, err := ParseText(ctx, ws, c.text, c.comma, "DECIMAL(18,2)")
		if err != nil {
			t.Fatalf("%q: %v", c.text, err)
		}
		if got != c.want || (c.want == "" && !strings.HasPrefix(reason, c.reason)) {
			t.Errorf("SQL parser %q (comma=%v): got %q / %q, want %q / %q", c.text, c.comma, got, reason, c.want, c.reason)
		}
		// The Go reference grammar must agree.
		v, why := amount.Parse(c.text, c.comma, 2, 18)
		gv := ""
		if v != nil {
			gv = amount.Format(v, 2)
		}
		if gv != c.want || why != c.reason {
			t.Errorf("Go parser %q (comma=%v): got %q / %q, want %q / %q", c.text, c.comma, gv, why, c.want, c.reason)
		}
	}
}

// TestAmountTableThroughLoad loads the same strings as a CSV file: the real
// path, with its fast cast and its fallback, must give the same answers.
func TestAmountTableThroughLoad(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	var b strings.Builder
	// The texts mix amounts with and without a currency marker, which a
	// file may do only beside a currency column.
	b.WriteString("line_id;amount;currency\n")
	var cases []amountCase
	for _, c := range amountCases {
		if c.comma || strings.ContainsAny(c.text, "\";") {
			continue
		}
		cases = append(cases, c)
		b.WriteString(itoa(len(cases)) + ";\"" + c.text + "\";XTS\n")
	}
	p := writeFile(t, dir, "amounts.csv", b.String())
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	// The table's texts are read with a decimal point (its comma cases are
	// left out above), which the flag says, as the file mixes both marks.
	rep, err := Load(ctx, ws, []string{p}, Options{MaxRejects: "100%", DecimalPoint: true})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsRead != int64(len(cases)) || rep.RowsLoaded+rep.RowsRejected != rep.RowsRead {
		t.Fatalf("read %d loaded %d rejected %d, want %d read", rep.RowsRead, rep.RowsLoaded, rep.RowsRejected, len(cases))
	}
	got := map[int]string{}
	rows, err := ws.Conn.QueryContext(ctx, "SELECT CAST(line_id AS INTEGER), CAST(amount AS VARCHAR), line FROM ledger")
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var id int
		var v string
		var line int64
		rows.Scan(&id, &v, &line)
		got[id] = v
		if line != int64(id)+1 {
			t.Errorf("row %d has line %d, want %d", id, line, id+1)
		}
	}
	rows.Close()
	reasons := map[int64]string{}
	rows, err = ws.Conn.QueryContext(ctx, "SELECT line, reason FROM rejects")
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var line int64
		var r string
		rows.Scan(&line, &r)
		reasons[line] = r
	}
	rows.Close()
	for i, c := range cases {
		id := i + 1
		if c.want != "" && got[id] != c.want {
			t.Errorf("load %q: got %q, want %q", c.text, got[id], c.want)
		}
		if c.want == "" && !strings.HasPrefix(reasons[int64(id+1)], c.reason) {
			t.Errorf("load %q: rejected with %q, want %q", c.text, reasons[int64(id+1)], c.reason)
		}
	}
}

func itoa(i int) string { return big.NewInt(int64(i)).String() }

// TestMalformedCSV: about 1% malformed amounts in a generated ledger. Every
// bad line is reported with its line number, loaded + rejected = read, and
// the control totals equal the generator's own exact integer-cent totals.
func TestMalformedCSV(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	p := filepath.Join(dir, "gl.csv")
	sum, err := fixtures.WriteCSV(p, fixtures.Config{Rows: 100_000, Seed: 7, BadAmountRate: 0.01, MessyAmounts: true, Plants: true})
	if err != nil {
		t.Fatal(err)
	}
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	rep, err := Load(ctx, ws, []string{p}, Options{MaxRejects: "2%"})
	if err != nil {
		t.Fatal(err)
	}
	f := rep.Files[0]
	if f.RowsRead != sum.Rows || f.RowsRejected != sum.BadRows || f.RowsLoaded != sum.Rows-sum.BadRows {
		t.Fatalf("read %d loaded %d rejected %d; generator wrote %d rows, %d bad", f.RowsRead, f.RowsLoaded, f.RowsRejected, sum.Rows, sum.BadRows)
	}
	if sum.BadRows < 500 {
		t.Fatalf("expected about 1%% bad rows, generator wrote %d", sum.BadRows)
	}
	rows, err := ws.Conn.QueryContext(ctx, "SELECT line FROM rejects ORDER BY line")
	if err != nil {
		t.Fatal(err)
	}
	var lines []int64
	for rows.Next() {
		var l int64
		rows.Scan(&l)
		lines = append(lines, l)
	}
	rows.Close()
	if len(lines) != len(sum.BadLines) {
		t.Fatalf("%d reject lines, generator has %d bad lines", len(lines), len(sum.BadLines))
	}
	for i := range lines {
		if lines[i] != sum.BadLines[i] {
			t.Fatalf("reject %d at line %d, generator's bad line is %d", i, lines[i], sum.BadLines[i])
		}
	}
	checkTotals(t, rep.Entities, sum)
}

func checkTotals(t *testing.T, got []EntityTotal, sum fixtures.Summary) {
	t.Helper()
	if len(got) != len(sum.PerEntity) {
		t.Fatalf("%d entities loaded, generator has %d", len(got), len(sum.PerEntity))
	}
	cents := func(s string) int64 {
		r, ok := new(big.Rat).SetString(s)
		if !ok {
			t.Fatalf("bad decimal %q", s)
		}
		r.Mul(r, big.NewRat(100, 1))
		if !r.IsInt() {
			t.Fatalf("%q is not whole cents", s)
		}
		return r.Num().Int64()
	}
	for _, e := range got {
		want, ok := sum.PerEntity[e.Entity]
		if !ok {
			t.Errorf("entity %q not generated", e.Entity)
			continue
		}
		if e.Rows != want.Rows || cents(e.Positive) != want.PositiveCents || cents(e.Negative) != want.NegativeCents || cents(e.Net) != want.NetCents {
			t.Errorf("entity %s: loaded rows %d +%s %s net %s; generated rows %d +%d %d net %d (cents)",
				e.Entity, e.Rows, e.Positive, e.Negative, e.Net, want.Rows, want.PositiveCents, want.NegativeCents, want.NetCents)
		}
	}
}

// TestCSVAndParquetAgree: the same rows written by the generator as CSV and,
// with parquet-go (an independent writer), as Parquet load to identical
// control totals, and both equal the generator's integer-cent totals.
func TestCSVAndParquetAgree(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	cfg := fixtures.Config{Rows: 60_000, Seed: 11, Plants: true, MessyAmounts: true}
	csvSum, err := fixtures.WriteCSV(filepath.Join(dir, "a.csv"), cfg)
	if err != nil {
		t.Fatal(err)
	}
	pqSum, err := fixtures.WriteParquet(filepath.Join(dir, "a.parquet"), cfg)
	if err != nil {
		t.Fatal(err)
	}
	wsC := openWS(t, filepath.Join(dir, "c.duckdb"))
	repC, err := Load(ctx, wsC, []string{filepath.Join(dir, "a.csv")}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	wsP := openWS(t, filepath.Join(dir, "p.duckdb"))
	repP, err := Load(ctx, wsP, []string{filepath.Join(dir, "a.parquet")}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkTotals(t, repC.Entities, csvSum)
	checkTotals(t, repP.Entities, pqSum)
	if len(repC.Entities) != len(repP.Entities) {
		t.Fatal("entity counts differ")
	}
	for i := range repC.Entities {
		if repC.Entities[i] != repP.Entities[i] {
			t.Errorf("CSV %+v vs Parquet %+v", repC.Entities[i], repP.Entities[i])
		}
	}
	// Row by row: the same amount, date and document on the same line.
	var diff int64
	q := `SELECT count(*) FROM c.ledger x FULL JOIN p.ledger y ON x.line - 1 = y.line
	      WHERE x.amount IS DISTINCT FROM y.amount OR x.posted IS DISTINCT FROM y.posted OR x.doc_id IS DISTINCT FROM y.doc_id`
	wsC.Close()
	wsP.Close()
	ws := openWS(t, ":memory:")
	for _, a := range []string{"ATTACH '" + filepath.Join(dir, "c.duckdb") + "' AS c (READ_ONLY)", "ATTACH '" + filepath.Join(dir, "p.duckdb") + "' AS p (READ_ONLY)"} {
		if _, err := ws.Conn.ExecContext(ctx, a); err != nil {
			t.Fatal(err)
		}
	}
	if err := ws.Conn.QueryRowContext(ctx, q).Scan(&diff); err != nil {
		t.Fatal(err)
	}
	if diff != 0 {
		t.Errorf("%d rows differ between the CSV and the Parquet load", diff)
	}
}

func counts(t *testing.T, ws *workspace.Workspace) [4]int64 {
	t.Helper()
	var c [4]int64
	for i, q := range []string{"SELECT count(*) FROM ledger", "SELECT count(*) FROM files", "SELECT count(*) FROM rejects", "SELECT count(*) FROM loads"} {
		if err := ws.Conn.QueryRowContext(context.Background(), q).Scan(&c[i]); err != nil {
			t.Fatal(err)
		}
	}
	return c
}

// TestAtomicLoad: a bad second file leaves the workspace exactly as before,
// and so does a cancelled context.
func TestAtomicLoad(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	good := writeFile(t, dir, "good.csv", "entity,amount\nE1,10.00\nE2,20.00\n")
	good2 := writeFile(t, dir, "good2.csv", "entity,amount\nE1,1.00\nE3,bad\n")
	noAmount := writeFile(t, dir, "noamount.csv", "entity,value_x\nE1,5\n")
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	if _, err := Load(ctx, ws, []string{good}, Options{}); err != nil {
		t.Fatal(err)
	}
	before := counts(t, ws)
	_, err := Load(ctx, ws, []string{good2, noAmount}, Options{})
	if err == nil || !strings.Contains(err.Error(), "noamount.csv") || !strings.Contains(err.Error(), "no amount column") {
		t.Fatalf("want a clear no-amount error naming the file, got %v", err)
	}
	if after := counts(t, ws); after != before {
		t.Fatalf("failed load changed the workspace: before %v after %v", before, after)
	}
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := Load(cctx, ws, []string{good2}, Options{}); err == nil {
		t.Fatal("a cancelled load succeeded")
	}
	if after := counts(t, ws); after != before {
		t.Fatalf("cancelled load changed the workspace: before %v after %v", before, after)
	}
}

func TestDuplicateFileRefused(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	a := writeFile(t, dir, "a.csv", "entity,amount\nE1,10.00\n")
	b := writeFile(t, dir, "copy_of_a.csv", "entity,amount\nE1,10.00\n")
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	if _, err := Load(ctx, ws, []string{a}, Options{}); err != nil {
		t.Fatal(err)
	}
	_, err := Load(ctx, ws, []string{b}, Options{})
	if err == nil || !strings.Contains(err.Error(), "already loaded") || !strings.Contains(err.Error(), "--replace") {
		t.Fatalf("want refusal naming --replace, got %v", err)
	}
	rep, err := Load(ctx, ws, []string{b}, Options{Replace: true})
	if err != nil {
		t.Fatal(err)
	}
	if c := counts(t, ws); c[0] != 1 || c[1] != 1 || rep.RowsLoaded != 1 {
		t.Fatalf("replace left %v", c)
	}
}

func TestReadOnlyWorkspace(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	p := writeFile(t, dir, "a.csv", "entity,amount\nE1,10.00\n")
	db := filepath.Join(dir, "w.duckdb")
	ws, err := workspace.Open(ctx, db, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Load(ctx, ws, []string{p}, Options{}); err != nil {
		t.Fatal(err)
	}
	ws.Close()
	ro, err := workspace.Open(ctx, db, workspace.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer ro.Close()
	if _, err := ro.Conn.ExecContext(ctx, "DELETE FROM ledger"); err == nil {
		t.Fatal("a read-only workspace took a DELETE")
	}
	var n int
	ro.Conn.QueryRowContext(ctx, "SELECT count(*) FROM ledger").Scan(&n)
	if n != 1 {
		t.Fatalf("ledger has %d rows", n)
	}
}

// TestClearErrors: each broken file gets a message naming the file (and the
// line where there is one).
func TestClearErrors(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	cases := map[string]struct{ body, want string }{
		"empty.csv":      {"", "the file is empty"},
		"header.csv":     {"entity,amount\n", "header but no data rows"},
		"noamount.csv":   {"entity,value\nE1,3\n", "no amount column"},
		"latin1.csv":     {"entity,amount\nCaf\xe9,3\n", "--encoding windows-1252"},
		"allbad.csv":     {"entity,amount\nE1,x\nE2,y\n", "none of its 2 rows"},
		"notzip.xlsx":    {"PK", "not an excel workbook"},
		"unknown.ods":    {"PK", "unknown file type"},
		"ragged_all.csv": {"a,b,amount\n1\n2\n", "none of its 2 rows"},
	}
	for name, c := range cases {
		p := writeFile(t, dir, name, c.body)
		ws := openWS(t, ":memory:")
		_, err := Load(ctx, ws, []string{p}, Options{})
		if err == nil {
			if name != "latin1.csv" {
				t.Errorf("%s: loaded without error", name)
			}
			continue
		}
		if !strings.Contains(err.Error(), name) || !strings.Contains(strings.ToLower(err.Error()), strings.ToLower(c.want)) {
			t.Errorf("%s: got %q, want it to name the file and say %q", name, err, c.want)
		}
	}
	if _, err := ExpandPaths([]string{filepath.Join(dir, "*.nothing")}); err == nil || !strings.Contains(err.Error(), "matches no file") {
		t.Errorf("empty glob: %v", err)
	}
}
