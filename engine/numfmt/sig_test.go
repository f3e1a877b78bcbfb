package numfmt

import (
	"math"
	"math/big"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

func TestSigExamples(t *testing.T) {
	for _, c := range []struct {
		x    float64
		n    int
		want string
	}{
		{4293.93, 4, "4,294"},
		{0.00021, 4, "0.0002100"},
		{0.0001, 4, "0.0001000"},
		{0.00009999, 4, "9.999e-05"},
		{2.5e-7, 4, "2.500e-07"},
		{999.96, 4, "1,000"},  // rounding carries into a new digit
		{9.99951, 4, "10.00"}, // and the decimals follow the new exponent
		{-1.5, 4, "-1.500"},
		{123456789, 4, "123,500,000"},
		{999999999, 4, "1.000e+09"}, // rounds up past the plain range
		{1.5e9, 4, "1.500e+09"},
		{0.05, 4, "0.05000"},
		{28.71, 4, "28.71"},
		{0, 4, "0"},
		{7, 0, "7"}, // n below 1 is 1
		{math.NaN(), 4, "n/a"},
		{math.Inf(-1), 4, "n/a"},
	} {
		if got := Sig(c.x, c.n); got != c.want {
			t.Errorf("Sig(%v, %d) = %q, want %q", c.x, c.n, got, c.want)
		}
	}
	if P(0) != "< 1e-300" || P(0.041234) != "0.04123" || P(1) != "1.000" || P(3.2e-42) != "3.200e-42" {
		t.Errorf("P: %q %q %q %q", P(0), P(0.041234), P(1), P(3.2e-42))
	}
}

// TestSigAgainstBig: the digits and the place of the decimal point agree
// with math/big's exact decimal rendering of the same float (big.Float
// Text 'e' rounds the exact binary value half to even, as Sig must), over
// random values of every magnitude and 1 to 8 significant figures.
func TestSigAgainstBig(t *testing.T) {
	rng := rand.New(rand.NewPCG(19, 7))
	for i := 0; i < 200000; i++ {
		x := (rng.Float64()*2 - 1) * math.Pow(10, float64(rng.IntN(30)-15))
		if i%7 == 0 { // values on a rounding edge: few digits, then a half
			x = math.Round(x*1e4)/1e4 + 0.00005
		}
		n := 1 + rng.IntN(8)
		ref := new(big.Float).SetPrec(200).SetFloat64(x).Text('e', n-1)
		got := Sig(x, n)
		if want := fromBigE(ref); got != want {
			t.Fatalf("Sig(%v, %d) = %q; math/big gives %s, i.e. %q", x, n, got, ref, want)
		}
		// The text reads back to the value within half a unit of its last digit.
		back, err := strconv.ParseFloat(strings.ReplaceAll(got, ",", ""), 64)
		if err != nil {
			t.Fatalf("Sig(%v, %d) = %q does not read back: %v", x, n, got, err)
		}
		exp := math.Floor(math.Log10(math.Abs(back)))
		if math.Abs(back-x) > 0.5000001*math.Pow(10, exp-float64(n-1)) {
			t.Fatalf("Sig(%v, %d) = %q is more than half a unit of the last digit away", x, n, got)
		}
	}
}

// fromBigE writes math/big's "d.ddde±XX" the way Sig lays it out: plain
// with thousands separators from 1e-4 to below 1e9, the exponent form
// (two exponent digits at least, as strconv writes it) elsewhere.
func fromBigE(ref string) string {
	mant, expText, _ := strings.Cut(ref, "e")
	exp, _ := strconv.Atoi(expText)
	neg := strings.HasPrefix(mant, "-")
	mant = strings.TrimPrefix(mant, "-")
	sign := ""
	if neg {
		sign = "-"
	}
	if exp < -4 || exp >= 9 {
		es := strconv.Itoa(abs(exp))
		if len(es) < 2 {
			es = "0" + es
		}
		return sign + mant + "e" + map[bool]string{true: "-", false: "+"}[exp < 0] + es
	}
	digits := strings.Replace(mant, ".", "", 1)
	// value = digits * 10^(exp+1-len(digits)), exactly, as a fraction.
	k := exp + 1 - len(digits)
	d, _ := new(big.Int).SetString(digits, 10)
	r := new(big.Rat).SetInt(d)
	p := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(abs(k))), nil)
	if k >= 0 {
		r.Mul(r, new(big.Rat).SetInt(p))
	} else {
		r.Quo(r, new(big.Rat).SetInt(p))
	}
	return sign + Group(r.FloatString(max(0, -k)))
}

func abs(n int) int {
	if n < 0 {
		return -n
	}
	return n
}

func TestMoney(t *testing.T) {
	for in, want := range map[string]string{
		"1234567.5": "1,234,567.50", "-1234": "-1,234.00", "12.": "12.00", "0.125": "0.125",
		"60038034.26": "60,038,034.26", "n/a": "n/a", "1e5": "1e5",
	} {
		if got := Money(in); got != want {
			t.Errorf("Money(%q) = %q, want %q", in, got, want)
		}
	}
	// 9999.995 is held as 9999.99500000000080035... (its exact binary
	// value, big.Float Text 'f' 30), above the half: it rounds up.
	if exact := new(big.Float).SetFloat64(9999.995).Text('f', 30); !strings.HasPrefix(exact, "9999.995000000000800") {
		t.Fatalf("the float's exact value is %s", exact)
	}
	if got := MoneyFloat(9999.995); got != "10,000.00" {
		t.Errorf("MoneyFloat(9999.995) = %q", got)
	}
	if got := MoneyFloat(-25000); got != "-25,000.00" {
		t.Errorf("MoneyFloat(-25000) = %q", got)
	}
}
