package ranges

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"sort"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
)

// The false-alarm and detection rates of the range table, measured on
// simulated bin counts (multinomialBins; no database) through Layout.Bands
// and Score as the ranges command runs them, for the two layouts the
// README shows: fixed-width bands of 500 over [0, 20,000) and logarithmic
// bands, 10 to a decade over the data's range. Populations:
//
//   - conforming: log-uniform over [10, 10^6) (Benford's law holds);
//   - mixture: benford.SmoothMixture, three lognormals, smooth but far from
//     1/x, over the amounts of at least 10;
//
// and for detection the mixture with 0.5% or 2% of N more amounts uniform
// in [4,500, 5,000).
//
// LEADLINE_RANGE_RATES=full runs 200 seeds at N 50,000, 500,000 and
// 5,000,000 (the README's table); -short runs 20 seeds at 50,000 and
// 500,000; otherwise 60 seeds.

// rangePop is a simulated population: its distribution function over the
// tested amounts and its smallest and largest amount.
type rangePop struct {
	name   string
	cdf    func(float64) float64
	lo, hi float64
}

// mixtureTested is SmoothMixture conditioned on amounts of at least 10 and
// below 10^7 (the tested amounts of the default --min).
func mixtureTested(x float64) float64 {
	a, b := benford.SmoothMixtureCDF(10), benford.SmoothMixtureCDF(1e7)
	c := benford.SmoothMixtureCDF(math.Min(math.Max(x, 10), 1e7))
	return (c - a) / (b - a)
}

var (
	popConforming = rangePop{"conforming (log-uniform 10 to 10^6)", logUniformCDF, nullLo, nullHi - 0.01}
	popMixture    = rangePop{"smooth mixture of three lognormals", mixtureTested, 10, 1e7 - 0.01}
)

// rateResult tallies one cell of the rate table.
type rateResult struct {
	seeds, alarms, found int
	disp                 []float64
	where                map[string]int // flagged bands outside the injection
}

func runRates(t *testing.T, pop rangePop, l Layout, n int64, inject float64, seeds int) rateResult {
	t.Helper()
	r := rateResult{seeds: seeds, where: map[string]int{}}
	for s := range seeds {
		rng := rand.New(rand.NewPCG(uint64(s), uint64(n)+uint64(inject*1e6)))
		bands, err := l.Bands(pop.lo, pop.hi)
		if err != nil {
			t.Fatal(err)
		}
		b, err := NewBins(Edges(bands))
		if err != nil {
			t.Fatal(err)
		}
		multinomialBins(rng, b, n, pop.cdf)
		if inject > 0 {
			multinomialBins(rng, b, int64(inject*float64(n)), func(x float64) float64 { return math.Min(1, math.Max(0, (x-4500)/500)) })
		}
		rows, _, err := Score(bands, b, pop.lo, pop.lo, pop.hi)
		if err != nil {
			t.Fatal(err)
		}
		var sc []benford.Band
		other, hit := false, false
		for _, row := range rows {
			if row.Scored {
				sc = append(sc, row.Band)
			}
			if !row.Flagged {
				continue
			}
			if inject > 0 && row.From < 5000 && row.To > 4500 {
				hit = true
				continue
			}
			other = true
			r.where[fmt.Sprintf("%g:%g", row.From, row.To)]++
		}
		r.disp = append(r.disp, benford.BandDispersion(sc))
		if other {
			r.alarms++
		}
		if hit {
			r.found++
		}
	}
	return r
}

func (r rateResult) medianDispersion() float64 {
	d := append([]float64(nil), r.disp...)
	sort.Float64s(d)
	return d[len(d)/2]
}

func (r rateResult) topWhere() string {
	type kv struct {
		k string
		v int
	}
	var s []kv
	for k, v := range r.where {
		s = append(s, kv{k, v})
	}
	sort.Slice(s, func(i, j int) bool { return s[i].v > s[j].v || s[i].v == s[j].v && s[i].k < s[j].k })
	var out []string
	for i, x := range s {
		if i == 3 {
			break
		}
		out = append(out, fmt.Sprintf("%s ×%d", x.k, x.v))
	}
	return strings.Join(out, ", ")
}

// rateBound returns the largest count of false alarms in n independent
// populations that a true rate of alpha exceeds with probability at least
// 1%: the smallest a with P(X > a) <= 0.01 for X ~ Binomial(n, alpha).
func rateBound(n int, alpha float64) int {
	a := 0
	for benford.BinomialUpperTail(int64(a+1), int64(n), alpha) > 0.01 {
		a++
	}
	return a
}

// TestRangesRates measures the rate table (see above) and holds it to the
// targets: a band flagged in at most 5% of the populations without
// injection (up to simulation noise: rateBound), on conforming data and on
// the smooth mixture, with the median dispersion at most 3 (the fit follows
// the smooth trend instead of absorbing its misfit in the dispersion); and
// the injection of 0.5% of N = 500,000 in [4,500, 5,000) found in at least
// 90% of the populations. Before the fit window was chosen by
// cross-validation and the edge bands left unscored, fixed-width bands
// flagged [500, 1,000) on the mixture in every population, and
// logarithmic bands had a dispersion of about 700 at N 500,000 and found
// the 0.5% injection in none.
func TestRangesRates(t *testing.T) {
	seeds, ns := 60, []int64{50000, 500000}
	switch {
	case os.Getenv("LEADLINE_RANGE_RATES") == "full":
		seeds, ns = 200, []int64{50000, 500000, 5000000}
	case testing.Short():
		seeds = 20
	}
	layouts := []Layout{{Width: 500, To: 20000}, {PerDecade: 10}}
	for _, pop := range []rangePop{popConforming, popMixture} {
		for _, l := range layouts {
			for _, n := range ns {
				r := runRates(t, pop, l, n, 0, seeds)
				t.Logf("%s, %s bands, N %d: a band flagged in %d of %d (%.3f); median dispersion %.2f; %s",
					pop.name, l.Scale(), n, r.alarms, seeds, float64(r.alarms)/float64(seeds), r.medianDispersion(), r.topWhere())
				if b := rateBound(seeds, benford.BandAlpha); r.alarms > b {
					t.Errorf("%s, %s bands, N %d: a band flagged in %d of %d populations without injection (bound %d)", pop.name, l.Scale(), n, r.alarms, seeds, b)
				}
				if d := r.medianDispersion(); d > 3 { // common practice, no source: a fit that follows the trend leaves φ near 1
					t.Errorf("%s, %s bands, N %d: median dispersion %.2f: the fit misses the smooth trend", pop.name, l.Scale(), n, d)
				}
			}
		}
	}
	for _, l := range layouts {
		for _, inj := range []float64{0.005, 0.02} {
			r := runRates(t, popMixture, l, 500000, inj, seeds)
			t.Logf("mixture + %.1f%% in [4500, 5000), %s bands, N 500000: found in %d of %d; another band flagged in %d",
				100*inj, l.Scale(), r.found, seeds, r.alarms)
			if r.found < seeds*9/10 {
				t.Errorf("%.1f%% injection, %s bands: found in %d of %d populations, want at least 90%%", 100*inj, l.Scale(), r.found, seeds)
			}
		}
	}
}
