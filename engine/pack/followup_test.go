package pack

import (
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/xuri/excelize/v2"
)

// The follow-up round trip of a pack: the extract, its sample and their
// sheets carry the empty follow-up columns; the team fills two rows of
// the sample's CSV (and adds one naming no record), leadline reads it
// back (rows read = stored + refused, the refused row named by its line),
// and the next run's workbook (read back with excelize) shows the records
// by status, the items, each record's note and the refused row.
func TestFollowupRoundTrip(t *testing.T) {
	text := strings.Replace(examplePack(true), "max_rows = 500\n", "max_rows = 500\nsample = \"random\"\nsample_size = 6\nseed = 4\n", 1)
	path := packDir(t, text)
	out := filepath.Join(filepath.Dir(path), "out")
	res := mustRun(t, mustRead(t, path), out, false)

	samplePath := filepath.Join(out, "tables", "extract_repeated_payments_sample.csv")
	for _, name := range []string{"extract_repeated_payments.csv", "extract_repeated_payments_sample.csv"} {
		recs := readCSVFile(t, filepath.Join(out, "tables", name))
		head := recs[0]
		if strings.Join(head[len(head)-4:], ",") != strings.Join(followup.Columns, ",") {
			t.Fatalf("%s: header ends %v", name, head[len(head)-4:])
		}
		for _, r := range recs[1:] {
			if strings.Join(r[len(r)-4:], "") != "" {
				t.Fatalf("%s: follow-up cells filled: %v", name, r[len(r)-4:])
			}
		}
	}
	wb, err := excelize.OpenFile(filepath.Join(out, output.WorkbookFile))
	if err != nil {
		t.Fatal(err)
	}
	sheet := output.SheetNames(res.Run.Tables)["extract_repeated_payments_sample"]
	rows, _ := wb.GetRows(sheet)
	wb.Close()
	if len(rows) < 2 || rows[0][len(rows[0])-4] != output.Heading(followup.Status) {
		t.Fatalf("sheet %s header: %v", sheet, rows)
	}

	// The team's returned file: two rows filled, one row naming no record.
	recs := readCSVFile(t, samplePath)
	head := recs[0]
	col := map[string]int{}
	for i, h := range head {
		col[h] = i
	}
	recs[1][col[followup.Status]], recs[1][col[followup.Note]], recs[1][col[followup.Reviewer]] = "Explained", "agreed to the supplier's statement", "AB"
	recs[2][col[followup.Status]], recs[2][col[followup.Note]] = "exception", "paid twice, credit note asked"
	bad := append([]string(nil), recs[3]...)
	bad[col["line"]] = "999999999"
	recs = append(recs, bad)
	returned := filepath.Join(t.TempDir(), "returned.csv")
	fh, err := os.Create(returned)
	if err != nil {
		t.Fatal(err)
	}
	cw := csv.NewWriter(fh)
	cw.WriteAll(recs)
	fh.Close()

	ctx := context.Background()
	ws, err := workspace.Open(ctx, res.Plan.Workspace, workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	got, err := followup.Read(ctx, ws, []string{returned}, followup.Options{})
	ws.Close()
	if err != nil {
		t.Fatal(err)
	}
	fr := got[0]
	if fr.RowsRead != int64(len(recs)-1) || fr.RowsStored != fr.RowsRead-1 || fr.RowsRefused != 1 || fr.Filled != 2 {
		t.Fatalf("read %d, stored %d, refused %d, filled %d; want %d, %d, 1, 2", fr.RowsRead, fr.RowsStored, fr.RowsRefused, fr.Filled, len(recs)-1, len(recs)-2)
	}
	if len(fr.Refusals) != 1 || fr.Refusals[0].Line != int64(len(recs)) || !strings.Contains(fr.Refusals[0].Reason, "no loaded record at line 999999999") {
		t.Fatalf("refusals %+v, want line %d", fr.Refusals, len(recs))
	}

	res2 := mustRun(t, mustRead(t, path), out, false)
	wb, err = excelize.OpenFile(filepath.Join(out, output.WorkbookFile))
	if err != nil {
		t.Fatal(err)
	}
	defer wb.Close()
	names := output.SheetNames(res2.Run.Tables)
	status, err := wb.GetRows(names["followup_status"])
	if err != nil {
		t.Fatal(err)
	}
	counts := map[string]string{}
	for _, r := range status[1:] {
		counts[r[0]] = r[1]
	}
	notEntered := itoa(len(recs) - 1 - 1 - 2)
	if counts["explained"] != "1" || counts["exception"] != "1" || counts[followup.NotEntered] != notEntered {
		t.Errorf("status sheet %v, want explained 1, exception 1, %s %s", status, followup.NotEntered, notEntered)
	}
	items, _ := wb.GetRows(names["followup_items"])
	if len(items) < 2 || !strings.Contains(strings.Join(items[1], "|"), "explained 1") {
		t.Errorf("items sheet %v", items)
	}
	rec, _ := wb.GetRows(names["followup_records"])
	var notes []string
	for _, r := range rec {
		notes = append(notes, strings.Join(r, "|"))
	}
	if !strings.Contains(strings.Join(notes, "\n"), "paid twice, credit note asked") {
		t.Errorf("records sheet lacks the note:\n%s", strings.Join(notes, "\n"))
	}
	refused, _ := wb.GetRows(names["followup_refused"])
	if len(refused) != 2 || !strings.Contains(strings.Join(refused[1], "|"), "999999999") {
		t.Errorf("refused sheet %v", refused)
	}
}
