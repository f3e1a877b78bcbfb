package main

import (
	"context"
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/compare"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
)

// compareSegments is compare --by: the segments of each side, counted by
// one aggregate scan per side (no statistics beyond the comparison), and
// compared segment by segment (compare.CompareSegments).
func compareSegments(ctx context.Context, e *env, ws *workspace.Workspace, o compareOptions, rep *compare.Report) error {
	var left, right []compare.SegmentSide
	var err error
	switch o.mode() {
	case compare.ModeFilters:
		for i, where := range []string{o.left, o.right} {
			s := o.spec
			s.Where = where
			side, err := segmentSides(ctx, ws, s, o.by, "--"+[]string{"left", "right"}[i], 0)
			if err != nil {
				return err
			}
			if i == 0 {
				left = sides(side)
			} else {
				right = sides(side)
			}
		}
	case compare.ModeWorkspaces:
		l, err := segmentSides(ctx, ws, o.spec, o.by, "--db", 0)
		if err != nil {
			return err
		}
		left = sides(l)
		other := o.db
		other.path = o.against
		ws2, err := e.openWorkspace(ctx, other, true)
		if err != nil {
			return fmt.Errorf("--against %s: %w", o.against, err)
		}
		r, err := segmentSides(ctx, ws2, o.spec, o.by, "--against", 0)
		ws2.Close()
		if err != nil {
			return err
		}
		right = sides(r)
	case compare.ModeSplit:
		// One scan by the split column and the segment columns; the first
		// part of each key says the side.
		all, err := segmentSides(ctx, ws, o.spec, append([]string{o.split}, o.by...), "--by", 1)
		if err != nil {
			return err
		}
		for _, s := range all {
			switch s.Side {
			case o.values[0]:
				left = append(left, s.SegmentSide)
			case o.values[1]:
				right = append(right, s.SegmentSide)
			}
		}
	default:
		return fmt.Errorf("--by with --runs: a stored run keeps its own segments; compare filters, values or workspaces with --by")
	}
	tests, one, small, err := compare.CompareSegments(left, right, o.minSeg, o.compare)
	if err != nil {
		return err
	}
	rep.By, rep.MinSegment, rep.Segments, rep.SegmentsOneSide, rep.SegmentsTooSmall = o.by, o.minSeg, tests, one, small
	return nil
}

// sideSegment is a segment of a scan with, for a split, the value of the
// split column that says its side.
type sideSegment struct {
	compare.SegmentSide
	Side string
}

func sides(s []sideSegment) []compare.SegmentSide {
	out := make([]compare.SegmentSide, len(s))
	for i := range s {
		out[i] = s[i].SegmentSide
	}
	return out
}

// segmentSides counts the count tests per segment of by in one aggregate
// scan; the first lead parts of each key are the side (a split's value)
// and the rest names the segment.
func segmentSides(ctx context.Context, ws *workspace.Workspace, s population.Spec, by []string, flag string, lead int) ([]sideSegment, error) {
	_, segs, err := countScan(ctx, ws, s, by, flag)
	if err != nil {
		return nil, err
	}
	out := make([]sideSegment, 0, len(segs))
	for _, sc := range segs {
		k := sc.Key
		side := ""
		if lead > 0 {
			side = segment.Key(k[:lead]).Label()
			k = k[lead:]
		}
		out = append(out, sideSegment{Side: side, SegmentSide: compare.SegmentSide{Key: segment.Key(k).String(), Label: segment.Key(k).Label(), Counts: countsOf(sc.Counts)}})
	}
	return out, nil
}

// printCompareSegments writes the segment comparison of compare --by.
func printCompareSegments(w io.Writer, rep *compare.Report, top int) error {
	if len(rep.By) == 0 {
		return nil
	}
	fmt.Fprintf(w, "\nSegments by %s, compared where a segment has at least %s amounts on each side", strings.Join(rep.By, ", "), numfmt.Int(rep.MinSegment))
	if rep.SegmentsOneSide+rep.SegmentsTooSmall > 0 {
		fmt.Fprintf(w, " (left out: %s on one side only, %s smaller on a side)", numfmt.Int(int64(rep.SegmentsOneSide)), numfmt.Int(int64(rep.SegmentsTooSmall)))
	}
	fmt.Fprintf(w, ".\nA segment is flagged when its homogeneity p, Holm-adjusted over the segments, is below %g%% and a bin's share moved by the materiality margin.\n", 100*rep.Options.Alpha)
	for _, st := range rep.Segments {
		fmt.Fprintf(w, "\n%s by segment: %s compared, %s flagged\n", capitalize(st.Test.Name()), numfmt.Int(int64(st.Compared)), numfmt.Int(int64(st.Flagged)))
		if st.Compared == 0 || top == 0 {
			continue
		}
		t := &tabular.Table{Columns: []string{"segment", "left_n", "right_n", "chi2", "p", "p_adjusted", "material_bins", "left_mad", "right_mad", "flag"}}
		for i, sc := range st.Segments {
			if top > 0 && i >= top {
				break
			}
			flag := ""
			switch {
			case sc.Flagged:
				flag = "changed"
			case sc.PAdjusted < rep.Options.Alpha:
				flag = "(immaterial)"
			}
			mad := func(m float64, class string) string {
				if class == "" {
					return numfmt.Stat(m)
				}
				return numfmt.Stat(m) + " " + class
			}
			t.Add(sc.Segment, numfmt.Int(sc.LeftN), numfmt.Int(sc.RightN), numfmt.Stat(sc.Homogeneity.Chi2), numfmt.P(sc.Homogeneity.P), numfmt.P(sc.PAdjusted),
				sc.MaterialBins, mad(sc.LeftMAD, sc.LeftConformity), mad(sc.RightMAD, sc.RightConformity), flag)
		}
		if err := t.WriteText(w, 40); err != nil {
			return err
		}
		if top > 0 && len(st.Segments) > top {
			fmt.Fprintf(w, "(%s more; --top or --format json for all)\n", numfmt.Int(int64(len(st.Segments)-top)))
		}
	}
	return nil
}
