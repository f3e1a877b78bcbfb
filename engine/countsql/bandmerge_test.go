package countsql

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestBandFilesRefused: band count files that are not the band query's
// unchanged result are refused with the file, the line and the problem.
func TestBandFilesRefused(t *testing.T) {
	spec := Spec{Engine: "duckdb", Table: "t", Amount: "a", Scale: 2, Test: TestLimits, Limits: []float64{5000}}.WithDefaults()
	g, err := spec.grid()
	if err != nil {
		t.Fatal(err)
	}
	spec.Grid = g // thresholds 400000, 450000, 500000, 550000, 600000 units
	dir := t.TempDir()
	for _, c := range []struct{ name, body, want string }{
		{"battery", "kind,bin,n,sum_hi,sum_lo\nf,100,3,0,300\n", "digit battery's counts"},
		{"header", "kind,bin,n\nb,1,3\n", "line 1"},
		{"bin", "kind,bin,n,lo,hi\nb,9,3,700000,700001\n", "line 2: kind \"b\" with bin 9"},
		{"outside", "kind,bin,n,lo,hi\nb,1,3,400000,460000\n", "do not lie in bin 1"},
		{"code", "kind,bin,n,lo,hi\nx,-7,3,,\n", "line 2"},
		{"negative", "kind,bin,n,lo,hi\nb,1,-3,400000,400001\n", "line 2"},
	} {
		p := filepath.Join(dir, c.name+".csv")
		if err := os.WriteFile(p, []byte(c.body), 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := readBands([]string{p}, spec)
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), p) {
			t.Errorf("%s: error %v, want one naming %s and %q", c.name, err, p, c.want)
		}
	}
	// A file that is right merges: its counts land in the limit's bands.
	p := filepath.Join(dir, "ok.csv")
	body := "kind,bin,n,lo,hi\nb,1,5,400000,449999\nb,2,7,450000,499999\nb,3,2,500000,549999\nx,-3,4,,\n"
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	m, err := readBands([]string{p, p}, spec)
	if err != nil {
		t.Fatal(err)
	}
	groups, err := m.Groups(nil, []float64{4500, 5000, 5500})
	if err != nil {
		t.Fatal(err)
	}
	c := groups[0]
	// two copies: 2*5 below 4,500, 2*7 in [4500, 5000), 2*2 in [5000, 5500)
	if got := c.Bins.Counts; len(got) != 4 || got[0] != 10 || got[1] != 14 || got[2] != 4 || got[3] != 0 {
		t.Errorf("bins %v, want [10 14 4 0]", got)
	}
	if c.Tested != 28 || c.BelowMin != 8 || c.Rows != 36 || c.Min != 4000 || c.Max != 5499.99 {
		t.Errorf("counts %+v", c.Counts)
	}
	// An edge the query did not count is refused.
	if _, err := m.Groups(nil, []float64{4600}); err == nil || !strings.Contains(err.Error(), "not counted") {
		t.Errorf("edge 4600: error %v, want one saying it was not counted", err)
	}
}
