package compare

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/leadline/leadline/engine/benford"
)

// segmentSides draws the same 12 segments on both sides, of 1,000 to
// 40,000 amounts, every segment conforming; inject adds 2% of its N in
// [4,500, 5,000) to the right side of segment "S03".
func segmentSides(rng *rand.Rand, inject bool) (left, right []SegmentSide) {
	for i, n := range []int64{1_000, 1_500, 2_000, 3_000, 5_000, 7_500, 10_000, 15_000, 20_000, 25_000, 30_000, 40_000} {
		key := fmt.Sprintf("S%02d", i)
		var add int64
		if inject && key == "S09" {
			add = n / 50
		}
		left = append(left, SegmentSide{Key: key, Label: key, Counts: drawSide(rng, n, 0)})
		right = append(right, SegmentSide{Key: key, Label: key, Counts: drawSide(rng, n, add)})
	}
	// One segment on the left side only: left out and counted.
	left = append(left, SegmentSide{Key: "only-left", Label: "only-left", Counts: drawSide(rng, 2_000, 0)})
	return left, right
}

// TestCompareSegmentsFalseAlarms: with every segment drawn from one
// distribution on both sides, some segment is flagged on a test in at most
// 5% of comparisons (within three binomial standard errors): Holm's
// step-down over the segments' homogeneity p-values holds the family-wise
// rate, and the materiality condition only removes flags. First-digit and
// first-two tests (the first-three test's Monte Carlo p-values make it
// slow; its rate is the same construction).
//
//	go test ./engine/compare -run TestCompareSegmentsFalseAlarms -v -args -full
func TestCompareSegmentsFalseAlarms(t *testing.T) {
	reps := 100
	switch {
	case *fullRates:
		reps = 400
	case testing.Short():
		reps = 40
	}
	o := DefaultOptions()
	o.Only = []benford.Test{benford.FirstDigit, benford.FirstTwo}
	rng := rand.New(rand.NewPCG(31, 31))
	any := map[benford.Test]int{}
	for range reps {
		left, right := segmentSides(rng, false)
		tests, one, small, err := CompareSegments(left, right, 1_000, o)
		if err != nil {
			t.Fatal(err)
		}
		if one != 1 || small != 0 {
			t.Fatalf("segments on one side %d (want 1), too small %d (want 0)", one, small)
		}
		for _, st := range tests {
			if st.Compared != 12 {
				t.Fatalf("%s: %d segments compared, want 12", st.Test, st.Compared)
			}
			if st.Flagged > 0 {
				any[st.Test]++
			}
		}
	}
	noise := 3 * math.Sqrt(0.05*0.95/float64(reps))
	for _, tt := range o.Only {
		rate := float64(any[tt]) / float64(reps)
		t.Logf("%s: some segment flagged in %d of %d conforming comparisons (%.1f%%)", tt, any[tt], reps, 100*rate)
		if rate > 0.05+noise {
			t.Errorf("%s: some segment flagged in %.1f%% of comparisons, above 5%% + noise %.1f%%", tt, 100*rate, 100*noise)
		}
	}
}

// TestCompareSegmentsFindsTheChangedSegment: 2% of a 30,000-amount
// segment added in [4,500, 5,000) on the right side is flagged on the
// first-two test and ranked first; another segment is flagged in few
// comparisons (the family-wise rate allows 5% of them: 1 of 20 expected,
// at most 3 allowed).
func TestCompareSegmentsFindsTheChangedSegment(t *testing.T) {
	o := DefaultOptions()
	o.Only = []benford.Test{benford.FirstTwo}
	found, others := 0, 0
	const reps = 20
	for rep := range reps {
		rng := rand.New(rand.NewPCG(41, uint64(rep)))
		left, right := segmentSides(rng, true)
		tests, _, _, err := CompareSegments(left, right, 1_000, o)
		if err != nil {
			t.Fatal(err)
		}
		st := tests[0]
		if st.Flagged > 0 && st.Segments[0].Segment == "S09" {
			found++
		}
		for _, s := range st.Segments[1:] {
			if s.Flagged {
				others++
				break
			}
		}
	}
	if others > 3 {
		t.Errorf("another segment flagged besides S09 in %d of %d comparisons, want at most 3", others, reps)
	}
	if found < 18 {
		t.Errorf("the changed segment flagged first in %d of %d comparisons, want 18 or more", found, reps)
	}
}
