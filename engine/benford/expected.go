package benford

import "math"

// Expected returns the expected proportions of test t; index i is bin lo+i
// where lo, _ = t.Bins(). The slice is a fresh copy. It returns nil for an
// unknown test.
//
// The formulas (Benford 1938; Hill 1995):
//
//	first digit d = 1..9:            p = log10(1 + 1/d)
//	second digit d = 0..9:           p = Σ_{k=1..9} log10(1 + 1/(10k + d))
//	first-two digits d = 10..99:     p = log10(1 + 1/d)
//	first-three digits d = 100..999: p = log10(1 + 1/d)
//	last-two digits 00..99:          p = 0.01
//	summation test, bins 10..99:     p = 1/90 (share of the total absolute amount)
//	second-order test, bins 10..99:  p = log10(1 + 1/d) (Nigrini and Miller 2009)
//
// log10(1 + 1/d) is computed as log1p(1/d)/ln 10, which is accurate to a few
// units in the last place; the tests check it against math/big.
func Expected(t Test) []float64 {
	lo, hi := t.Bins()
	if hi < lo {
		return nil
	}
	p := make([]float64, hi-lo+1)
	for i := range p {
		d := lo + i
		switch t {
		case FirstDigit, FirstTwo, FirstThree, SecondOrder:
			p[i] = leading(d)
		case SecondDigit:
			p[i] = secondDigit(d)
		case LastTwo:
			p[i] = 0.01
		case Summation:
			p[i] = 1.0 / 90
		}
	}
	return p
}

// leading returns log10(1 + 1/d), the Benford probability that an amount's
// significant digits begin with the digit string d (d >= 1).
func leading(d int) float64 {
	return math.Log1p(1/float64(d)) / math.Ln10
}

// secondDigit returns Σ_{k=1..9} log10(1 + 1/(10k + d)).
func secondDigit(d int) float64 {
	var s float64
	for k := 1; k <= 9; k++ {
		s += leading(10*k + d)
	}
	return s
}
