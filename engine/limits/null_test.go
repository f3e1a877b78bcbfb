package limits

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/ranges"
	"gonum.org/v1/gonum/stat/distuv"
)

// False-alarm rates in pure Go on bin counts (no database), through Probe
// as the limits command runs it: populations log-uniform over [10, 10^6)
// without injection; bin counts drawn as multinomial counts (successive
// binomials), the same distribution as counting that many drawn amounts.
const (
	nullSeeds = 100
	nullLo    = 10.0
	nullHi    = 1e6
)

func logUniformCDF(e float64) float64 {
	return math.Min(1, math.Max(0, math.Log(e/nullLo)/math.Log(nullHi/nullLo)))
}

// drawGroup returns a group of n amounts log-uniform over [10, 10^6) counted
// between edges.
func drawGroup(rng *rand.Rand, key ranges.Key, n int64, edges []float64) ranges.Group {
	b, _ := ranges.NewBins(edges)
	src := rand.NewPCG(rng.Uint64(), rng.Uint64())
	left, pleft, prev := float64(n), 1.0, 0.0
	for j := range b.Counts {
		next := 1.0
		if j < len(edges) {
			next = logUniformCDF(edges[j])
		}
		p := next - prev
		prev = next
		var k float64
		switch {
		case left <= 0 || p <= 0:
		case p >= pleft:
			k = left
		default:
			k = distuv.Binomial{N: left, P: p / pleft, Src: src}.Rand()
		}
		b.Counts[j] = int64(k)
		left -= k
		pleft -= p
	}
	return ranges.Group{Key: key, Counts: ranges.Counts{Rows: n, Tested: n, Min: nullLo, Max: nullHi - 0.01}, Bins: b}
}

// TestFalseAlarmsWhole: 100 populations of 500,000 amounts, the round
// limits of the automatic scan (20 to 500,000 at w = 0.10), the whole
// selection only. Holm's procedure over the limits aims at a family-wise
// rate of 5% (the exact binomial test is conservative); the test holds the
// share of populations with any limit flagged at 10% or below.
func TestFalseAlarmsWhole(t *testing.T) {
	limits := ScanLimits(nullLo, nullHi-0.01, DefaultWidth)
	edges := Edges(limits, DefaultWidth)
	alarms := 0
	for seed := range nullSeeds {
		rng := rand.New(rand.NewPCG(uint64(seed), 0x11a7))
		rows, err := Probe(drawGroup(rng, nil, 500000, edges), nil, nil, limits, DefaultWidth, DefaultMinCount)
		if err != nil {
			t.Fatal(err)
		}
		if rows[0].Flagged {
			alarms++
		}
	}
	rate := float64(alarms) / nullSeeds
	t.Logf("whole selection, %d round limits: any limit flagged in %d of %d populations without injection (%.2f; nominal 0.05)", len(limits), alarms, nullSeeds, rate)
	if rate > 0.10 {
		t.Errorf("false-alarm rate %.2f", rate)
	}
}

// TestFalseAlarmsSegments: 100 ledgers of 300,000 amounts in 50 segments
// of the sizes of TestSegments (30%, 2%, 0.2% and 47 of about 1.4%), no
// injection; every round limit probed in the whole ledger and in every
// segment, about 950 pairs adjusted together. The test holds the share of
// ledgers with any pair flagged at 10% or below.
func TestFalseAlarmsSegments(t *testing.T) {
	limits := ScanLimits(nullLo, nullHi-0.01, DefaultWidth)
	edges := Edges(limits, DefaultWidth)
	sizes := []int64{90000, 6000, 600}
	for range 47 {
		sizes = append(sizes, (300000-96600)/47)
	}
	alarms, tested := 0, 0
	for seed := range nullSeeds {
		rng := rand.New(rand.NewPCG(uint64(seed), 0x5e65))
		var groups []ranges.Group
		for i, n := range sizes {
			k := ranges.Key{{String: string(rune('A'+i/26)) + string(rune('A'+i%26)), Valid: true}}
			groups = append(groups, drawGroup(rng, k, n, edges))
		}
		all, err := ranges.Merge(groups, edges)
		if err != nil {
			t.Fatal(err)
		}
		segs := []ranges.Segment{{Name: "entity"}}
		rows, err := Probe(all, groups, segs, limits, DefaultWidth, DefaultMinCount)
		if err != nil {
			t.Fatal(err)
		}
		if rows[0].Flagged {
			alarms++
		}
		for _, r := range rows {
			if r.Status == StatusTested {
				tested++
			}
		}
	}
	rate := float64(alarms) / nullSeeds
	t.Logf("50 segments and the whole ledger: about %d pairs tested per ledger; any pair flagged in %d of %d ledgers without injection (%.2f; nominal 0.05)",
		tested/nullSeeds, alarms, nullSeeds, rate)
	if rate > 0.10 {
		t.Errorf("false-alarm rate %.2f", rate)
	}
}

