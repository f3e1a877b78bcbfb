package benford

import (
	"math/rand/v2"
	"sort"
	"testing"
)

// mixtureCDF is the smooth non-1/x population of the simulations.
var mixtureCDF = SmoothMixtureCDF

// flankCounts draws n amounts from the mixture (multinomial over the
// intervals between the probe's edges, through Multinomial) plus inject
// amounts uniform in [4500, 5000), and returns per limit the counts of the
// four bands.
func flankCounts(rng *rand.Rand, limits []float64, w float64, n, inject int64) (left, below, above, right []int64) {
	var e []float64
	for _, t := range limits {
		e = append(e, t*(1-2*w), t*(1-w), t, t*(1+w), t*(1+2*w))
	}
	sort.Float64s(e)
	p := make([]float64, len(e)+1)
	prev := 0.0
	for i, x := range e {
		c := mixtureCDF(x)
		p[i] = c - prev
		prev = c
	}
	p[len(e)] = 1 - prev
	c := Multinomial(rng, p, n)
	for range inject {
		x := 4500 + 500*rng.Float64()
		c[sort.SearchFloat64s(e, x+1e-9)]++ // interval i holds [e[i-1], e[i])
	}
	between := func(a, b float64) int64 {
		i := sort.SearchFloat64s(e, a)
		j := sort.SearchFloat64s(e, b)
		var s int64
		for k := i + 1; k <= j; k++ {
			s += c[k]
		}
		return s
	}
	for _, t := range limits {
		left = append(left, between(t*(1-2*w), t*(1-w)))
		below = append(below, between(t*(1-w), t))
		above = append(above, between(t, t*(1+w)))
		right = append(right, between(t*(1+w), t*(1+2*w)))
	}
	return
}

// TestLimitFlankedMixture: on the lognormal mixture, the 1/x probe flags
// limits in most populations at 500,000 amounts; the flanked probe, over
// the same round limits 20 to 200,000 adjusted together with Holm, flags a
// limit in at most 5% plus noise (rateBound), at 500,000 and at
// 5,000,000 amounts; and an injection of 0.5% of N uniform in [4,500,
// 5,000) is found at 5,000 in at least 90% of populations of 500,000.
func TestLimitFlankedMixture(t *testing.T) {
	const w = 0.10
	limits := RoundLimits(20, 200000)
	seeds := 200
	if testing.Short() {
		seeds = 60
	}
	type tally struct{ flat, flanked, found int }
	run := func(n, inject int64, seeds int) tally {
		var tl tally
		for s := range seeds {
			rng := rand.New(rand.NewPCG(uint64(s), uint64(n+inject)))
			l, b, a, r := flankCounts(rng, limits, w, n, inject)
			var flat, fl []LimitResult
			for i, t := range limits {
				flat = append(flat, LimitProbe(t, w, b[i], a[i]))
				fl = append(fl, LimitProbeFlanked(t, w, b[i], a[i], l[i], r[i]))
			}
			AdjustLimits(flat)
			AdjustLimits(fl)
			if flat[0].Flagged {
				tl.flat++
			}
			any := false
			for _, x := range fl {
				if x.Flagged && x.Limit != 5000 {
					any = true
				}
				if x.Flagged && x.Limit == 5000 {
					tl.found++
				}
			}
			if any || (inject == 0 && fl[0].Flagged) {
				tl.flanked++
			}
		}
		return tl
	}
	for _, n := range []int64{500000, 5000000} {
		k := seeds
		if n > 1000000 {
			k = seeds / 4
		}
		tl := run(n, 0, k)
		t.Logf("mixture, N %d: a limit flagged in %d of %d populations by the 1/x probe, %d by the flanked probe", n, tl.flat, k, tl.flanked)
		if b := rateBound(k, LimitAlpha); tl.flanked > b {
			t.Errorf("N %d: flanked probe flags a limit in %d of %d conforming populations (bound %d)", n, tl.flanked, k, b)
		}
		if n == 500000 && tl.flat < k/2 {
			t.Errorf("N %d: the 1/x probe flagged only %d of %d: the mixture no longer exercises the flanks", n, tl.flat, k)
		}
	}
	tl := run(500000, 2500, seeds)
	t.Logf("0.5%% injection below 5,000 at N 500,000: found in %d of %d; another limit flagged in %d", tl.found, seeds, tl.flanked)
	if tl.found < seeds*9/10 {
		t.Errorf("injection found in %d of %d populations, want at least 90%%", tl.found, seeds)
	}
}
