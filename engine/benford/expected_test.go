package benford

import (
	"math"
	"math/big"
	"testing"
)

func TestBins(t *testing.T) {
	for _, c := range []struct {
		t      Test
		lo, hi int
	}{
		{FirstDigit, 1, 9}, {SecondDigit, 0, 9}, {FirstTwo, 10, 99}, {FirstThree, 100, 999},
		{LastTwo, 0, 99}, {Summation, 10, 99}, {SecondOrder, 10, 99},
	} {
		lo, hi := c.t.Bins()
		if lo != c.lo || hi != c.hi || !c.t.Valid() || len(Expected(c.t)) != hi-lo+1 {
			t.Errorf("%s: bins %d..%d, want %d..%d", c.t, lo, hi, c.lo, c.hi)
		}
	}
	if Test("third").Valid() || Expected("third") != nil {
		t.Error("unknown test is valid")
	}
	if got := LastTwo.Label(5); got != "05" {
		t.Errorf("LastTwo.Label(5) = %q", got)
	}
	if got := FirstTwo.Label(10); got != "10" {
		t.Errorf("FirstTwo.Label(10) = %q", got)
	}
}

func TestParseTest(t *testing.T) {
	for in, want := range map[string]Test{
		"first": FirstDigit, "First-Digit": FirstDigit, "f1": FirstDigit,
		"second": SecondDigit, "d2": SecondDigit,
		"first_two": FirstTwo, "first-two": FirstTwo, "first two": FirstTwo, "F2": FirstTwo,
		"first_three": FirstThree, "f3": FirstThree,
		"last_two": LastTwo, "last-two-digits": LastTwo, "l2": LastTwo,
		"summation": Summation, "sum": Summation,
		"second_order": SecondOrder, "second-order": SecondOrder, " so ": SecondOrder,
	} {
		got, err := ParseTest(in)
		if err != nil || got != want {
			t.Errorf("ParseTest(%q) = %q, %v; want %q", in, got, err, want)
		}
	}
	for _, tt := range AllTests() {
		if got, err := ParseTest(string(tt)); err != nil || got != tt {
			t.Errorf("ParseTest(%q) = %q, %v", tt, got, err)
		}
	}
	if _, err := ParseTest("third"); err == nil {
		t.Error("ParseTest(third): no error")
	}
}

// TestExpectedPublished checks the expected proportions against the
// published tables: first digit, Benford (1938) and Nigrini (2012) to five
// places; second digit, Nigrini (2012), from memory.
func TestExpectedPublished(t *testing.T) {
	first := []float64{0.30103, 0.17609, 0.12494, 0.09691, 0.07918, 0.06695, 0.05799, 0.05115, 0.04576}
	second := []float64{0.11968, 0.11389, 0.10882, 0.10433, 0.10031, 0.09668, 0.09337, 0.09035, 0.08757, 0.08500}
	for _, c := range []struct {
		t    Test
		want []float64
	}{{FirstDigit, first}, {SecondDigit, second}} {
		got := Expected(c.t)
		for i := range c.want {
			if math.Abs(got[i]-c.want[i]) > 0.5e-5 {
				t.Errorf("%s bin %d: %.6f, published %.5f", c.t, i, got[i], c.want[i])
			}
		}
	}
	// Benford (1938) first-two: bin 10 is log10(1.1) = 0.04139, bin 99 is 0.00436.
	ft := Expected(FirstTwo)
	if math.Abs(ft[0]-0.04139) > 0.5e-5 || math.Abs(ft[89]-0.00436) > 0.5e-5 {
		t.Errorf("first-two: bin 10 %.6f, bin 99 %.6f", ft[0], ft[89])
	}
}

// TestExpectedSums checks that every test's proportions sum to 1 (the
// leading-digit sums telescope: Σ log10((d+1)/d) = log10(hi+1) - log10(lo)).
func TestExpectedSums(t *testing.T) {
	for _, tt := range AllTests() {
		var s float64
		for _, p := range Expected(tt) {
			s += p
		}
		if math.Abs(s-1) > 1e-13 {
			t.Errorf("%s: proportions sum to %.17g", tt, s)
		}
	}
}

