package battery

import (
	"fmt"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
)

// FromCounts runs the battery's statistics on bin-count tables counted
// elsewhere (another engine, other partitions) and merged: the whole
// selection's table and, with segment names by, each segment's table in
// key order, as Plan.Scan returns them. The report is the one Run makes
// from the same tables: results, rankings and notes. The second-order test
// and number duplication need the rows, so they cannot run on counts.
func FromCounts(o Options, scale int, amountType string, by []string, all *Counts, segs []SegmentCounts) (*Report, error) {
	start := time.Now()
	o = o.WithDefaults()
	if err := o.Check(); err != nil {
		return nil, err
	}
	if o.Has(benford.SecondOrder) || o.Duplication {
		return nil, fmt.Errorf("--tests: the second-order test and number duplication need the records, not counts; leave them out with counts (--tests first,second,first_two,first_three,last_two,summation)")
	}
	o.By = by
	p := &Plan{Options: o, AmountType: population.AmountType{Scale: scale}, Segments: make([]Segment, len(by))}
	for i, b := range by {
		p.Segments[i].Name = b
	}
	rep := &Report{Kind: "scan", Params: o, AmountType: amountType, Tests: []benford.Result{}}
	if err := rep.statistics(p, all, segs); err != nil {
		return nil, err
	}
	rep.Seconds.Statistics = time.Since(start).Seconds()
	rep.Seconds.Total = rep.Seconds.Statistics
	return rep, nil
}

// CountTests are the tests that run on bin counts alone.
func CountTests() []benford.Test {
	var out []benford.Test
	for _, t := range benford.AllTests() {
		if t != benford.SecondOrder {
			out = append(out, t)
		}
	}
	return out
}
