package reconcile_test

import (
	"fmt"
	"math/big"
	"path/filepath"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// TestTrialBalanceInXLSX: a trial balance sent as a workbook (a title row
// above the header, balances as number cells, one closing balance a cent
// short) reconciles as its CSV twin would: every key but one ties, and the
// one that does not is named with its sheet row and the difference the
// test computes with math/big.
func TestTrialBalanceInXLSX(t *testing.T) {
	l := newLedger()
	ws, dir := loadLedger(t, l)
	f := excelize.NewFile()
	sh := f.GetSheetName(0)
	set := func(cell string, v any) {
		if err := f.SetCellValue(sh, cell, v); err != nil {
			t.Fatal(err)
		}
	}
	set("A1", "Trial balance 2025, as sent by the client")
	for i, h := range []string{"Entity", "Account", "Opening balance", "Closing balance"} {
		set(fmt.Sprintf("%c3", 'A'+i), h)
	}
	off := l.keys[1]
	offRow := 0
	for i, k := range l.keys {
		row := 4 + i
		open := cents(int64(i+1) * 1_234_56)
		closing := new(big.Rat).Add(open, l.totals[k].net)
		if k == off {
			closing.Sub(closing, cents(1))
			offRow = row
		}
		o, _ := open.Float64() // the sheet holds doubles; two-place values survive the round trip
		c, _ := closing.Float64()
		set(fmt.Sprintf("A%d", row), k[0])
		set(fmt.Sprintf("B%d", row), k[1])
		set(fmt.Sprintf("C%d", row), o)
		set(fmt.Sprintf("D%d", row), c)
	}
	p := filepath.Join(dir, "tb.xlsx")
	if err := f.SaveAs(p); err != nil {
		t.Fatal(err)
	}
	res := run(t, ws, p, false)
	if res.Ties || res.KeysDiffering != 1 || res.KeysBoth != len(l.keys) {
		t.Fatalf("verdict %q: %d differing, %d in both; want 1 differing of %d", res.Verdict, res.KeysDiffering, res.KeysBoth, len(l.keys))
	}
	found := false
	for _, line := range res.Lines {
		if line.Status == "ties" {
			continue
		}
		found = true
		if line.Key[0] != off[0] || line.Key[1] != off[1] || line.Difference != "0.01" || line.ControlLine != offRow {
			t.Errorf("differing line %+v; want key %v at sheet row %d, difference 0.01 (loaded minus a closing balance one cent short)", line, off, offRow)
		}
	}
	if !found || !strings.HasPrefix(res.Verdict, "does not tie") {
		t.Errorf("verdict %q, a differing line found: %v", res.Verdict, found)
	}
}
