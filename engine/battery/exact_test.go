package battery

import (
	"context"
	"math/big"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/population"
	"github.com/parquet-go/parquet-go"
)

// boundary is one amount as a ledger writes it, with its digits worked out
// by hand from the definitions in doc.go (significant digits of |x| padded
// to three; last two digits at the ledger's scale). f3 == 0: zero.
type boundary struct {
	text string
	f3   int // first three significant digits
	l2   int // last two digits at scale 2
}

var boundaries = []boundary{
	{"10.00", 100, 0},
	{"99.99", 999, 99},
	{"100", 100, 0},
	{"0.10", 100, 10},
	{"0.29", 290, 29},
	{"0.01", 100, 1},
	{"0.05", 500, 5},
	{"5.00", 500, 0},
	{"4999.99", 499, 99},
	{"5000.00", 500, 0},
	{"-4999.99", 499, 99},
	{"-5000.00", 500, 0},
	{"1000000000000", 100, 0},         // 1e12
	{"1000000000000.01", 100, 1},      // just above 1e12
	{"99999999999999.99", 999, 99},    // the largest amount on the plain path (< 10^14)
	{"100000000000000.00", 100, 0},    // 10^14: the first amount on the split path
	{"123456789012345.67", 123, 67},   // split path
	{"9999999999999999.99", 999, 99},  // the largest DECIMAL(18,2)
	{"-9999999999999999.99", 999, 99}, // and its negative
	{"0", 0, 0},
	{"-0.00", 0, 0}, // negative zero
}

// TestBoundaryAmounts loads boundary amounts through the real loader (CSV)
// and checks that every one lands in its bin of every test, exactly.
// Expected bins are worked out by hand from the definitions (doc.go) and
// cross-checked against drill.DigitsOf, the drill-down's independent
// string-based statement of the same definitions. The amounts of 10^14
// and above make the scan take the guarded units expression (plain
// product below 10^14, integer and fraction scaled apart above); the other
// tests' ledgers take the plain product.
func TestBoundaryAmounts(t *testing.T) {
	ws := openWS(t)
	lines := []string{"amount"}
	for _, b := range boundaries {
		lines = append(lines, b.text)
	}
	rep := loadCSV(t, ws, "boundary.csv", lines, load.Options{})
	if rep.RowsLoaded != int64(len(boundaries)) {
		t.Fatalf("loaded %d of %d rows (rejects: %+v)", rep.RowsLoaded, len(boundaries), rep.Files[0].RejectReasons)
	}

	// Every sign, no minimum: each non-zero amount is tested once.
	r := run(t, ws, Options{Spec: population.Spec{Signs: "both", Min: "0"}, LastTwoAll: true})
	want := NewCounts()
	for _, b := range boundaries {
		if b.f3 == 0 {
			want.Left.Zero++
			continue
		}
		want.FirstThree[b.f3-100]++
		want.LastTwo[b.l2]++
		// The drill-down's definition agrees (from the decimal text).
		units, _ := new(big.Rat).SetString(b.text)
		units.Mul(units, big.NewRat(100, 1))
		bins, ok := drill.DigitsOf(units.Num())
		if !ok || bins[benford.FirstThree] != b.f3 || bins[benford.LastTwo] != b.l2 {
			t.Errorf("%s: drill.DigitsOf gives %v, hand-worked f3 %d l2 %d", b.text, bins, b.f3, b.l2)
		}
	}
	assertCounts(t, "both signs", r.Counts, want)
	if r.Exclusions.Zero != 2 || r.Tested != int64(len(boundaries)-2) || r.Rows != int64(len(boundaries)) {
		t.Errorf("exclusions %+v, tested %d, rows %d; want 2 zeros and %d tested of %d", r.Exclusions, r.Tested, r.Rows, len(boundaries)-2, len(boundaries))
	}
	// Derived tests: 0.29 is in first-digit bin 2, second-digit bin 9,
	// first-two bin 29; 4999.99 in 4, 9, 49; 5000.00 in 5, 0, 50.
	first := r.Counts.Bins(benford.FirstDigit)
	second := r.Counts.Bins(benford.SecondDigit)
	f2 := r.Counts.Bins(benford.FirstTwo)
	if first[1] != 1 || first[0] != 8 || first[4] != 4 || first[3] != 2 || first[8] != 4 {
		t.Errorf("first-digit counts %v", first)
	}
	if second[9] != 7 || second[0] != 11 || second[2] != 1 {
		t.Errorf("second-digit counts %v", second)
	}
	if f2[29-10] != 1 || f2[49-10] != 2 || f2[50-10] != 4 || f2[99-10] != 4 || f2[10-10] != 7 {
		t.Errorf("first-two counts %v", f2)
	}

	// Defaults: positive amounts of at least 10.00.
	d := run(t, ws, Options{})
	var pos, small int64
	for _, b := range boundaries {
		if b.f3 == 0 || b.text[0] == '-' {
			continue
		}
		r, _ := new(big.Rat).SetString(b.text)
		if r.Cmp(big.NewRat(10, 1)) < 0 {
			small++
		} else {
			pos++
		}
	}
	if d.Tested != pos || d.Exclusions.BelowMin != small || d.Exclusions.OtherSign != 3 || d.Exclusions.Zero != 2 {
		t.Errorf("defaults: tested %d (want %d), exclusions %+v (want %d below the minimum, 3 negative, 2 zero)", d.Tested, pos, d.Exclusions, small)
	}
	// 10.00 is at the minimum, hence tested; 5.00 is below it.
	if d.Counts.FirstThree[0] != 5 || d.Counts.FirstThree[400] != 1 {
		t.Errorf("defaults: first-three bin 100 holds %d (want 10.00, 100, 1e12, 1e12 + 0.01, 1e14: 5), bin 500 holds %d (want 5000.00 only: 1)",
			d.Counts.FirstThree[0], d.Counts.FirstThree[400])
	}

	// Negative amounts only, as absolute values.
	n := run(t, ws, Options{Spec: population.Spec{Signs: "negative", Min: "10"}})
	if n.Tested != 3 || n.Counts.FirstThree[499-100] != 1 || n.Counts.FirstThree[500-100] != 1 || n.Counts.FirstThree[999-100] != 1 {
		t.Errorf("negative: tested %d, counts 499/500/999 = %d/%d/%d; want 3 amounts, one each",
			n.Tested, n.Counts.FirstThree[399], n.Counts.FirstThree[400], n.Counts.FirstThree[899])
	}
}

