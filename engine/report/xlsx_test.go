package report

import (
	"archive/zip"
	"io"
	"math"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/xuri/excelize/v2"
)

// zipParts reads every part of a saved workbook.
func zipParts(t *testing.T, path string) map[string]string {
	t.Helper()
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer zr.Close()
	parts := map[string]string{}
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		b, _ := io.ReadAll(rc)
		rc.Close()
		parts[f.Name] = strings.ReplaceAll(string(b), "&#39;", "'")
	}
	return parts
}

func TestAddDigitCharts(t *testing.T) {
	first, err := benford.Analyze(benford.FirstDigit, []int64{4000, 1500, 1200, 850, 750, 650, 520, 480, 440})
	if err != nil {
		t.Fatal(err)
	}
	firstTwo, err := benford.Analyze(benford.FirstTwo, plantedFirstTwo())
	if err != nil {
		t.Fatal(err)
	}
	second, err := benford.Analyze(benford.SecondDigit, []int64{1200, 1130, 1090, 1040, 1000, 970, 940, 910, 880, 850})
	if err != nil {
		t.Fatal(err)
	}
	f := excelize.NewFile()
	// A sheet of the same name already there: the chart goes beside it.
	if _, err := f.NewSheet("chart_first"); err != nil {
		t.Fatal(err)
	}
	sheets, err := AddDigitCharts(f, []benford.Result{second, firstTwo, first})
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(sheets, ",") != "chart_first_2,chart_first_two" {
		t.Fatalf("sheets %v", sheets)
	}
	path := filepath.Join(t.TempDir(), "w.xlsx")
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
	f.Close()

	// The data read back with excelize.
	g, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	for i, r := range []benford.Result{first, firstTwo} {
		rows, err := g.GetRows(sheets[i])
		if err != nil {
			t.Fatal(err)
		}
		if len(rows) != len(r.Bins)+1 || rows[0][0] != "Bin" || rows[0][7] != "Flagged" {
			t.Fatalf("%s: %d rows, header %v", sheets[i], len(rows), rows[0])
		}
		// The data sheet filters and reads its flags as words.
		filter := false
		for _, dn := range g.GetDefinedName() {
			filter = filter || dn.Name == "_xlnm._FilterDatabase" && dn.Scope == sheets[i] &&
				strings.HasSuffix(dn.RefersTo, "$A$1:$H$"+strconv.Itoa(len(r.Bins)+1))
		}
		if !filter {
			t.Errorf("%s: no autofilter over the bins: %+v", sheets[i], g.GetDefinedName())
		}
		flagged := 0
		for j, b := range r.Bins {
			row := rows[j+1]
			if row[0] != b.Label || row[1] != strconv.FormatInt(b.Count, 10) {
				t.Errorf("%s row %d: %v, want bin %s count %d", sheets[i], j, row, b.Label, b.Count)
			}
			// Exactly one of the two observed columns is filled.
			v, _ := g.GetCellValue(sheets[i], "D"+strconv.Itoa(j+2), excelize.Options{RawCellValue: true})
			w, _ := g.GetCellValue(sheets[i], "C"+strconv.Itoa(j+2), excelize.Options{RawCellValue: true})
			if (v != "") != b.Flagged || (w != "") == b.Flagged {
				t.Errorf("%s bin %s: within %q, flagged %q; flagged %v", sheets[i], b.Label, w, v, b.Flagged)
			}
			got := v + w
			// Excel keeps 15 significant digits.
			if x, err := strconv.ParseFloat(got, 64); err != nil || math.Abs(x-b.Actual) > 1e-14*b.Actual {
				t.Errorf("%s bin %s: observed %q, want %v", sheets[i], b.Label, got, b.Actual)
			}
			if b.Flagged {
				flagged++
			}
			if want := map[bool]string{true: "flagged", false: ""}[b.Flagged]; len(row) > 7 && row[7] != want || len(row) <= 7 && want != "" {
				t.Errorf("%s bin %s: flag %v, want %q", sheets[i], b.Label, row, want)
			}
		}
		if flagged != r.Flagged || flagged == 0 {
			t.Errorf("%s: %d flagged rows, want %d (and some)", sheets[i], flagged, r.Flagged)
		}
	}

	// The charts, read from the saved package's XML parts: one per sheet,
	// columns and lines combined, series pointing at the sheet's cells.
	parts := zipParts(t, path)
	var charts []string
	for name := range parts {
		if regexp.MustCompile(`^xl/charts/chart\d+\.xml$`).MatchString(name) {
			charts = append(charts, name)
		}
	}
	if len(charts) != 2 {
		t.Fatalf("%d chart parts, want 2: %v", len(charts), charts)
	}
	for _, sheet := range sheets {
		var xml string
		for _, c := range charts {
			if strings.Contains(parts[c], "'"+sheet+"'!$C$2") {
				xml = parts[c]
			}
		}
		if xml == "" {
			t.Errorf("no chart reads the cells of %s", sheet)
			continue
		}
		for _, want := range []string{"<barChart>", "<lineChart>", `<varyColors val="0">`, "'" + sheet + "'!$D$2", "'" + sheet + "'!$E$2", "'" + sheet + "'!$F$2", "'" + sheet + "'!$G$2", "E69F00", "0072B2", `prstDash val="dash"`} {
			if !strings.Contains(xml, want) {
				t.Errorf("chart of %s lacks %s", sheet, want)
			}
		}
		if n := strings.Count(xml, "<ser>"); n != 5 {
			t.Errorf("chart of %s: %d series, want 5 (within, flagged, expected, lower, upper)", sheet, n)
		}
	}
}
