package benford

import (
	"math"
	"sort"
	"strings"
)

// The flags of a segmented scan, adjusted over the segments.
//
// Each segment's bin flag (and local surplus flag) holds its family-wise
// rate at alpha within the segment. A ranking of 40 users, each tested at
// 5%, would then show about two chance flags on users whose amounts follow
// Benford's law. AcrossSegments adjusts the flags once more, over the
// segments of one ranking, by Holm's step-down (the same procedure as over
// a test's bins): each segment's p-value is the smallest adjusted p-value
// of its material bins (for the local surplus flag, of its material
// stretches); the segments' p-values are ordered, the j-th smallest of m
// is multiplied by m - j + 1 and the running maximum kept. A segment's bin
// or stretch stays flagged when its own adjusted p-value times its
// segment's multiplier (and never below the running maximum before it) is
// below alpha, and it is material. So on a ranking of segments that all
// follow Benford's law, the chance that any segment shows a flag is at
// most alpha, however many segments there are (Holm 1979 holds under any
// dependence). The within-segment p-values stay in the results (PAdjusted)
// beside the adjusted ones (PSegments).

// SegmentFamily says how one segment's flags were adjusted over the
// segments of its ranking.
type SegmentFamily struct {
	Segments int     `json:"segments"` // segments in the family (those ranked)
	Factor   int     `json:"factor"`   // Holm's multiplier for this segment's bin flag (m - j + 1)
	P        float64 `json:"p"`        // the segment's bin-flag p-value adjusted over the segments
	// LocalFactor and LocalP are the same for the first-two test's local
	// surplus flag (0 when it was not computed).
	LocalFactor int     `json:"local_factor,omitempty"`
	LocalP      float64 `json:"local_p,omitempty"`
}

// AcrossSegments adjusts, in place, the flags of one test's results in the
// segments of one ranking (segs[i] is segment i's result of that test)
// over the segments, at the results' own alpha.
func AcrossSegments(segs []*Result) {
	m := len(segs)
	if m == 0 {
		return
	}
	binP := make([]float64, m)
	localP := make([]float64, m)
	hasLocal := false
	for i, r := range segs {
		binP[i] = 1
		for _, b := range r.Bins {
			if b.Material && b.PAdjusted < binP[i] {
				binP[i] = b.PAdjusted
			}
		}
		localP[i] = 1
		if l := r.LocalSurplus; l != nil && l.Tested {
			hasLocal = true
			for _, s := range l.Flagged {
				localP[i] = math.Min(localP[i], s.PAdjusted)
			}
		}
	}
	binFactor, binFloor := holmSteps(binP)
	localFactor, localFloor := holmSteps(localP)
	for i, r := range segs {
		alpha := r.FlagRule.Alpha
		fam := &SegmentFamily{Segments: m, Factor: binFactor[i], P: math.Max(binFloor[i], math.Min(1, float64(binFactor[i])*binP[i]))}
		for k := range r.Bins {
			b := &r.Bins[k]
			b.PSegments = math.Max(binFloor[i], math.Min(1, float64(binFactor[i])*b.PAdjusted))
			b.Flagged = b.Flagged && b.PSegments < alpha
		}
		if l := r.LocalSurplus; hasLocal && l != nil && l.Tested {
			fam.LocalFactor = localFactor[i]
			fam.LocalP = math.Max(localFloor[i], math.Min(1, float64(localFactor[i])*localP[i]))
			kept := l.Flagged[:0]
			for _, s := range l.Flagged {
				s.PSegments = math.Max(localFloor[i], math.Min(1, float64(localFactor[i])*s.PAdjusted))
				if s.PSegments < alpha {
					kept = append(kept, s)
				}
			}
			l.Flagged = kept
			l.Segments = m
			if l.Largest.Flagged {
				l.Largest.PSegments = math.Max(localFloor[i], math.Min(1, float64(localFactor[i])*l.Largest.PAdjusted))
				l.Largest.Flagged = l.Largest.PSegments < alpha
			}
		}
		r.SegmentFamily = fam
		r.recountFlags()
	}
}

// holmSteps returns, for each p-value, Holm's multiplier m - j + 1 (j its
// rank, ties in input order) and the largest adjusted p-value of the
// p-values ranked before it (0 for the first), so that the adjusted value
// of any p' tested at p's rank is max(floor, min(1, factor·p')).
func holmSteps(p []float64) (factor []int, floor []float64) {
	m := len(p)
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	factor = make([]int, m)
	floor = make([]float64, m)
	var run float64
	for j, i := range idx {
		factor[i] = m - j
		floor[i] = run
		run = math.Max(run, math.Min(1, float64(m-j)*p[i]))
	}
	return factor, floor
}

// recountFlags counts the flags again after the bins' Flagged changed, and
// mends the note that quotes their number.
func (res *Result) recountFlags() {
	res.Flagged, res.ZFlagged, res.OutsideGoodman = 0, 0, 0
	res.TopFlagged = []int{}
	res.countFlags()
	notes := res.Notes[:0]
	for _, n := range res.Notes {
		if !strings.HasSuffix(n, manyFlaggedTail) {
			notes = append(notes, n)
		}
	}
	res.Notes = notes
	res.noteManyFlagged()
}