func assertCounts(t *testing.T, label string, got, want *Counts) {
	t.Helper()
	for i := range want.FirstThree {
		if got.FirstThree[i] != want.FirstThree[i] {
			t.Errorf("%s: first-three bin %d: got %d, want %d", label, 100+i, got.FirstThree[i], want.FirstThree[i])
		}
	}
	for i := range want.LastTwo {
		if got.LastTwo[i] != want.LastTwo[i] {
			t.Errorf("%s: last-two bin %02d: got %d, want %d", label, i, got.LastTwo[i], want.LastTwo[i])
		}
	}
	if got.Left.Zero != want.Left.Zero {
		t.Errorf("%s: zeros: got %d, want %d", label, got.Left.Zero, want.Left.Zero)
	}
}

// doubleRow is a Parquet record whose amount is a binary float (DOUBLE).
type doubleRow struct {
	Amount float64 `parquet:"amount"`
}

// TestDoubleColumn loads amounts from a Parquet DOUBLE column: 0.29 is not
// exactly representable in binary (0.28999999999999998), yet it must land
// in first-three bin 290 and last-two bin 29, because the loader rounds it
// to the ledger's DECIMAL(18,2) and the battery reads the decimal.
func TestDoubleColumn(t *testing.T) {
	ws := openWS(t)
	vals := []float64{0.29, 0.1, 10, 99.99, 4999.99, 5000, 1e12, 0.57, 1.15, 2.675}
	path := filepath.Join(t.TempDir(), "double.parquet")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := parquet.NewGenericWriter[doubleRow](f)
	for _, v := range vals {
		if _, err := w.Write([]doubleRow{{v}}); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	if _, err := load.Load(context.Background(), ws, []string{path}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	r := run(t, ws, Options{Spec: population.Spec{Signs: "both", Min: "0"}, LastTwoAll: true})
	// Hand-worked: 0.29 -> 290/29, 0.1 -> 100/10, 10 -> 100/00,
	// 99.99 -> 999/99, 4999.99 -> 499/99, 5000 -> 500/00, 1e12 -> 100/00,
	// 0.57 -> 570/57, 1.15 -> 115/15; 2.675 (2.67499999... in binary)
	// rounds to 2.67 or 2.68 depending on the cast: either way first-three
	// 267 or 268, checked below as a pair.
	want := map[int]int64{290: 1, 100: 3, 999: 1, 499: 1, 500: 1, 570: 1, 115: 1}
	wantL2 := map[int]int64{29: 1, 10: 1, 0: 3, 99: 2, 57: 1, 15: 1}
	for bin, n := range want {
		if r.Counts.FirstThree[bin-100] != n {
			t.Errorf("first-three bin %d: got %d, want %d", bin, r.Counts.FirstThree[bin-100], n)
		}
	}
	for bin, n := range wantL2 {
		if r.Counts.LastTwo[bin] != n {
			t.Errorf("last-two bin %02d: got %d, want %d", bin, r.Counts.LastTwo[bin], n)
		}
	}
	if r.Counts.FirstThree[267-100]+r.Counts.FirstThree[268-100] != 1 {
		t.Errorf("2.675: not in first-three bin 267 or 268")
	}
	if r.Tested != int64(len(vals)) {
		t.Errorf("tested %d of %d", r.Tested, len(vals))
	}
}

// TestOtherScales runs boundary amounts through a DECIMAL(38,2) workspace
// (HUGEINT units, amounts far above 10^18) and a DECIMAL(18,6) one (where
// the plain product amount * 10^6 would overflow from 10^6 up, so the
// split path carries most amounts).
func TestOtherScales(t *testing.T) {
	t.Run("precision 38", func(t *testing.T) {
		ws := openWS(t)
		amounts := []boundary{
			{"123456789012345678901234567890.12", 123, 12},
			{"99999999999999999999999999999999999.99", 999, 99},
			{"100000000000000000000.00", 100, 0},
			{"999999999999999999.99", 999, 99},
			{"1000000000000000000.00", 100, 0},
			{"0.29", 290, 29},
			{"4999.99", 499, 99},
			{"-5000.00", 500, 0},
		}
		lines := []string{"amount"}
		for _, b := range amounts {
			lines = append(lines, b.text)
		}
		loadCSV(t, ws, "wide.csv", lines, load.Options{Precision: 38, Scale: 2})
		r := run(t, ws, Options{Spec: population.Spec{Signs: "both", Min: "0"}, LastTwoAll: true})
		want := NewCounts()
		for _, b := range amounts {
			want.FirstThree[b.f3-100]++
			want.LastTwo[b.l2]++
		}
		assertCounts(t, "DECIMAL(38,2)", r.Counts, want)
	})
	t.Run("scale 6", func(t *testing.T) {
		ws := openWS(t)
		amounts := []struct {
			text   string
			f3, l2 int
		}{
			{"1234567.123456", 123, 56},
			{"999999.999999", 999, 99}, // plain path: below 10^6
			{"1000000.000001", 100, 1}, // split path
			{"0.000290", 290, 90},      // 290 units
			{"9999999999.999999", 999, 99},
			{"-42.5", 425, 0},
		}
		lines := []string{"amount"}
		for _, b := range amounts {
			lines = append(lines, b.text)
		}
		loadCSV(t, ws, "scale6.csv", lines, load.Options{Scale: 6})
		r := run(t, ws, Options{Spec: population.Spec{Signs: "both", Min: "0"}, LastTwoAll: true})
		want := NewCounts()
		for _, b := range amounts {
			want.FirstThree[b.f3-100]++
			want.LastTwo[b.l2]++
		}
		assertCounts(t, "DECIMAL(18,6)", r.Counts, want)
		// Last two digits of the whole-currency part instead.
		u := run(t, ws, Options{Spec: population.Spec{Signs: "both", Min: "0"}, LastTwo: LastTwoUnits, LastTwoAll: true})
		// 1234567 -> 67, 999999 -> 99, 1000000 -> 00, 0 -> 00, 9999999999 -> 99, 42 -> 42
		wantU := map[int]int64{67: 1, 99: 2, 0: 2, 42: 1}
		for bin, n := range wantU {
			if u.Counts.LastTwo[bin] != n {
				t.Errorf("last two of units, bin %02d: got %d, want %d", bin, u.Counts.LastTwo[bin], n)
			}
		}
	})
}

// TestFirstThreeOf checks the Go statement of the digit rule against
// drill.DigitsOf (the drill-down's string-based statement) on random
// integers of every length up to 18 digits and on every power of ten and
// its neighbours.
func TestFirstThreeOf(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	check := func(u uint64) {
		bins, ok := drill.DigitsOf(new(big.Int).SetUint64(u))
		if got := FirstThreeOf(u); !ok || got != bins[benford.FirstThree] {
			t.Fatalf("FirstThreeOf(%d) = %d, drill.DigitsOf gives %d", u, got, bins[benford.FirstThree])
		}
	}
	p := uint64(1)
	for k := 0; k < 18; k++ {
		check(p)
		check(p + 1)
		if p > 1 {
			check(p - 1)
		}
		for i := 0; i < 1000; i++ {
			check(p + rng.Uint64N(9*p))
		}
		p *= 10
	}
	if FirstThreeOf(0) != 0 {
		t.Fatal("FirstThreeOf(0) must be 0")
	}
}
