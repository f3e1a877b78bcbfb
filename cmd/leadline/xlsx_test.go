package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/big"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// TestXLSXEndToEnd: a workbook written by excelize is inspected, loaded
// with the command inspect prints, and scanned; the same rows written as
// CSV give the same totals and the same digit tests. The net is checked
// against math/big's sum of the cents written.
func TestXLSXEndToEnd(t *testing.T) {
	dir := t.TempDir()
	xlsx := filepath.Join(dir, "gl extract.xlsx")
	csvPath := filepath.Join(dir, "gl.csv")
	f := excelize.NewFile()
	f.SetSheetName("Sheet1", "Cover")
	f.SetCellValue("Cover", "A1", "Prepared by the client")
	f.NewSheet("Ledger")
	ds, err := f.NewStyle(&excelize.Style{NumFmt: 14})
	if err != nil {
		t.Fatal(err)
	}
	sw, err := f.NewStreamWriter("Ledger")
	if err != nil {
		t.Fatal(err)
	}
	sw.SetRow("A1", []any{"General ledger, company 100"})
	sw.SetRow("A2", []any{"Posting date", "Account", "Amount", "Text"})
	var b strings.Builder
	b.WriteString("Posting date,Account,Amount,Text\n")
	rng := rand.New(rand.NewPCG(7, 11))
	sum := new(big.Rat)
	const n = 3000
	for i := 0; i < n; i++ {
		// Benford-like amounts: 10^U cents for U uniform over 0..6.
		cents := int64(math.Pow(10, rng.Float64()*6)) + 1
		if i%17 == 0 {
			cents = -cents
		}
		serial := 45658 + i%365 // 2025-01-01 on
		acct := strconv.Itoa(4000 + i%7)
		if err := sw.SetRow("A"+strconv.Itoa(3+i), []any{excelize.Cell{StyleID: ds, Value: serial}, acct, float64(cents) / 100, "line " + strconv.Itoa(i)}); err != nil {
			t.Fatal(err)
		}
		fmt.Fprintf(&b, "%s,%s,%s,line %d\n", dateOf(serial), acct, centsText(cents), i)
		sum.Add(sum, big.NewRat(cents, 100))
	}
	if err := sw.Flush(); err != nil {
		t.Fatal(err)
	}
	if err := f.SaveAs(xlsx); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(csvPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := func(args ...string) string {
		t.Helper()
		var out, errOut bytes.Buffer
		if code := run(context.Background(), args, &env{stdout: &out, stderr: &errOut}); code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, errOut.String())
		}
		return out.String()
	}
	text := cmd("inspect", xlsx)
	for _, want := range []string{"Ledger", "<- the first sheet holding a table", "header at row 2", "General ledger, company 100"} {
		if !strings.Contains(text, want) {
			t.Errorf("inspect lacks %q:\n%s", want, text)
		}
	}
	_, suggested, ok := strings.Cut(text, "Suggested load:\n")
	if !ok {
		t.Fatalf("no suggested load:\n%s", text)
	}
	args := shellWords(t, strings.TrimSpace(suggested))
	if len(args) < 2 || args[0] != "leadline" || args[1] != "load" {
		t.Fatalf("suggested %q", suggested)
	}
	dbX, dbC := filepath.Join(dir, "x.duckdb"), filepath.Join(dir, "c.duckdb")
	loadX := cmd(append([]string{"load", "--db", dbX, "--format", "json"}, args[2:]...)...)
	loadC := cmd("load", "--db", dbC, "--format", "json", "--map", "posted=Posting date", "--map", "account=Account", "--map", "amount=Amount", "--map", "descr=Text", csvPath)
	var rx, rc struct {
		Files []struct {
			Format     string `json:"format"`
			RowsRead   int64  `json:"rows_read"`
			RowsLoaded int64  `json:"rows_loaded"`
			Net        string `json:"net"`
			Sheet      *struct {
				Sheet     string `json:"sheet"`
				HeaderRow int64  `json:"header_row"`
			}
		}
	}
	json.Unmarshal([]byte(loadX), &rx)
	json.Unmarshal([]byte(loadC), &rc)
	if len(rx.Files) != 1 || len(rc.Files) != 1 {
		t.Fatalf("loads: %s\n%s", loadX, loadC)
	}
	x, c := rx.Files[0], rc.Files[0]
	if x.Format != "xlsx" || x.Sheet == nil || x.Sheet.Sheet != "Ledger" || x.Sheet.HeaderRow != 2 {
		t.Errorf("xlsx load: %+v", x)
	}
	if x.RowsRead != n || x.RowsLoaded != n || c.RowsLoaded != n {
		t.Errorf("rows: xlsx %d read %d loaded, csv %d loaded; want %d", x.RowsRead, x.RowsLoaded, c.RowsLoaded, n)
	}
	if x.Net != sum.FloatString(2) || c.Net != sum.FloatString(2) {
		t.Errorf("net: xlsx %s, csv %s, math/big %s", x.Net, c.Net, sum.FloatString(2))
	}
	// Lines are sheet rows (3 to n+2) in the workbook, records (2 to n+1) in the CSV.
	for db, want := range map[string]string{dbX: fmt.Sprintf("3 %d", n+2), dbC: fmt.Sprintf("2 %d", n+1)} {
		got := cmd("sql", "--db", db, "--format", "csv", "SELECT min(line) || ' ' || max(line) AS l FROM ledger")
		if !strings.Contains(got, want) {
			t.Errorf("%s lines: %s, want %s", filepath.Base(db), got, want)
		}
	}
	scan := func(db string) string {
		var doc struct {
			Rows  int64           `json:"rows"`
			Tests json.RawMessage `json:"tests"`
		}
		if err := json.Unmarshal([]byte(cmd("scan", "--db", db, "--min", "0", "--format", "json")), &doc); err != nil {
			t.Fatal(err)
		}
		return fmt.Sprint(doc.Rows) + string(doc.Tests)
	}
	if sx, sc := scan(dbX), scan(dbC); sx != sc || len(sx) < 100 {
		t.Errorf("scan of the workbook differs from the scan of the CSV (%d and %d bytes)", len(sx), len(sc))
	}
}

// dateOf is the ISO date of a 1900-system serial past 60, counted by hand
// from 2025-01-01 (serial 45658, from memory of the spreadsheet's tables).
func dateOf(serial int) string {
	days := []int{31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31}
	d := serial - 45658
	m := 0
	for d >= days[m] {
		d -= days[m]
		m++
	}
	return fmt.Sprintf("2025-%02d-%02d", m+1, d+1)
}
