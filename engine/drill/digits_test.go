package drill_test

import (
	"context"
	"math/big"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// binsOf evaluates BinPredicate for every bin of every drillable test over
// the given amounts (text at the type's scale) and returns, per amount, the
// bins that matched.
func binsOf(t *testing.T, at population.AmountType, signs string, amounts []string) []map[benford.Test][]int {
	t.Helper()
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	if _, err := ws.Conn.ExecContext(ctx, "CREATE TEMP TABLE t (i INTEGER, amount "+at.SQL()+")"); err != nil {
		t.Fatal(err)
	}
	for i, a := range amounts {
		if _, err := ws.Conn.ExecContext(ctx, "INSERT INTO t VALUES (?, CAST(? AS "+at.SQL()+"))", i, a); err != nil {
			t.Fatalf("%s: %v", a, err)
		}
	}
	out := make([]map[benford.Test][]int, len(amounts))
	for i := range out {
		out[i] = map[benford.Test][]int{}
	}
	for _, test := range drill.DrillTests {
		lo, hi := test.Bins()
		for b := lo; b <= hi; b++ {
			p, err := drill.BinPredicate(test, b, population.AbsSQL(signs, "amount"), at)
			if err != nil {
				t.Fatal(err)
			}
			rows, err := ws.Conn.QueryContext(ctx, "SELECT i FROM t WHERE "+p)
			if err != nil {
				t.Fatalf("%s: %v", test, err)
			}
			for rows.Next() {
				var i int
				if err := rows.Scan(&i); err != nil {
					t.Fatal(err)
				}
				out[i][test] = append(out[i][test], b)
			}
			rows.Close()
		}
	}
	return out
}

// TestDigitBinsHandComputed checks each amount lands in exactly one bin of
// each test, the bin computed by hand from the definitions (docs/design.md,
// "Exact amounts": 0.29, 10.00, 9999.99 must land in the right bins; the
// worked examples 0.5 -> first-three 500 and 1234.56 -> last-two 56).
func TestDigitBinsHandComputed(t *testing.T) {
	type want struct {
		amount                       string
		first, second, f2, f3, last2 int
	}
	cases := []want{
		// amount      first second f2  f3   last-two
		{"10.00", 1, 0, 10, 100, 0},
		{"99.99", 9, 9, 99, 999, 99},
		{"0.29", 2, 9, 29, 290, 29},
		{"4999.99", 4, 9, 49, 499, 99},
		{"5000.00", 5, 0, 50, 500, 0},
		{"0.50", 5, 0, 50, 500, 50},
		{"0.05", 5, 0, 50, 500, 5},
		{"0.01", 1, 0, 10, 100, 1},
		{"9.99", 9, 9, 99, 999, 99},
		{"100.00", 1, 0, 10, 100, 0},
		{"1234.56", 1, 2, 12, 123, 56},
		{"1847.23", 1, 8, 18, 184, 23},
		{"-47.50", 4, 7, 47, 475, 50},
		{"-0.01", 1, 0, 10, 100, 1},
		{"-9999.99", 9, 9, 99, 999, 99},
		{"1000000.00", 1, 0, 10, 100, 0},
		{"9999999999999999.99", 9, 9, 99, 999, 99}, // the largest DECIMAL(18,2)
		{"1000000000000000.00", 1, 0, 10, 100, 0},
		{"0.00", 0, 0, 0, 0, 0}, // zero: no bin of any test
	}
	var amounts []string
	for _, c := range cases {
		amounts = append(amounts, c.amount)
	}
	got := binsOf(t, population.AmountType{Precision: 18, Scale: 2}, "both", amounts)
	for i, c := range cases {
		w := map[benford.Test]int{benford.FirstDigit: c.first, benford.SecondDigit: c.second, benford.FirstTwo: c.f2, benford.FirstThree: c.f3, benford.LastTwo: c.last2}
		for _, test := range drill.DrillTests {
			bins := got[i][test]
			if c.amount == "0.00" {
				if len(bins) != 0 {
					t.Errorf("0.00: %s bins %v, want none", test, bins)
				}
				continue
			}
			if len(bins) != 1 || bins[0] != w[test] {
				t.Errorf("%s: %s bins %v, want [%d]", c.amount, test, bins, w[test])
			}
		}
	}
}

// TestDigitBinsOtherScales: scale 0 and scale 3, by hand (1234 -> last two
// 34; 7 -> first three 700; 0.125 at scale 3 -> last two 25).
func TestDigitBinsOtherScales(t *testing.T) {
	got := binsOf(t, population.AmountType{Precision: 18, Scale: 0}, "positive", []string{"1234", "7", "100", "99"})
	wants := []map[benford.Test]int{
		{benford.FirstDigit: 1, benford.SecondDigit: 2, benford.FirstTwo: 12, benford.FirstThree: 123, benford.LastTwo: 34},
		{benford.FirstDigit: 7, benford.SecondDigit: 0, benford.FirstTwo: 70, benford.FirstThree: 700, benford.LastTwo: 7},
		{benford.FirstDigit: 1, benford.SecondDigit: 0, benford.FirstTwo: 10, benford.FirstThree: 100, benford.LastTwo: 0},
		{benford.FirstDigit: 9, benford.SecondDigit: 9, benford.FirstTwo: 99, benford.FirstThree: 990, benford.LastTwo: 99},
	}
	for i, w := range wants {
		for test, b := range w {
			if bins := got[i][test]; len(bins) != 1 || bins[0] != b {
				t.Errorf("scale 0, amount %d: %s bins %v, want [%d]", i, test, bins, b)
			}
		}
	}
	got = binsOf(t, population.AmountType{Precision: 18, Scale: 3}, "positive", []string{"0.125", "12.005"})
	wants = []map[benford.Test]int{
		{benford.FirstDigit: 1, benford.SecondDigit: 2, benford.FirstTwo: 12, benford.FirstThree: 125, benford.LastTwo: 25},
		{benford.FirstDigit: 1, benford.SecondDigit: 2, benford.FirstTwo: 12, benford.FirstThree: 120, benford.LastTwo: 5},
	}
	for i, w := range wants {
		for test, b := range w {
			if bins := got[i][test]; len(bins) != 1 || bins[0] != b {
				t.Errorf("scale 3, amount %d: %s bins %v, want [%d]", i, test, bins, b)
			}
		}
	}
}

// TestDigitBinsAgainstText: random amounts and every power-of-ten edge
// (10^k - 1, 10^k, 10^k + 1 units) land in the bin that the digits of their
// decimal text give (DigitsOf, an independent string computation), at
// DECIMAL(18,2) and DECIMAL(38,2).
func TestDigitBinsAgainstText(t *testing.T) {
	for _, at := range []population.AmountType{{Precision: 18, Scale: 2}, {Precision: 38, Scale: 2}} {
		r := rand.New(rand.NewPCG(1, 2))
		var units []*big.Int
		max := new(big.Int).Sub(new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(at.Precision)), nil), big.NewInt(1))
		for k := 0; k < at.Precision; k++ {
			p := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(k)), nil)
			for _, d := range []int64{-1, 0, 1} {
				u := new(big.Int).Add(p, big.NewInt(d))
				if u.Sign() > 0 && u.Cmp(max) <= 0 {
					units = append(units, u)
				}
			}
		}
		units = append(units, max)
		for range 300 {
			digits := 1 + r.IntN(at.Precision)
			var b strings.Builder
			for j := 0; j < digits; j++ {
				b.WriteByte(byte('0' + r.IntN(10)))
			}
			u, _ := new(big.Int).SetString(b.String(), 10)
			if u.Sign() > 0 {
				units = append(units, u)
			}
		}
		var amounts []string
		for _, u := range units {
			amounts = append(amounts, at.Text(u))
		}
		got := binsOf(t, at, "positive", amounts)
		for i, u := range units {
			want, _ := drill.DigitsOf(u)
			for _, test := range drill.DrillTests {
				if bins := got[i][test]; len(bins) != 1 || bins[0] != want[test] {
					t.Errorf("%s %s: %s bins %v, want [%d]", at.SQL(), amounts[i], test, bins, want[test])
				}
			}
		}
	}
}

