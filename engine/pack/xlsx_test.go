package pack

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// A starter from a workbook whose table is on its second sheet names the
// sheet; the pack checks and runs on it. The expected total is the sum of
// the cents written, counted in integers.
func TestStarterFromWorkbook(t *testing.T) {
	dir := t.TempDir()
	book := filepath.Join(dir, "journal.xlsx")
	f := excelize.NewFile()
	f.SetSheetName("Sheet1", "Cover")
	f.SetCellValue("Cover", "A1", "Journal, FY2025")
	f.NewSheet("Ledger")
	rows := [][]any{{"Date", "Account", "Amount", "Company"}}
	var cents int64
	for i := 0; i < 40; i++ {
		c := int64(12345 + 1000*i)
		cents += c
		rows = append(rows, []any{"2025-03-" + strconv.Itoa(10+i%10), "4000", float64(c) / 100, "A1"})
	}
	for i, r := range rows {
		f.SetSheetRow("Ledger", "A"+strconv.Itoa(i+1), &r)
	}
	if err := f.SaveAs(book); err != nil {
		t.Fatal(err)
	}
	packPath := filepath.Join(dir, "journal.toml")
	text, err := Starter(context.Background(), book, packPath, StarterOptions{})
	if err != nil {
		t.Fatal(err)
	}
	s := string(text)
	for _, want := range []string{`sheet = "Ledger"`, `files = ["journal.xlsx"]`, `amount = "Amount"`} {
		if !strings.Contains(s, want) {
			t.Errorf("starter lacks %s:\n%s", want, s)
		}
	}
	os.WriteFile(packPath, text, 0o644)
	_, probs := Check(context.Background(), mustRead(t, packPath))
	if len(probs.Errors()) > 0 {
		t.Fatalf("%s\n%s", probs.Error(), s)
	}
	res, err := Run(context.Background(), mustRead(t, packPath), RunOptions{Out: filepath.Join(dir, "out")})
	if err != nil {
		t.Fatal(err)
	}
	c := res.Run.Summary.Completeness
	want := strconv.FormatInt(cents/100, 10) + "." + strconv.FormatInt(cents%100+100, 10)[1:]
	if c.RowsLoaded != 40 || c.RowsRejected != 0 || c.SumPositive != want {
		t.Errorf("completeness %+v, want 40 rows summing to %s", c, want)
	}
	// A sheet that is not there is a pack error naming the key.
	bad := strings.Replace(s, `sheet = "Ledger"`, `sheet = "Ledgr"`, 1)
	os.WriteFile(packPath, []byte(bad), 0o644)
	_, probs = Check(context.Background(), mustRead(t, packPath))
	if !strings.Contains(probs.Error(), "Ledgr") {
		t.Errorf("missing sheet: %s", probs.Error())
	}
}
