package report

import (
	"bytes"
	"encoding/json"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/compare"
)

// TestCompareSection renders a stored comparison: the section is shown,
// every number in it matches the stored document, and the flagged bins
// are listed.
func TestCompareSection(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	counts := func(extra bool) map[benford.Test][]int64 {
		out := map[benford.Test][]int64{}
		for _, tt := range compare.Tests {
			c := benford.Multinomial(rng, benford.Expected(tt), 20000)
			if extra && tt == benford.FirstTwo {
				c[37] += 500 // bin 47
			}
			out[tt] = c
		}
		return out
	}
	rep, err := compare.NewReport(compare.ModeSplit, compare.SideInfo{Label: "entity=A", Signs: "positive", Min: "10", Tested: 20000},
		compare.SideInfo{Label: "entity=B", Signs: "positive", Min: "10", Tested: 20500}, counts(false), counts(true), compare.DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	// compare --by: two segments, the second changed.
	segs := func(extra bool) []compare.SegmentSide {
		return []compare.SegmentSide{{Key: "K1", Label: "K1", Counts: counts(false)}, {Key: "K2", Label: "K2", Counts: counts(extra)}}
	}
	if rep.Segments, rep.SegmentsOneSide, rep.SegmentsTooSmall, err = compare.CompareSegments(segs(false), segs(true), 1000, compare.DefaultOptions()); err != nil {
		t.Fatal(err)
	}
	rep.By, rep.MinSegment = []string{"cost_centre"}, 1000
	rep.RunID = 7
	doc, err := json.Marshal(rep)
	if err != nil {
		t.Fatal(err)
	}
	run := &Run{ID: 7, Kind: KindCompare, StartedAt: time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC), Result: doc}
	m := &Model{Title: "t", GeneratedAt: run.StartedAt}
	if err := m.addRuns([]*Run{run}); err != nil {
		t.Fatal(err)
	}
	if len(m.Compares) != 1 || len(m.Others) != 0 {
		t.Fatalf("compare run: %d sections, %d shown as other runs", len(m.Compares), len(m.Others))
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	nums, sections, _ := parsePage(t, buf.Bytes())
	sec := sections["compare"]
	if sec == nil {
		t.Fatal("no compare section")
	}
	stored, err := decodeNumbers(doc)
	if err != nil {
		t.Fatal(err)
	}
	var mine []marked
	for _, n := range nums {
		if strings.HasPrefix(n.src, "run/7#") {
			mine = append(mine, n)
		}
	}
	got := checkNumbers(t, mine, func(src string) (any, error) { return pointer(stored, strings.TrimPrefix(src, "run/7#")) })
	// 8 numbers per test, 4 of the sides and the flag, 7 of the flagged
	// bin; with the segments 1 + 2 per test and 7 of the changed segment.
	if got < 5*8+4+7+1+5*2+7 {
		t.Fatalf("%d numbers checked in the compare section, want every test's row", got)
	}
	text := textOf(sec)
	for _, want := range []string{"entity=A against entity=B", "first-two digits test: bins whose share changed", "first-three digits test",
		"Segments by cost_centre", "first-two digits test: segments whose distribution changed"} {
		if !strings.Contains(text, want) {
			t.Errorf("section lacks %q", want)
		}
	}
	found := false
	for _, n := range mine {
		if n.field == "compare.tests.first_two.bins.47.diff" {
			found = true
		}
	}
	if !found {
		t.Error("flagged first-two bin 47 not listed")
	}
	found = false
	for _, n := range mine {
		if n.field == "compare.segments.first_two.segments.K2.p_adjusted" {
			found = true
		}
	}
	if !found {
		t.Error("changed segment K2 not listed")
	}
}
