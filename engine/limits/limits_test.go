package limits

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/fixtures"
)

// inside reports whether band [from, to) overlaps [lo, hi) by at least half
// its width (the rule of engine/benford's band tests).
func inside(from, to, lo, hi float64) bool {
	return math.Min(to, hi)-math.Max(from, lo) >= (to-from)/2
}

// TestScenario runs the worked limit-clustering scenario through the whole
// pipeline (CSV written from a seed, engine/load, one SQL scan, the Go
// statistics): the limit probe over the automatic round limits ranks 5,000
// first and flags nothing else; the range table flags the bands between
// 2,000 and 5,000 and no other, with fixed-width bands of 500 over
// [0, 20000) and with logarithmic bands (10 a decade). The same population
// without the injection raises none of these signals. (Expected ratio
// r(w) = ln(1/(1-w))/ln(1+w): checked against numeric integration of 1/x
// in engine/benford's TestExpectedBelowAboveRatio, not repeated here.)
func TestScenario(t *testing.T) {
	ctx := context.Background()
	for _, inject := range []bool{true, false} {
		start := time.Now()
		ws := writeLedger(t, scenarioRows(scenarioSeed, inject))
		loaded := time.Since(start)

		start = time.Now()
		rep, err := Run(ctx, ws, Options{})
		if err != nil {
			t.Fatal(err)
		}
		probed := time.Since(start)
		if rep.Counts.Tested != scenarioBase+map[bool]int64{true: scenarioInjected}[inject] {
			t.Errorf("inject %v: %d amounts tested", inject, rep.Counts.Tested)
		}
		top := rep.Rows[0]
		t.Logf("inject %v: %d round limits %v..%v; top %v: below %d above %d ratio %.3f (expected %.3f), excess %.0f (vs above %.0f), z %.1f, p_adj %.3g; %d flagged",
			inject, len(rep.Limits), rep.Limits[0], rep.Limits[len(rep.Limits)-1], top.Limit, top.Below, top.Above,
			top.ObservedRatio, top.ExpectedRatio, top.Excess, top.ExcessVsAbove, top.Z, top.PAdjusted, rep.Flagged)
		if inject {
			if top.Limit != 5000 || !top.Flagged || top.Rank != 1 || top.Range != "4500:5000" {
				t.Errorf("top row %+v", top)
			}
			if !strings.Contains(top.Drill, "--range 4500:5000") {
				t.Errorf("drill hint %q", top.Drill)
			}
			if rep.Flagged != 1 {
				t.Errorf("%d limits flagged, want only 5,000", rep.Flagged)
			}
		} else if rep.Flagged != 0 {
			t.Errorf("without injection: %d limits flagged (top %v p_adj %.3g)", rep.Flagged, top.Limit, top.PAdjusted)
		}
		if want := len(benford.ScanLimits(rep.Counts.Min, rep.Counts.Max, 0.1)); rep.Tested != want {
			t.Errorf("%d limits tested, ScanLimits gives %d", rep.Tested, want)
		}

		start = time.Now()
		for _, layout := range []ranges.Layout{{Width: 500, From: 0, To: 20000}, {PerDecade: 10}} {
			rr, err := ranges.Run(ctx, ws, ranges.Options{Layout: layout})
			if err != nil {
				t.Fatal(err)
			}
			for _, b := range rr.Bands {
				want := inject && inside(b.From, b.To, 2000, 5000)
				if b.Flagged != want {
					t.Errorf("inject %v, %s bands: band [%.2f, %.2f) count %d expected %.0f p_adj %.3g flagged %v (%s)",
						inject, rr.BandScale, b.From, b.To, b.Count, b.Expected, b.PAdjusted, b.Flagged, b.Note)
				}
			}
			if inject {
				if len(rr.Stretches) != 1 {
					t.Errorf("%s bands: stretches %+v", rr.BandScale, rr.Stretches)
				} else {
					s := rr.Stretches[0]
					t.Logf("%s bands: inflated %s: %d bands, %d amounts against %.0f expected (excess %.0f), dispersion %.2f",
						rr.BandScale, s.Range, s.Bands, s.Count, s.Expected, s.Excess, rr.Dispersion)
					if layout.Width > 0 && (s.Range != "2000:5000" || !strings.Contains(s.Drill, "--range 2000:5000")) {
						t.Errorf("fixed bands: stretch %+v", s)
					}
				}
			}
		}
		t.Logf("inject %v: load %.1fs, probe %.2fs, two range tables %.2fs", inject, loaded.Seconds(), probed.Seconds(), time.Since(start).Seconds())
	}
}

