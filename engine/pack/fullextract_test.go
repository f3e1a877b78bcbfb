package pack

import (
	"database/sql"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/output"
	"github.com/xuri/excelize/v2"
)

// An extract with more records than max_rows: results.json keeps the first
// max_rows and says where the rest is; tables/*.csv and .parquet and the
// workbook hold every record, and the records per bin are the battery's
// counts of those bins.
func TestExtractsAreComplete(t *testing.T) {
	text := strings.Replace(examplePack(true), "max_rows = 2000", "max_rows = 7", 1)
	path := packDir(t, text)
	out := filepath.Join(filepath.Dir(path), "out")
	res := mustRun(t, mustRead(t, path), out, false)
	ex := res.Run.Table("extract_first_two_bins")
	bins := res.Run.Table("digits_first_two")
	if ex == nil || bins == nil {
		t.Fatal("no extract or bins table")
	}
	if len(ex.Rows) != 7 || ex.RowsTotal <= 7 || !ex.Complete || !ex.Truncated ||
		!strings.Contains(ex.Note, "first 7 of") || !strings.Contains(ex.Note, "tables/extract_first_two_bins.csv") {
		t.Fatalf("rows %d of %d, complete %v, note %q", len(ex.Rows), ex.RowsTotal, ex.Complete, ex.Note)
	}
	fh, err := os.Open(filepath.Join(out, "tables", ex.Name+".csv"))
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(fh).ReadAll()
	fh.Close()
	if err != nil {
		t.Fatal(err)
	}
	if int64(len(recs)-1) != ex.RowsTotal {
		t.Fatalf("CSV holds %d records, the extract %d", len(recs)-1, ex.RowsTotal)
	}
	for c, col := range ex.Columns {
		if recs[0][c] != col.Name {
			t.Errorf("CSV column %d: %q, want %q", c, recs[0][c], col.Name)
		}
	}
	// The first rows are the ones results.json keeps.
	for i, row := range ex.Rows {
		for c, v := range row {
			if want := output.NeutralizeText(output.FormatValue(v)); recs[i+1][c] != want {
				t.Errorf("CSV row %d column %s: %q, results.json %q", i+1, ex.Columns[c].Name, recs[i+1][c], want)
			}
		}
	}
	perBin := map[string]int64{}
	for _, r := range recs[1:] {
		perBin[strings.TrimPrefix(r[0], "first_two bin ")]++
	}
	flaggedCol := -1
	for i, c := range bins.Columns {
		if c.Name == "flagged" {
			flaggedCol = i
		}
	}
	if flaggedCol < 0 {
		t.Fatal("the bins table has no flagged column")
	}
	flagged := 0
	for _, r := range bins.Rows {
		bin := r[0].(string)
		if n, ok := perBin[bin]; ok && n != r[1].(int64) {
			t.Errorf("bin %s: %d records in the CSV, the battery counted %d", bin, n, r[1])
		}
		if f, _ := r[flaggedCol].(bool); f {
			flagged++
		}
	}
	// The extract covers the flagged bins to follow up first: up to four.
	if len(perBin) != min(flagged, 4) || flagged == 0 {
		t.Errorf("records of %d bins, want the %d flagged (up to four): %v", len(perBin), flagged, perBin)
	}
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var n int64
	if err := db.QueryRow("SELECT count(*) FROM read_parquet(?)", filepath.Join(out, "tables", ex.Name+".parquet")).Scan(&n); err != nil || n != ex.RowsTotal {
		t.Errorf("Parquet holds %d records (%v), want %d", n, err, ex.RowsTotal)
	}
	f, err := excelize.OpenFile(filepath.Join(out, output.WorkbookFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, _ := f.GetRows(output.SheetNames(res.Run.Tables)[ex.Name])
	if int64(len(rows)-1) != ex.RowsTotal {
		t.Errorf("the sheet holds %d records, want %d", len(rows)-1, ex.RowsTotal)
	}
}
