package compare

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// homogeneity is Pearson's chi-square test of the 2×K table (a; b),
//
//	χ² = Σ_i Σ_k (n_ik - E_ik)² / E_ik,   E_ik = n_i t_k / N,
//
// with t_k the bin's total over both sides, over the bins with t_k > 0,
// K' - 1 degrees of freedom for K' such bins. When Cochran's rule fails
// (a cell expects less than 1, or more than a fifth expect fewer than
// SmallExpected amounts) the p-value is simulated: sims tables drawn from
// the permutation distribution (permuted), which keeps both sides' N and
// every bin's total, so the simulated tables have the observed table's
// empty and thin bins too.
func homogeneity(a, b []int64, sims int, rng *rand.Rand) Homogeneity {
	n1, n2 := sum(a), sum(b)
	h := Homogeneity{PAsymptotic: 1, P: 1, Method: "asymptotic"}
	if n1 == 0 || n2 == 0 {
		return h
	}
	N := float64(n1 + n2)
	used := 0
	first := true
	for k := range a {
		t := a[k] + b[k]
		if t == 0 {
			continue
		}
		used++
		for _, e := range []float64{float64(n1) * float64(t) / N, float64(n2) * float64(t) / N} {
			h.Cells++
			if e < SmallExpected {
				h.SmallCells++
			}
			if first || e < h.MinExpected {
				h.MinExpected, first = e, false
			}
		}
	}
	if used < 2 {
		return h
	}
	h.Chi2 = chi2(a, b)
	h.DF = used - 1
	h.PAsymptotic = distuv.ChiSquared{K: float64(h.DF)}.Survival(h.Chi2)
	h.P = h.PAsymptotic
	if h.MinExpected >= 1 && 5*h.SmallCells <= h.Cells {
		return h
	}
	left, right := make([]int64, len(a)), make([]int64, len(a))
	// A relative tolerance: a simulated table whose statistic equals the
	// observed one up to rounding counts as reaching it.
	obs := h.Chi2 * (1 - 1e-9)
	reach := 0
	for range sims {
		permuted(rng, a, b, left, right)
		if chi2(left, right) >= obs {
			reach++
		}
	}
	p := float64(reach+1) / float64(sims+1)
	h.PSimulated, h.Simulations, h.P, h.Method = &p, sims, p, "simulated"
	return h
}

// chi2 is Pearson's statistic of the 2×K table (a; b), bins with no count
// on either side left out.
func chi2(a, b []int64) float64 {
	n1, n2 := float64(sum(a)), float64(sum(b))
	N := n1 + n2
	if n1 == 0 || n2 == 0 {
		return 0
	}
	var s float64
	for k := range a {
		t := float64(a[k] + b[k])
		if t == 0 {
			continue
		}
		e1, e2 := n1*t/N, n2*t/N
		d1, d2 := float64(a[k])-e1, float64(b[k])-e2
		s += d1*d1/e1 + d2*d2/e2
	}
	return s
}

// permuted draws a 2×K table with the margins of (a; b): the n1 amounts
// of the left side taken at random without replacement from all N
// amounts, bin by bin: the left count of bin k is hypergeometric, t_k
// amounts among the M not yet placed, of which the left side still takes
// m (the conditional decomposition of the multivariate hypergeometric
// law). This is the permutation distribution of the table: under
// homogeneity every assignment of the amounts to the sides is equally
// likely.
func permuted(rng *rand.Rand, a, b, left, right []int64) {
	M := sum(a) + sum(b)
	m := sum(a)
	for k := range a {
		t := a[k] + b[k]
		x := hypergeometric(rng, M, t, m)
		left[k], right[k] = x, t-x
		M -= t
		m -= x
	}
}

// hypergeometric draws the number of marked items among n drawn without
// replacement from N items of which K are marked, by inversion from the
// mode outwards (as benford.Binomial does): the mode's probability from
// the log-gamma function, the others by the ratio
//
//	f(x+1) / f(x) = (K-x)(n-x) / ((x+1)(N-K-n+x+1)).
func hypergeometric(rng *rand.Rand, N, K, n int64) int64 {
	lo := max(0, n-(N-K))
	hi := min(n, K)
	if lo >= hi {
		return lo
	}
	lg := func(x int64) float64 { v, _ := math.Lgamma(float64(x) + 1); return v }
	logC := func(n, k int64) float64 { return lg(n) - lg(k) - lg(n-k) }
	mode := int64(float64(n+1) * float64(K+1) / float64(N+2))
	mode = min(max(mode, lo), hi)
	ratio := func(x int64) float64 { // f(x+1) / f(x)
		return float64(K-x) * float64(n-x) / (float64(x+1) * float64(N-K-n+x+1))
	}
	fm := math.Exp(logC(K, mode) + logC(N-K, n-mode) - logC(N, n))
	u := rng.Float64()
	if u < fm {
		return mode
	}
	u -= fm
	down, up, fd, fu := mode, mode, fm, fm
	for down > lo || up < hi {
		if down > lo {
			fd /= ratio(down - 1)
			down--
			if u < fd {
				return down
			}
			u -= fd
		}
		if up < hi {
			fu *= ratio(up)
			up++
			if u < fu {
				return up
			}
			u -= fu
		}
		if fd < 1e-300 && fu < 1e-300 {
			break // rounding left a sliver of U: give the mode
		}
	}
	return mode
}
