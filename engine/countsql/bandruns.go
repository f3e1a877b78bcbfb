package countsql

import (
	"fmt"

	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/segment"
)

// readBandRun reads the query file of a band test and its count files.
func readBandRun(queryPath string, files []string, test string) (Spec, *BandCounts, *Source, error) {
	spec, text, err := readSpec(queryPath)
	if err != nil {
		return spec, nil, nil, err
	}
	if spec.Test != test {
		what := "the digit battery's counts"
		if spec.Test != "" {
			what = "the bands of leadline " + spec.Test
		}
		return spec, nil, nil, fmt.Errorf("--count-query %s counts %s: print the query for leadline %s with count-sql --test %s", queryPath, what, test, test)
	}
	want, err := spec.grid()
	if err != nil {
		return spec, nil, nil, err
	}
	if spec.Grid == nil || fmt.Sprint(*want) != fmt.Sprint(*spec.Grid) {
		return spec, nil, nil, fmt.Errorf("--count-query %s: the grid on its first line is not the one its options give: give the query count-sql printed, unchanged", queryPath)
	}
	m, err := readBands(files, spec)
	if err != nil {
		return spec, nil, nil, err
	}
	if err := sameSegments(m.By, spec, queryPath); err != nil {
		return spec, nil, nil, err
	}
	src := &Source{Engine: spec.Engine, Table: spec.Table, Query: queryPath, QuerySHA256: SHA256(text), Files: m.Files}
	src.NoAmount, src.Filtered = m.leftOut()
	return spec, m, src, nil
}

// population is the spec's population as the local tests take it.
func (s Spec) population() population.Spec {
	return population.Spec{Where: s.Where, Signs: s.Signs, Min: s.Min}.WithDefaults()
}

// Limits runs the limit probe on band count files: the query file (count-sql
// --test limits) gives the population, the limits (or the round values)
// and the width; the files are merged exactly, and the results, ranks and
// notes are those of leadline limits on the same rows. From o it takes
// the segments (--by, names among the query's) and the minimum count.
// Each row's Drill is the engine's query listing the records below its
// limit.
func Limits(queryPath string, files []string, o limits.Options) (*limits.Report, *Source, error) {
	spec, m, src, err := readBandRun(queryPath, files, TestLimits)
	if err != nil {
		return nil, nil, err
	}
	o.Spec = spec.population()
	o.Limits, o.Width = spec.Limits, spec.Width
	if o, err = o.Checked(); err != nil {
		return nil, nil, err
	}
	_, names, err := m.index(o.By)
	if err != nil {
		return nil, nil, err
	}
	segs := make([]ranges.Segment, len(names))
	for i, n := range names {
		segs[i] = segment.Segment{Name: n}
	}
	rep := limits.NewReport(o, o.Spec, AmountType(spec), "", segs)
	if len(o.Limits) == 0 {
		sum, err := m.Summary()
		if err != nil {
			return nil, nil, err
		}
		if err := rep.ScanRoundLimits(sum); err != nil {
			return nil, nil, err
		}
	}
	edges := limits.Edges(rep.Limits, o.Width)
	groups, err := m.Groups(names, edges)
	if err != nil {
		return nil, nil, err
	}
	var drillErr error
	err = rep.Finish(groups, segs, edges, spec.Scale, func(r limits.Row) string {
		q, err := RecordsQuery(spec, r.From, r.Limit, names, r.Key())
		if err != nil && drillErr == nil {
			drillErr = err
		}
		return q
	})
	if err == nil {
		err = drillErr
	}
	if err != nil {
		return nil, nil, err
	}
	return rep, src, nil
}

// Ranges runs the range table on band count files: the query file
// (count-sql --test ranges) gives the population and the layout; the files
// are merged exactly, and the bands, scores, notes and stretches are those
// of leadline ranges on the same rows. Flagged bands and stretches carry
// the engine's query listing their records as Drill.
func Ranges(queryPath string, files []string) (*ranges.Report, *Source, error) {
	spec, m, src, err := readBandRun(queryPath, files, TestRanges)
	if err != nil {
		return nil, nil, err
	}
	o := ranges.Options{Spec: spec.population(), Layout: *spec.Layout}
	sum, err := m.Summary()
	if err != nil {
		return nil, nil, err
	}
	if sum.Tested == 0 {
		return nil, nil, population.NoAmounts(sum.Rows, sum.Left(), o.Spec.Min)
	}
	bands, err := o.Layout.Bands(sum.Min, sum.Max)
	if err != nil {
		return nil, nil, err
	}
	edges := ranges.Edges(bands)
	groups, err := m.Groups(nil, edges)
	if err != nil {
		return nil, nil, err
	}
	minAmount, err := population.ParseMin(o.Spec.Min)
	if err != nil {
		return nil, nil, err
	}
	mf, _ := minAmount.Float64()
	var drillErr error
	rep, err := ranges.Finish(o, o.Spec, AmountType(spec), "", mf, spec.Scale, bands, groups[0], func(from, to float64, _ string) string {
		q, err := RecordsQuery(spec, from, to, nil, nil)
		if err != nil && drillErr == nil {
			drillErr = err
		}
		return q
	})
	if err == nil {
		err = drillErr
	}
	if err != nil {
		return nil, nil, err
	}
	return rep, src, nil
}