// bigLnRatio returns ln(a/b) for integers a > b > 0 at the given
// precision, by ln(a/b) = 2 atanh((a-b)/(a+b)) = 2 Σ z^(2j+1)/(2j+1).
func bigLnRatio(a, b int64, prec uint) *big.Float {
	z := new(big.Float).SetPrec(prec).Quo(
		new(big.Float).SetPrec(prec).SetInt64(a-b),
		new(big.Float).SetPrec(prec).SetInt64(a+b))
	z2 := new(big.Float).SetPrec(prec).Mul(z, z)
	pow := new(big.Float).SetPrec(prec).Set(z)
	sum := new(big.Float).SetPrec(prec)
	eps := new(big.Float).SetPrec(prec).SetMantExp(big.NewFloat(1), -int(prec)-8)
	for j := int64(0); ; j++ {
		term := new(big.Float).SetPrec(prec).Quo(pow, new(big.Float).SetPrec(prec).SetInt64(2*j+1))
		sum.Add(sum, term)
		if term.Cmp(eps) < 0 {
			break
		}
		pow.Mul(pow, z2)
	}
	return sum.Mul(sum, big.NewFloat(2))
}

// TestExpectedExact checks Expected against log10(1 + 1/d) computed with
// math/big at 256 bits (ln 10 = 3 ln 2 + ln(5/4)), to 1e-15 absolute and
// 1e-14 relative; and the second-digit sums likewise.
func TestExpectedExact(t *testing.T) {
	const prec = 256
	ln10 := new(big.Float).SetPrec(prec).Mul(bigLnRatio(2, 1, prec), big.NewFloat(3))
	ln10.Add(ln10, bigLnRatio(5, 4, prec))
	exact := make(map[int]*big.Float)
	lead := func(d int) *big.Float {
		if v, ok := exact[d]; ok {
			return v
		}
		v := new(big.Float).SetPrec(prec).Quo(bigLnRatio(int64(d+1), int64(d), prec), ln10)
		exact[d] = v
		return v
	}
	check := func(name string, d int, got float64, want *big.Float) {
		w, _ := want.Float64()
		if math.Abs(got-w) > 1e-15 || math.Abs(got-w) > 1e-14*w {
			t.Errorf("%s %d: %.17g, exact %.17g", name, d, got, w)
		}
	}
	for _, tt := range []Test{FirstDigit, FirstTwo, FirstThree, SecondOrder} {
		lo, _ := tt.Bins()
		for i, p := range Expected(tt) {
			check(string(tt), lo+i, p, lead(lo+i))
		}
	}
	for d, p := range Expected(SecondDigit) {
		s := new(big.Float).SetPrec(prec)
		for k := 1; k <= 9; k++ {
			s.Add(s, lead(10*k+d))
		}
		check("second", d, p, s)
	}
	// log10(2) to 20 places, from memory: 0.30102999566398119521.
	w, _ := lead(1).Float64()
	if math.Abs(w-0.30102999566398119521) > 1e-16 {
		t.Errorf("big log10(2) = %.20f", w)
	}
}

// TestPowersOfTwoAndFibonacci runs the whole analysis on the leading
// digits of 2^n and of the Fibonacci numbers, computed exactly with
// math/big. Both sequences follow Benford's law in the limit (Diaconis
// 1977), and the leading digits of 2^n are equidistributed so evenly that
// the fit is far closer than any random sample's.
func TestPowersOfTwoAndFibonacci(t *testing.T) {
	const n = 3000
	for _, seq := range []string{"powers of two", "fibonacci"} {
		ft := make([]int64, 90)
		f1 := make([]int64, 9)
		a, b := big.NewInt(1), big.NewInt(1)
		for i := 0; i < n; i++ {
			var v *big.Int
			if seq == "powers of two" {
				v = new(big.Int).Lsh(big.NewInt(1), uint(i))
			} else {
				v = new(big.Int).Set(a)
				a.Add(a, b)
				a, b = b, a
			}
			s := v.Text(10)
			f1[s[0]-'1']++
			if len(s) >= 2 {
				ft[int(s[0]-'0')*10+int(s[1]-'0')-10]++
			}
		}
		r1, err := Analyze(FirstDigit, f1)
		if err != nil {
			t.Fatal(err)
		}
		if r1.Conformity != Close || r1.Flagged != 0 || r1.MAD > r1.ExpectedMAD/3 || r1.PValue < 0.5 {
			t.Errorf("%s first digit: conformity %s, MAD %.5f (expected for N %.5f), flagged %d, p %.3f",
				seq, r1.Conformity, r1.MAD, r1.ExpectedMAD, r1.Flagged, r1.PValue)
		}
		r2, _ := Analyze(FirstTwo, ft)
		if r2.Conformity != Close || r2.Flagged != 0 || r2.OutsideGoodman != 0 {
			t.Errorf("%s first-two: conformity %s, MAD %.5f, flagged %d", seq, r2.Conformity, r2.MAD, r2.Flagged)
		}
		t.Logf("%s, first %d terms: first-digit MAD %.5f (E[MAD] %.5f), first-two MAD %.5f (E[MAD] %.5f)",
			seq, n, r1.MAD, r1.ExpectedMAD, r2.MAD, r2.ExpectedMAD)
	}
}
