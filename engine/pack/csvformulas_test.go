package pack

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A check whose rows carry formula-like text: the table's CSV neutralises
// it by default (a leading '), numbers stay as they are, and
// csv_formulas = "keep" writes the text raw.
func TestPackCSVNeutralisesFormulas(t *testing.T) {
	check := `
[[check]]
name = "formula_text"
title = "Text that a spreadsheet would run"
sql = """
SELECT '=HYPERLINK("http://x.example","open")' AS note, '@SUM(A1:A2)' AS other, amount
FROM ledger WHERE amount < 0 ORDER BY row_id LIMIT 3
"""
`
	for _, keep := range []bool{false, true} {
		text := examplePack(true) + check
		if keep {
			text = strings.Replace(text, "[pack]\n", "[pack]\ncsv_formulas = \"keep\"\n", 1)
		}
		path := packDir(t, text)
		out := filepath.Join(filepath.Dir(path), "out")
		mustRun(t, mustRead(t, path), out, false)
		fh, err := os.Open(filepath.Join(out, "tables", "check_formula_text.csv"))
		if err != nil {
			t.Fatal(err)
		}
		recs, err := csv.NewReader(fh).ReadAll()
		fh.Close()
		if err != nil {
			t.Fatal(err)
		}
		if len(recs) != 4 {
			t.Fatalf("keep=%v: %d records", keep, len(recs))
		}
		for _, r := range recs[1:] {
			note, other := `'=HYPERLINK("http://x.example","open")`, "'@SUM(A1:A2)"
			if keep {
				note, other = note[1:], other[1:]
			}
			if r[0] != note || r[1] != other || !strings.HasPrefix(r[2], "-") {
				t.Errorf("keep=%v: %q", keep, r)
			}
		}
	}
	p := mustRead(t, packDir(t, strings.Replace(examplePack(true), "[pack]\n", "[pack]\ncsv_formulas = \"raw\"\n", 1)))
	if _, probs := Check(t.Context(), p); probs == nil || !strings.Contains(probs.Error(), `csv_formulas "raw"`) {
		t.Errorf("a wrong csv_formulas is not reported: %v", probs)
	}
}