// TestProbeStatus: the rules that keep a pair out of the test, on counts
// built by hand.
func TestProbeStatus(t *testing.T) {
	limits := []float64{1000, 5000}
	edges := Edges(limits, 0.1)
	b, _ := ranges.NewBins(edges) // 800 900 1000 1100 1200 4000 4500 5000 5500 6000: bands and their flanks
	copy(b.Counts, []int64{0, 0, 20, 5, 0, 0, 0, 300, 100, 0, 0})
	g := ranges.Group{Counts: ranges.Counts{Tested: 425, Min: 850, Max: 5600}, Bins: b}
	rows, err := Probe(g, nil, nil, limits, 0.1, 30)
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 2 || rows[0].Limit != 5000 || rows[0].Status != StatusTested || rows[0].Rank != 1 ||
		rows[0].Below != 300 || rows[0].Above != 100 || !rows[0].Flagged || rows[0].From != 4500 || rows[0].To != 5500 {
		t.Errorf("5000: %+v", rows[0])
	}
	if rows[1].Status != StatusTooFew || rows[1].Rank != 0 || rows[1].PAdjusted != 1 || rows[1].Below != 20 {
		t.Errorf("1000: %+v", rows[1])
	}
	if rows[0].Flanked || rows[0].Beta != -1 {
		t.Errorf("5000: the flank [5500, 6000) reaches past the largest amount (5600), yet the probe modelled the density from it: %+v", rows[0])
	}
	// Flanks within the amounts and holding some: the density is modelled
	// from them (falling here: 200 amounts in [4000, 4500), 60 in
	// [5500, 6000), so below/above expects more than 1/x gives).
	copy(b.Counts, []int64{0, 0, 20, 5, 0, 0, 200, 300, 100, 60, 0})
	gf := ranges.Group{Counts: ranges.Counts{Tested: 685, Min: 700, Max: 7000}, Bins: b}
	rows, _ = Probe(gf, nil, nil, []float64{5000}, 0.1, 30)
	if r := rows[0]; !r.Flanked || r.Left != 200 || r.Right != 60 || r.Beta >= -1 || r.ExpectedRatio <= benford.ExpectedBelowAboveRatio(0.1) {
		t.Errorf("5000 with flanks: %+v", r)
	}
	g.Max = 5400 // the band of 5000 reaches past the largest amount
	rows, _ = Probe(g, nil, nil, limits, 0.1, 10)
	for _, r := range rows {
		if r.Limit == 5000 && r.Status != StatusOutRange || r.Limit == 1000 && r.Status != StatusTested {
			t.Errorf("%v: %s", r.Limit, r.Status)
		}
	}
	// overlapping bands (w = 0.5: 1000 covers [500, 1500), 2000 covers [1000, 3000))
	e := Edges([]float64{1000, 2000}, 0.5)
	b2, _ := ranges.NewBins(e) // 500 1000 1500 2000 3000
	copy(b2.Counts, []int64{0, 10, 20, 30, 40, 0})
	rows, _ = Probe(ranges.Group{Counts: ranges.Counts{Tested: 100, Min: 500, Max: 3000}, Bins: b2}, nil, nil, []float64{1000, 2000}, 0.5, 1)
	for _, r := range rows {
		if r.Limit == 1000 && (r.Below != 10 || r.Above != 20) || r.Limit == 2000 && (r.Below != 50 || r.Above != 40) {
			t.Errorf("overlapping bands: %v below %d above %d", r.Limit, r.Below, r.Above)
		}
	}
	if _, err := Probe(g, nil, nil, []float64{-1}, 0.1, 1); err == nil {
		t.Error("negative limit accepted")
	}
	if _, err := Probe(g, nil, nil, limits, 0, 1); err == nil {
		t.Error("width 0 accepted")
	}
}
