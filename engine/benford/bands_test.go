package benford

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"
)

func TestLinearAndLogBands(t *testing.T) {
	lin := LinearBands(0, 20000, 500)
	if len(lin) != 40 || lin[0].From != 0 || lin[39].To != 20000 || lin[4].From != 2000 {
		t.Errorf("LinearBands(0, 20000, 500): %d bands, %v..%v", len(lin), lin[0].From, lin[len(lin)-1].To)
	}
	if b := LinearBands(0, 1001, 500); len(b) != 3 {
		t.Errorf("LinearBands(0, 1001, 500): %d bands", len(b))
	}
	lg := LogBands(10, 1e6, 10)
	if len(lg) != 50 || lg[0].From != 10 || lg[49].To != 1e6 || lg[20].From != 1000 || lg[19].To != 1000 {
		t.Errorf("LogBands(10, 1e6, 10): %d bands, %v..%v", len(lg), lg[0].From, lg[len(lg)-1].To)
	}
	for i := 1; i < len(lg); i++ {
		if r := math.Log10(lg[i].To / lg[i].From); lg[i].From != lg[i-1].To || math.Abs(r-0.1) > 1e-12 {
			t.Fatalf("band %d: %v..%v", i, lg[i].From, lg[i].To)
		}
	}
	if b := LogBands(0.015, 0.2, 1); len(b) != 2 || b[0].From != 0.01 || b[1].To != 1 {
		t.Errorf("LogBands(0.015, 0.2, 1) = %+v", b)
	}
	if LinearBands(0, 1, 0) != nil || LogBands(0, 10, 10) != nil || LogBands(1, 10, 0) != nil {
		t.Error("invalid arguments accepted")
	}
}

// checkFlags reports bands flagged outside [lo, hi) and bands inside not
// flagged; a band counts as inside when it overlaps [lo, hi) by at least
// half its width.
func checkFlags(t *testing.T, name string, bands []Band, lo, hi float64) {
	t.Helper()
	for _, b := range bands {
		overlap := math.Min(b.To, hi) - math.Max(b.From, lo)
		inside := overlap >= (b.To-b.From)/2
		if b.Flagged != inside {
			t.Errorf("%s: band [%.0f, %.0f) count %d expected %.0f ratio %.2f z %.1f p_adj %.2g: flagged %v",
				name, b.From, b.To, b.Count, b.Expected, b.Ratio, b.Z, b.PAdjusted, b.Flagged)
		}
	}
}

// TestScoreBandsScenario: 500,000 amounts log-uniform over [10, 10^6) plus
// 50,000 uniform in [2000, 5000). The range table must flag the bands
// between 2,000 and 5,000 and no other, with log bands (10 a decade) and
// with linear bands of width 500 over [0, 20000).
func TestScoreBandsScenario(t *testing.T) {
	p := injectedPopulation()
	lg := withBands(simLogBands, p.logBands)
	ScoreBands(lg)
	checkFlags(t, "log bands", lg, 2000, 5000)
	lin := withBands(simLinBands, p.linBands)
	ScoreBands(lin)
	checkFlags(t, "linear bands", lin, 2000, 5000)
	// The band from 0 has no log-scale position; the next is the first
	// scorable band, with no band below it: its expectation would be an
	// extrapolation, so it is left unscored too (it flagged [500, 1,000)
	// on smooth non-1/x data when it was scored).
	if lin[0].Scored || lin[1].Scored || !lin[2].Scored || lin[len(lin)-1].Scored || !lin[len(lin)-2].Scored {
		t.Error("the band from 0 and the first and last scorable bands must be left unscored, the others scored")
	}
	for _, b := range lg {
		if b.Flagged {
			t.Logf("log band [%.0f, %.0f): count %d, expected %.0f, ratio %.2f, z %.1f", b.From, b.To, b.Count, b.Expected, b.Ratio, b.Z)
		}
	}
	t.Logf("dispersion: log bands %.2f, linear bands %.2f", BandDispersion(lg), BandDispersion(lin))
}

// TestScoreBandsWideBlock: a block of many adjacent inflated bands (12 of
// 80 with linear bands of width 250, 30 of 200 with width 100) is still
// flagged, band by band, because the neighbour fit is robust.
func TestScoreBandsWideBlock(t *testing.T) {
	rng := rand.New(rand.NewPCG(99, 5))
	for _, width := range []float64{250, 100} {
		bands := LinearBands(0, 20000, width)
		edges := bandEdges(bands)
		counts := make([]int64, len(bands))
		add := func(x float64) {
			if i := bandIndex(edges, x); i >= 0 {
				counts[i]++
			}
		}
		for range simBase {
			add(math.Exp((1 + 5*rng.Float64()) * math.Ln10))
		}
		for range simInjected {
			add(2000 + 3000*rng.Float64())
		}
		b := withBands(bands, counts)
		ScoreBands(b)
		checkFlags(t, "width "+formatWidth(width), b, 2000, 5000)
	}
}

func formatWidth(w float64) string { return LastTwo.Label(int(w) / 100) }