// TestCheckBin: bins that do not exist for a test are refused with the
// test's range (the project's bad-input rule: a refusal names what is allowed).
func TestCheckBin(t *testing.T) {
	for _, c := range []struct {
		test string
		bin  int
		want string
	}{
		{"first_two", 5, "--bin 5 does not exist for the first-two digits test: its bins are 10 to 99"},
		{"first_two", 100, "--bin 100 does not exist for the first-two digits test: its bins are 10 to 99"},
		{"first", 0, "its bins are 1 to 9"},
		{"second", 10, "its bins are 0 to 9"},
		{"first_three", 99, "its bins are 100 to 999"},
		{"last_two", -1, "its bins are 0 to 99"},
		{"fourth", 1, `--test "fourth": give one of first, second, first_two, first_three, last_two`},
		{"second_order", 12, "not records"},
	} {
		_, err := drill.CheckBin(c.test, c.bin)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s %d: %v, want %q", c.test, c.bin, err, c.want)
		}
	}
	for _, c := range []struct {
		test string
		bin  int
	}{{"first", 1}, {"second", 0}, {"first_two", 10}, {"first_two", 99}, {"first_three", 999}, {"last_two", 0}, {"summation", 47}} {
		if _, err := drill.CheckBin(c.test, c.bin); err != nil {
			t.Errorf("%s %d: %v", c.test, c.bin, err)
		}
	}
}

// TestLastTwoUnits: the battery's "units" reading of the last-two digits,
// by hand: 1234.56 -> 34, 0.50 -> 0, 99.99 -> 99, 100.00 -> 0, -47.50 -> 47.
func TestLastTwoUnits(t *testing.T) {
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	at := population.AmountType{Precision: 18, Scale: 2}
	for _, c := range []struct {
		amount string
		bin    int
	}{{"1234.56", 34}, {"0.50", 0}, {"99.99", 99}, {"100.00", 0}, {"-47.50", 47}, {"5000.01", 0}} {
		var hits []int
		for b := 0; b <= 99; b++ {
			p, err := drill.BinPredicateReading(benford.LastTwo, b, "abs(amount)", at, drill.LastTwoUnits)
			if err != nil {
				t.Fatal(err)
			}
			var ok bool
			if err := ws.Conn.QueryRowContext(ctx, "SELECT "+p+" FROM (SELECT CAST(? AS DECIMAL(18,2)) AS amount)", c.amount).Scan(&ok); err != nil {
				t.Fatal(err)
			}
			if ok {
				hits = append(hits, b)
			}
		}
		if len(hits) != 1 || hits[0] != c.bin {
			t.Errorf("%s: units last-two bins %v, want [%d]", c.amount, hits, c.bin)
		}
	}
}
