package compare

import (
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
)

// fullRates runs the rate simulations at the size the README's tables
// quote (400 and 200 pairs per N); without it 150 and 80 (-short: 60 and
// 30).
var fullRates = flag.Bool("full", false, "compare: the rate simulations at the README's size")

// drawSide draws n conforming amounts as the bin counts of every test:
// first-three digits from Benford's law (the first, second and first-two
// digits follow from them) and last-two digits uniform. inject adds that
// many amounts spread uniformly over [4,500, 5,000): first-three bins 450
// to 499, last two digits uniform.
func drawSide(rng *rand.Rand, n, inject int64) map[benford.Test][]int64 {
	ft := benford.Multinomial(rng, benford.Expected(benford.FirstThree), n)
	lt := benford.Multinomial(rng, benford.Expected(benford.LastTwo), n+inject)
	if inject > 0 {
		add := benford.Multinomial(rng, uniform(50), inject)
		for i, c := range add {
			ft[450-100+i] += c
		}
	}
	out := map[benford.Test][]int64{benford.FirstThree: ft, benford.LastTwo: lt,
		benford.FirstDigit: make([]int64, 9), benford.SecondDigit: make([]int64, 10), benford.FirstTwo: make([]int64, 90)}
	for i, c := range ft {
		b := 100 + i
		out[benford.FirstDigit][b/100-1] += c
		out[benford.SecondDigit][b/10%10] += c
		out[benford.FirstTwo][b/10-10] += c
	}
	return out
}

func uniform(k int) []float64 {
	p := make([]float64, k)
	for i := range p {
		p[i] = 1 / float64(k)
	}
	return p
}

// rateRow is one line of the rate table: per test, the share of pairs
// with a bin flagged and with the homogeneity p below 5%.
type rateRow struct {
	n          int64
	flag, homo map[benford.Test]float64
}

// simulateRates compares reps pairs of sides of n amounts each (the right
// side with inject more amounts in [4,500, 5,000)).
func simulateRates(n, inject int64, reps int, seed uint64) rateRow {
	rng := rand.New(rand.NewPCG(seed, uint64(n)))
	o := Options{Alpha: benford.FlagAlpha, MinExcess: benford.DefaultMinExcess, Simulations: 199, Seed: seed, SkipSides: true}
	row := rateRow{n: n, flag: map[benford.Test]float64{}, homo: map[benford.Test]float64{}}
	for range reps {
		a, b := drawSide(rng, n, 0), drawSide(rng, n, inject)
		for _, t := range Tests {
			tr, err := CompareTest(t, a[t], b[t], o)
			if err != nil {
				panic(err)
			}
			if tr.Flagged > 0 {
				row.flag[t]++
			}
			if tr.Homogeneity.P < 0.05 {
				row.homo[t]++
			}
		}
	}
	for _, t := range Tests {
		row.flag[t] /= float64(reps)
		row.homo[t] /= float64(reps)
	}
	return row
}

func rateTable(rows []rateRow) string {
	var b strings.Builder
	b.WriteString("| N per side | test | bin flagged | homogeneity p < 0.05 |\n|---|---|---|---|\n")
	for _, r := range rows {
		for _, t := range Tests {
			fmt.Fprintf(&b, "| %d | %s | %.1f%% | %.1f%% |\n", r.n, t, 100*r.flag[t], 100*r.homo[t])
		}
	}
	return b.String()
}

// TestCompareFalseAlarmRates measures how often two samples drawn from the
// same Benford proportions are called different: a bin flagged (the
// family-wise flag with the default materiality margin), and the
// homogeneity test's p below 5%. Both must stay at or below 5% within
// simulation noise (three binomial standard errors) at every N. The full
// run (400 pairs per N) is the README's table:
//
//	go test ./engine/compare -run TestCompareFalseAlarmRates -v -args -full
func TestCompareFalseAlarmRates(t *testing.T) {
	reps := 150
	switch {
	case *fullRates:
		reps = 400
	case testing.Short():
		reps = 60
	}
	noise := 3 * math.Sqrt(0.05*0.95/float64(reps))
	var rows []rateRow
	for _, n := range []int64{1_000, 5_000, 50_000, 500_000} {
		r := simulateRates(n, 0, reps, 17)
		rows = append(rows, r)
		for _, tt := range Tests {
			if r.flag[tt] > 0.05+noise || r.homo[tt] > 0.05+noise {
				t.Errorf("N %d, %s: bin flag in %.1f%%, homogeneity p < 0.05 in %.1f%% of conforming pairs (limit %.1f%%)",
					n, tt, 100*r.flag[tt], 100*r.homo[tt], 100*(0.05+noise))
			}
		}
	}
	t.Logf("false alarms, %d conforming pairs per N:\n%s", reps, rateTable(rows))
}

// TestCompareDetection injects 2% of N uniformly in [4,500, 5,000) on the
// right side: at 50,000 amounts a side and more, the first-two digits test
// flags a bin, and the homogeneity test of the first-two and first-three
// digits rejects, in at least 90% of pairs. (The first-three bin flag needs
// more: the injection adds about 44% to each of 50 of 900 bins, and Holm's
// step-down over 900 bins asks for more than at 50,000.)
//
//	go test ./engine/compare -run TestCompareDetection -v -args -full
func TestCompareDetection(t *testing.T) {
	reps := 80
	switch {
	case *fullRates:
		reps = 200
	case testing.Short():
		reps = 30
	}
	var rows []rateRow
	for _, n := range []int64{1_000, 5_000, 50_000, 500_000} {
		r := simulateRates(n, n/50, reps, 23)
		rows = append(rows, r)
		if n < 50_000 {
			continue
		}
		for _, tt := range []benford.Test{benford.FirstTwo, benford.FirstThree} {
			if (tt == benford.FirstTwo && r.flag[tt] < 0.9) || r.homo[tt] < 0.9 {
				t.Errorf("N %d, %s: 2%% injection found by the bin flag in %.1f%%, by homogeneity in %.1f%% of pairs, want 90%% or more (bin flag: first-two only)", n, tt, 100*r.flag[tt], 100*r.homo[tt])
			}
		}
	}
	t.Logf("detection of 2%% of N in [4,500, 5,000), %d pairs per N:\n%s", reps, rateTable(rows))
}
