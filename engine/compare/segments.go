package compare

import (
	"slices"
	"sort"

	"github.com/leadline/leadline/engine/benford"
)

// SegmentSide is one segment's bin counts on one side.
type SegmentSide struct {
	Key    string // the key's text, the same on both sides (segment.Key.String)
	Label  string // as shown
	Counts map[benford.Test][]int64
}

// SegmentChange is one segment compared between the sides on one test:
// whether its distribution over the bins changed, and its conformity on
// each side.
type SegmentChange struct {
	Segment string `json:"segment"`
	LeftN   int64  `json:"left_n"`
	RightN  int64  `json:"right_n"`
	// Homogeneity is the 2×K chi-square test of the segment's two tables;
	// PAdjusted its P adjusted by Holm's step-down over the segments
	// compared on this test.
	Homogeneity Homogeneity `json:"homogeneity"`
	PAdjusted   float64     `json:"p_adjusted"`
	// MaterialBins counts the bins whose share moved by at least the
	// materiality margin (as BinChange.Material).
	MaterialBins int `json:"material_bins"`
	// Flagged: PAdjusted below Alpha and at least one material bin.
	Flagged bool `json:"flagged"`
	// Each side's MAD and its published class ("" for a test without
	// published ranges); ConformityChanged when the classes differ.
	LeftMAD           float64 `json:"left_mad"`
	RightMAD          float64 `json:"right_mad"`
	LeftConformity    string  `json:"left_conformity"`
	RightConformity   string  `json:"right_conformity"`
	ConformityChanged bool    `json:"conformity_changed"`
}

// SegmentTest holds the segments compared on one test, flagged first,
// then by p-value and chi-square.
type SegmentTest struct {
	Test     benford.Test    `json:"test"`
	Compared int             `json:"compared"` // segments with at least MinSegment amounts on both sides
	Flagged  int             `json:"flagged"`
	Segments []SegmentChange `json:"segments"`
}

// CompareSegments compares, for every test of the options, each segment
// found on both sides with at least minN amounts on each. Segments on one
// side only, or smaller, are counted in skipped (by reason) and left out.
func CompareSegments(left, right []SegmentSide, minN int64, o Options) (tests []SegmentTest, onlyOneSide, tooSmall int, err error) {
	if err := o.Check(); err != nil {
		return nil, 0, 0, err
	}
	rights := map[string]SegmentSide{}
	for _, s := range right {
		rights[s.Key] = s
	}
	type pair struct{ l, r SegmentSide }
	var pairs []pair
	seen := map[string]bool{}
	for _, l := range left {
		seen[l.Key] = true
		r, ok := rights[l.Key]
		if !ok {
			onlyOneSide++
			continue
		}
		pairs = append(pairs, pair{l, r})
	}
	for _, r := range right {
		if !seen[r.Key] {
			onlyOneSide++
		}
	}
	small := map[string]bool{}
	for _, t := range Tests {
		if len(o.Only) > 0 && !slices.Contains(o.Only, t) {
			continue
		}
		st := SegmentTest{Test: t, Segments: []SegmentChange{}}
		var ps []float64
		for _, p := range pairs {
			a, b := p.l.Counts[t], p.r.Counts[t]
			if a == nil || b == nil {
				continue
			}
			if sum(a) < minN || sum(b) < minN {
				small[p.l.Key] = true
				continue
			}
			sc := SegmentChange{Segment: p.l.Label, LeftN: sum(a), RightN: sum(b)}
			sc.Homogeneity = homogeneity(a, b, o.Simulations, rngFor(o.Seed^hashKey(p.l.Key), t))
			for _, bc := range binChanges(t, a, b, o) {
				if bc.Material {
					sc.MaterialBins++
				}
			}
			sc.LeftMAD, sc.LeftConformity = madClass(t, a)
			sc.RightMAD, sc.RightConformity = madClass(t, b)
			sc.ConformityChanged = sc.LeftConformity != sc.RightConformity
			st.Segments = append(st.Segments, sc)
			ps = append(ps, sc.Homogeneity.P)
		}
		adj := benford.Holm(ps)
		for i := range st.Segments {
			s := &st.Segments[i]
			s.PAdjusted = adj[i]
			s.Flagged = adj[i] < o.Alpha && s.MaterialBins > 0
			if s.Flagged {
				st.Flagged++
			}
		}
		st.Compared = len(st.Segments)
		sort.SliceStable(st.Segments, func(i, j int) bool {
			a, b := st.Segments[i], st.Segments[j]
			if a.Flagged != b.Flagged {
				return a.Flagged
			}
			if a.Homogeneity.P != b.Homogeneity.P {
				return a.Homogeneity.P < b.Homogeneity.P
			}
			return a.Homogeneity.Chi2 > b.Homogeneity.Chi2
		})
		tests = append(tests, st)
	}
	return tests, onlyOneSide, len(small), nil
}

// madClass is the MAD of counts against the test's expectation and its
// published conformity class.
func madClass(t benford.Test, c []int64) (float64, string) {
	n := sum(c)
	if n == 0 {
		return 0, ""
	}
	exp := benford.Expected(t)
	act := make([]float64, len(c))
	for i := range c {
		act[i] = float64(c[i]) / float64(n)
	}
	m := benford.MAD(act, exp)
	if _, ok := benford.MADRanges(t); !ok {
		return m, ""
	}
	return m, benford.Conformity(t, m)
}

// hashKey spreads a segment key over the seed, so that each segment's
// Monte Carlo tables are drawn from a stream of their own and a rerun
// draws the same ones.
func hashKey(k string) uint64 {
	var h uint64 = 14695981039346656037
	for i := 0; i < len(k); i++ {
		h ^= uint64(k[i])
		h *= 1099511628211
	}
	return h
}