// TestScoreBandsFalseAlarms: without injection (100 seeds), the share of
// populations with any band flagged, for log and linear bands; Holm's
// procedure holds the family-wise rate at 5%, up to the noise of the
// fitted expectations (absorbed by the dispersion).
func TestScoreBandsFalseAlarms(t *testing.T) {
	var logAlarms, linAlarms int
	var phiLog, phiLin float64
	for _, p := range nullPopulations() {
		lg := withBands(simLogBands, p.logBands)
		ScoreBands(lg)
		lin := withBands(simLinBands, p.linBands)
		ScoreBands(lin)
		if anyFlagged(lg) {
			logAlarms++
		}
		if anyFlagged(lin) {
			linAlarms++
		}
		phiLog += BandDispersion(lg)
		phiLin += BandDispersion(lin)
	}
	n := float64(len(nullPopulations()))
	t.Logf("without injection (%d seeds): any log band flagged in %.2f (mean dispersion %.2f), any linear band flagged in %.2f (mean dispersion %.2f)",
		int(n), float64(logAlarms)/n, phiLog/n, float64(linAlarms)/n, phiLin/n)
	if float64(logAlarms)/n > 0.10 || float64(linAlarms)/n > 0.10 {
		t.Errorf("false-alarm rates %.2f (log), %.2f (linear)", float64(logAlarms)/n, float64(linAlarms)/n)
	}
}

func anyFlagged(b []Band) bool {
	for _, x := range b {
		if x.Flagged {
			return true
		}
	}
	return false
}

// TestScoreBandsLogNormal: a population that does not follow a power law
// (500,000 amounts log-normal, median 1,000, σ = 1.5 in natural log; a
// parabola on the log scale) still gives few false alarms over 20 seeds,
// and the injected block is still flagged.
func TestScoreBandsLogNormal(t *testing.T) {
	const seeds = 20
	logAlarms, linAlarms := 0, 0
	for s := range seeds + 1 {
		rng := rand.New(rand.NewPCG(uint64(300+s), 7))
		inject := s == seeds
		lg := LogBands(1, 1e7, 10)
		lin := LinearBands(0, 20000, 500)
		le, ne := bandEdges(lg), bandEdges(lin)
		lc, nc := make([]int64, len(lg)), make([]int64, len(lin))
		add := func(x float64) {
			if i := bandIndex(le, x); i >= 0 {
				lc[i]++
			}
			if i := bandIndex(ne, x); i >= 0 {
				nc[i]++
			}
		}
		for range simBase {
			add(1000 * math.Exp(1.5*rng.NormFloat64()))
		}
		if inject {
			for range simInjected {
				add(2000 + 3000*rng.Float64())
			}
		}
		lg, lin = withBands(lg, lc), withBands(lin, nc)
		ScoreBands(lg)
		ScoreBands(lin)
		if inject {
			checkFlags(t, "log-normal, log bands", lg, 2000, 5000)
			checkFlags(t, "log-normal, linear bands", lin, 2000, 5000)
			t.Logf("log-normal with injection: dispersion %.2f (log), %.2f (linear)", BandDispersion(lg), BandDispersion(lin))
			continue
		}
		if anyFlagged(lg) {
			logAlarms++
		}
		if anyFlagged(lin) {
			linAlarms++
		}
	}
	t.Logf("log-normal without injection: any log band flagged in %d of %d seeds, any linear band in %d of %d (over 100 seeds, measured once: 3 and 3)",
		logAlarms, seeds, linAlarms, seeds)
	if logAlarms > 3 || linAlarms > 3 {
		t.Errorf("log-normal false alarms: %d (log), %d (linear) of %d", logAlarms, linAlarms, seeds)
	}
}

// TestScoreBandsDegenerate: too few bands, empty bands, zero counts.
func TestScoreBandsDegenerate(t *testing.T) {
	b := LinearBands(0, 4, 1)
	ScoreBands(b)
	for _, x := range b {
		if x.Scored || x.Flagged || x.P != 1 {
			t.Errorf("%+v", x)
		}
	}
	ScoreBands(nil)
	z := LogBands(1, 1e3, 5) // all counts zero
	ScoreBands(z)
	for i, x := range z {
		if edge := i == 0 || i == len(z)-1; x.Scored == edge || x.Flagged || math.IsNaN(x.Z) || math.IsNaN(x.P) || math.IsInf(x.Expected, 0) {
			t.Errorf("zero counts: %+v", x)
		}
	}
}

// TestScoreBandsExtreme: lopsided counts and widths stay finite and encode
// as JSON.
func TestScoreBandsExtreme(t *testing.T) {
	for _, bands := range [][]Band{LogBands(1e-3, 1e12, 3), LinearBands(1e9, 1e9+1000, 1), LinearBands(-50, 50, 10)} {
		for i := range bands {
			switch {
			case i == len(bands)/2:
				bands[i].Count = 1 << 40
			case i%7 == 0:
				bands[i].Count = int64(i * i * i)
			}
		}
		ScoreBands(bands)
		for _, b := range bands {
			for _, f := range []float64{b.Expected, b.ExpectedSE, b.Ratio, b.Z, b.P, b.PAdjusted} {
				if math.IsNaN(f) || math.IsInf(f, 0) {
					t.Fatalf("band %+v", b)
				}
			}
		}
		if _, err := json.Marshal(bands); err != nil {
			t.Error(err)
		}
	}
}