// TestSegments: 50 segments of one ledger, one of them (2% of the rows)
// carrying the injection (10% more amounts uniform in [2000, 5000)); a
// large conforming segment (30% of the rows) and a tiny one (0.2%) are
// among the others. Probing the round limits per segment, the injected
// segment at 5,000 ranks first, above the whole ledger (where the
// injection is diluted), and nothing else is flagged.
func TestSegments(t *testing.T) {
	const total = 300000
	amounts := fixtures.LogUniformAmounts(total, 10, 1e6, 41)
	var others []string // S02..S49 without S17: 47 ordinary segments
	for k := 2; k <= 49; k++ {
		if k != 17 {
			others = append(others, fmt.Sprintf("S%02d", k))
		}
	}
	share := func(i int) string { // segment of row i
		switch f := float64(i) / total; {
		case f < 0.30:
			return "S01" // large
		case f < 0.32:
			return "S17" // carries the injection
		case f < 0.322:
			return "S50" // tiny
		default:
			return others[i%len(others)]
		}
	}
	var rows []ledgerRow
	n17 := 0
	for i, c := range amounts {
		s := share(i)
		if s == "S17" {
			n17++
		}
		rows = append(rows, ledgerRow{s, c})
	}
	rng := rand.New(rand.NewPCG(41, 0x1e4d))
	for _, c := range injectCents(rng, n17/10, 2000, 5000) {
		rows = append(rows, ledgerRow{"S17", c})
	}
	ws := writeLedger(t, rows)
	rep, err := Run(context.Background(), ws, Options{By: []string{"entity"}})
	if err != nil {
		t.Fatal(err)
	}
	top := rep.Rows[0]
	t.Logf("%d segments, %d pairs tested (%d too few, %d outside the amounts); top: %s at %v, below %d above %d, z %.1f, p_adj %.3g",
		rep.Segments, rep.Tested, rep.TooFew, rep.OutsideRange, top.Label(), top.Limit, top.Below, top.Above, top.Z, top.PAdjusted)
	if rep.Segments != 50 {
		t.Errorf("%d segments", rep.Segments)
	}
	if top.Label() != "S17" || top.Limit != 5000 || !top.Flagged {
		t.Errorf("top row %+v", top)
	}
	if v := top.Segment["entity"]; v == nil || *v != "S17" {
		t.Errorf("segment %v", top.Segment)
	}
	if !strings.Contains(top.Drill, "--range 4500:5000 --segment entity=S17") {
		t.Errorf("drill %q", top.Drill)
	}
	for _, r := range rep.Rows[1:] {
		if r.Flagged {
			t.Errorf("also flagged: %s at %v (p_adj %.3g)", r.Label(), r.Limit, r.PAdjusted)
		}
	}
	for _, r := range rep.Rows {
		if r.Label() == "all" && r.Limit == 5000 {
			t.Logf("whole ledger at 5,000: rank %d, z %.1f, p %.3g", r.Rank, r.Z, r.P)
		}
		if r.Label() == "S50" && r.Status == StatusTested && r.Below+r.Above < DefaultMinCount {
			t.Errorf("S50 tested with %d amounts", r.Below+r.Above)
		}
	}
}

// TestBadInput: limits that are not numbers, widths outside (0, 1), an
// unknown column: refused with a message naming the flag.
func TestBadInput(t *testing.T) {
	for _, s := range [][]string{{"5k"}, {"1000", "abc"}, {"-5"}, {"0"}, {"NaN"}, {""}} {
		if _, err := ParseLimits(s); err == nil || !strings.Contains(err.Error(), "--limits") {
			t.Errorf("ParseLimits(%q): %v", s, err)
		}
	}
	if l, err := ParseLimits([]string{"5000", " 1000", "5000", "2_500"}); err != nil || len(l) != 3 || l[0] != 1000 || l[2] != 5000 {
		t.Errorf("ParseLimits: %v %v", l, err)
	}
	ws := writeLedger(t, scenarioRows(1, false)[:2000])
	ctx := context.Background()
	for _, w := range []float64{-0.1, 1, 1.5, math.NaN()} {
		if _, err := Run(ctx, ws, Options{Width: w}); err == nil || !strings.Contains(err.Error(), "--width") {
			t.Errorf("width %v: %v", w, err)
		}
	}
	if _, err := Run(ctx, ws, Options{By: []string{"no_such_column"}}); err == nil || !strings.Contains(err.Error(), "no_such_column") {
		t.Errorf("unknown column: %v", err)
	}
	// A period of the posted date segments too; this ledger has no dates,
	// so every record is in the blank quarter, as with month.
	for _, by := range []string{"quarter", "year", "month"} {
		rep, err := Run(ctx, ws, Options{By: []string{by}})
		if err != nil || rep.Segments != 1 || len(rep.By) != 1 || rep.By[0] != by {
			t.Errorf("--by %s: %v, %+v", by, err, rep)
			continue
		}
		blank := false
		for _, r := range rep.Rows {
			blank = blank || r.Label() == "(blank)"
		}
		if !blank {
			t.Errorf("--by %s: no row of the blank segment", by)
		}
	}
	if _, err := Run(ctx, ws, Options{Spec: population.Spec{Signs: "sideways"}}); err == nil || !strings.Contains(err.Error(), `signs "sideways"`) {
		t.Errorf("bad signs: %v", err)
	}
	if _, err := Run(ctx, ws, Options{Spec: population.Spec{Where: "amount > 0; DROP TABLE ledger"}}); err == nil {
		t.Error("a filter with a second statement was accepted")
	}
	if _, err := ranges.Run(ctx, ws, ranges.Options{Layout: ranges.Layout{Width: 500, PerDecade: 10}}); err == nil {
		t.Error("--width with --per-decade accepted")
	}
	if _, err := ranges.Run(ctx, ws, ranges.Options{Layout: ranges.Layout{Width: 0.001, From: 0, To: 1e6}}); err == nil || !strings.Contains(err.Error(), "bands") {
		t.Errorf("too many bands: %v", err)
	}
}
