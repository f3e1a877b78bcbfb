package pack

import (
	"encoding/csv"
	"encoding/json"
	"math/big"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/sample"
)

func readCSVFile(t *testing.T, path string) [][]string {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	recs, err := csv.NewReader(fh).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

// Samples of extracts: drawn again from the extract's CSV (in its order)
// with the seed the manifest records, a reviewer gets the same records; a
// second run gives the same sample; a monetary-unit sample holds every
// record of at least the interval, and the manifest records the method,
// seed, interval and population total.
func TestExtractSamples(t *testing.T) {
	text := examplePack(true)
	text = strings.Replace(text, "max_rows = 2000\n", "max_rows = 2000\nsample = \"random\"\nsample_size = 12\nseed = 3\n", 1)
	text = strings.Replace(text, "max_rows = 500\n", "max_rows = 500\nsample = \"monetary\"\nsample_size = 6\nseed = 9\n", 1)
	path := packDir(t, text)
	out := filepath.Join(filepath.Dir(path), "out")
	mustRun(t, mustRead(t, path), out, false)

	var man struct {
		Parameters struct {
			Extracts []ExtractPlan `json:"extracts"`
		} `json:"parameters"`
	}
	b, _ := os.ReadFile(filepath.Join(out, "manifest.json"))
	if err := json.Unmarshal(b, &man); err != nil {
		t.Fatal(err)
	}
	drawn := map[string]*SampleDrawn{}
	for _, e := range man.Parameters.Extracts {
		drawn[e.Name] = e.Drawn
	}
	for _, c := range []struct{ name, method string }{{"first_two_bins", "random"}, {"repeated_payments", "monetary"}} {
		d := drawn[c.name]
		if d == nil || d.Method != c.method {
			t.Fatalf("%s: manifest records %+v", c.name, d)
		}
		pop := readCSVFile(t, filepath.Join(out, "tables", "extract_"+c.name+".csv"))
		got := readCSVFile(t, filepath.Join(out, "tables", "extract_"+c.name+"_sample.csv"))
		col := -1
		for i, h := range pop[0] {
			if h == "amount" {
				col = i
			}
		}
		if int64(len(pop)-1) != d.PopulationRecords || strings.Join(got[0], ",") != strings.Join(pop[0], ",") {
			t.Fatalf("%s: population %d records, manifest %d; sample header %v", c.name, len(pop)-1, d.PopulationRecords, got[0])
		}
		sizes := make([]*big.Int, len(pop)-1)
		total := new(big.Int)
		for i, r := range pop[1:] {
			sizes[i], _ = new(big.Int).SetString(strings.Replace(strings.TrimPrefix(r[col], "-"), ".", "", 1), 10)
			total.Add(total, sizes[i])
		}
		if d.PopulationTotal != units(total) {
			t.Errorf("%s: population total %s, the CSV sums to %s", c.name, d.PopulationTotal, units(total))
		}
		var positions []int64
		if c.method == "random" {
			positions = sample.Random(int64(len(sizes)), d.Size, uint64(d.Seed))
		} else {
			res, err := sample.Monetary(sizes, d.Size, uint64(d.Seed))
			if err != nil {
				t.Fatal(err)
			}
			positions = res.Positions
			if d.Interval != units(res.Interval) || d.Start != units(res.Start) {
				t.Errorf("%s: interval %s start %s, redrawn %s %s", c.name, d.Interval, d.Start, units(res.Interval), units(res.Start))
			}
			for i, s := range sizes {
				if s.Cmp(res.Interval) >= 0 && !contains(positionsText(positions), itoa(i)) {
					t.Errorf("%s: record %d of |amount| %s ≥ the interval is not in the sample", c.name, i, s)
				}
			}
		}
		if len(got)-1 != len(positions) || d.Selected != len(positions) || len(positions) == 0 {
			t.Fatalf("%s: sample of %d, redrawn %d, manifest %d", c.name, len(got)-1, len(positions), d.Selected)
		}
		for i, p := range positions {
			if strings.Join(got[i+1], ",") != strings.Join(pop[p+1], ",") {
				t.Errorf("%s: sample row %d is %v, redrawn %v", c.name, i+1, got[i+1], pop[p+1])
			}
		}
	}
	first, _ := os.ReadFile(filepath.Join(out, "tables", "extract_first_two_bins_sample.csv"))
	mustRun(t, mustRead(t, path), out, false)
	second, _ := os.ReadFile(filepath.Join(out, "tables", "extract_first_two_bins_sample.csv"))
	if string(first) != string(second) {
		t.Error("a second run drew another sample")
	}
	bad := strings.Replace(examplePack(true), "max_rows = 500\n", "max_rows = 500\nsample = \"haphazard\"\n", 1)
	if _, probs := Check(t.Context(), mustRead(t, packDir(t, bad))); probs == nil || !strings.Contains(probs.Error(), `sample "haphazard"`) {
		t.Errorf("a wrong sampling method is not reported: %v", probs)
	}
}

func units(u *big.Int) string {
	s := u.String()
	for len(s) < 3 {
		s = "0" + s
	}
	return s[:len(s)-2] + "." + s[len(s)-2:]
}

func positionsText(p []int64) []string {
	out := make([]string, len(p))
	for i, x := range p {
		out[i] = itoa(int(x))
	}
	return out
}
