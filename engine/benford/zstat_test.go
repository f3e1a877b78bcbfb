package benford

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestZStat checks the Z-statistic with continuity correction (Nigrini
// 2012) on hand-computed cases.
func TestZStat(t *testing.T) {
	for _, c := range []struct {
		phat, p float64
		n       int64
		want    float64
	}{
		// |0.35-0.30103| = 0.04897; 1/(2*1000) = 0.0005 is smaller and is subtracted:
		// (0.04897 - 0.0005) / sqrt(0.30103*0.69897/1000) = 0.04847/0.0145054...
		{0.35, 0.30103, 1000, (0.04897 - 0.0005) / math.Sqrt(0.30103*0.69897/1000)},
		// Same deviation below expectation: Z is the same, never negative.
		{0.30103 - 0.04897, 0.30103, 1000, (0.04897 - 0.0005) / math.Sqrt(0.30103*0.69897/1000)},
		// |p̂ - p| = 0.0003 < 1/(2N) = 0.0005: no correction.
		{0.30133, 0.30103, 1000, 0.0003 / math.Sqrt(0.30103*0.69897/1000)},
		{0.5, 0.5, 100, 0},
		{0.5, 0.3, 0, 0},
	} {
		if got := ZStat(c.phat, c.p, c.n); math.Abs(got-c.want) > 1e-9 {
			t.Errorf("ZStat(%v, %v, %d) = %v, want %v", c.phat, c.p, c.n, got, c.want)
		}
	}
}

// TestBoundsMatchZ checks that a proportion just outside the bounds has
// Z > 1.96 and one just inside has Z < 1.96.
func TestBoundsMatchZ(t *testing.T) {
	for _, n := range []int64{100, 5000, 1000000} {
		for _, p := range Expected(FirstTwo)[:90:90] {
			lo, hi := Bounds(p, n)
			for _, x := range []struct {
				phat float64
				out  bool
			}{{hi + 1e-9, true}, {hi - 1e-9, false}, {lo - 1e-9, true}, {lo + 1e-9, false}} {
				if x.phat < 0 {
					continue
				}
				z := ZStat(x.phat, p, n)
				if (z > ZCritical) != x.out {
					t.Fatalf("n %d p %v phat %v: Z %v, outside %v", n, p, x.phat, z, x.out)
				}
			}
		}
	}
}

// TestNormalCritical checks 1.96 against the normal quantile (NIST/SEMATECH
// e-Handbook, section 1.3.6.7.1: z(0.975) = 1.960) and gonum.
func TestNormalCritical(t *testing.T) {
	if q := distuv.UnitNormal.Quantile(0.975); math.Abs(q-ZCritical) > 5e-5 {
		t.Errorf("normal 0.975 quantile %v", q)
	}
}

// TestChiSquareCritical checks gonum's chi-square quantiles against the
// upper 5% critical values of the NIST/SEMATECH e-Handbook of Statistical
// Methods, section 1.3.6.7.4 (8 df: 15.507; 9 df: 16.919; 89 df: 112.022,
// the last from memory and checked by the Wilson-Hilferty approximation,
// ν(1 - 2/(9ν) + z sqrt(2/(9ν)))³ = 112.02 for z = 1.6449).
func TestChiSquareCritical(t *testing.T) {
	wh := func(nu float64) float64 {
		a := 2 / (9 * nu)
		return nu * math.Pow(1-a+1.6448536*math.Sqrt(a), 3)
	}
	for _, c := range []struct {
		df   float64
		want float64
	}{{8, 15.507}, {9, 16.919}, {89, 112.022}} {
		d := distuv.ChiSquared{K: c.df}
		q := d.Quantile(0.95)
		if math.Abs(q-c.want) > 1e-3 {
			t.Errorf("%v df: gonum 95%% quantile %.4f, table %.3f", c.df, q, c.want)
		}
		if p := d.Survival(c.want); math.Abs(p-0.05) > 1e-4 {
			t.Errorf("%v df: P(χ² > %.3f) = %.6f", c.df, c.want, p)
		}
		if c.df == 89 && math.Abs(wh(89)-c.want) > 0.02 {
			t.Errorf("Wilson-Hilferty 89 df: %.4f", wh(89))
		}
	}
}

// TestChiSquare checks the statistic on a hand-computed case and the
// p-value at the critical value.
func TestChiSquare(t *testing.T) {
	// Two bins, p = (0.5, 0.5), counts (60, 40): χ² = (10² + 10²)/50 = 4, 1 df,
	// P(χ²_1 > 4) = 2(1 - Φ(2)) = 0.0455003.
	chi2, df, p := ChiSquare([]int64{60, 40}, []float64{0.5, 0.5})
	if math.Abs(chi2-4) > 1e-12 || df != 1 || math.Abs(p-0.0455003) > 1e-6 {
		t.Errorf("ChiSquare = %v, %d, %v", chi2, df, p)
	}
	if _, df, p := ChiSquare(make([]int64, 9), Expected(FirstDigit)); df != 0 || p != 1 {
		t.Errorf("N = 0: df %d p %v", df, p)
	}
}

// TestKS checks the Kolmogorov-Smirnov distance on a hand case and its
// critical value 1.36/sqrt(N).
func TestKS(t *testing.T) {
	d := KS([]float64{0.5, 0.2, 0.3}, []float64{0.3, 0.3, 0.4})
	if math.Abs(d-0.2) > 1e-15 {
		t.Errorf("KS = %v, want 0.2", d)
	}
	if c := KSCritical(10000); math.Abs(c-0.0136) > 1e-15 {
		t.Errorf("KSCritical(10000) = %v", c)
	}
}
