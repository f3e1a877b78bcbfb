package countsql

import (
	"fmt"
	"os"
	"strings"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/segment"
)

// Source says where a run's counts came from: the engine, the table, the
// SHA-256 of the query text that counted them and every file read with its
// own SHA-256. The JSON document and the stored run carry it.
type Source struct {
	Engine      string `json:"engine"`
	Table       string `json:"table"`
	Query       string `json:"query"` // the query file given
	QuerySHA256 string `json:"query_sha256"`
	Files       []File `json:"files"`
	// Rows of a band count the bands do not show (limits and ranges
	// count the rows the filter keeps, of an amount): NULL amounts and
	// rows the filter dropped.
	NoAmount int64 `json:"no_amount,omitempty"`
	Filtered int64 `json:"filtered,omitempty"`
}

// Scan runs the digit battery on count files: the query file (as count-sql
// printed it) gives the population and the scale, the files are merged
// exactly, and the statistics are those of a local scan of the same rows.
// From o it takes the tests, the segments (--by, names among the query's
// segments) and the ranking options; the population is the query's.
func Scan(queryPath string, files []string, o battery.Options) (*battery.Report, *Source, []BinDrill, error) {
	rep, src, spec, names, err := scan(queryPath, files, o)
	if err != nil {
		return nil, nil, nil, err
	}
	drills, err := Drills(spec, rep, names)
	if err != nil {
		return nil, nil, nil, err
	}
	return rep, src, drills, nil
}

func scan(queryPath string, files []string, o battery.Options) (*battery.Report, *Source, Spec, []string, error) {
	spec, text, err := readSpec(queryPath)
	if err != nil {
		return nil, nil, spec, nil, err
	}
	if spec.Test != "" {
		return nil, nil, spec, nil, fmt.Errorf("--count-query %s counts the bands of leadline %s: run leadline %s --counts with it, or print the battery's query with count-sql", queryPath, spec.Test, spec.Test)
	}
	m, err := ReadFiles(files)
	if err != nil {
		return nil, nil, spec, nil, err
	}
	if err := sameSegments(m.By, spec, queryPath); err != nil {
		return nil, nil, spec, nil, err
	}
	all, segs, err := m.Counts(o.By, spec.Scale)
	if err != nil {
		return nil, nil, spec, nil, err
	}
	o.Spec = population.Spec{Where: spec.Where, Signs: spec.Signs, Min: spec.Min}
	o.LastTwo = spec.LastTwo
	o.LastTwoAll = spec.LastTwoAll
	by := o.By
	if by == nil {
		by = []string{}
	}
	names := make([]string, len(by))
	for i, b := range by {
		for _, n := range m.By {
			if strings.EqualFold(b, n) {
				names[i] = n
			}
		}
	}
	rep, err := battery.FromCounts(o, spec.Scale, AmountType(spec), names, all, segs)
	if err != nil {
		return nil, nil, spec, nil, err
	}
	src := &Source{Engine: spec.Engine, Table: spec.Table, Query: queryPath, QuerySHA256: SHA256(text), Files: m.Files}
	return rep, src, spec, names, nil
}

// readSpec reads a query file count-sql printed and the spec on its first
// line.
func readSpec(queryPath string) (Spec, []byte, error) {
	text, err := os.ReadFile(queryPath)
	if err != nil {
		return Spec{}, nil, fmt.Errorf("--count-query: %w", err)
	}
	spec, err := ReadQuery(string(text))
	if err != nil {
		return Spec{}, nil, fmt.Errorf("--count-query %s: %w", queryPath, err)
	}
	return spec, text, nil
}

// sameSegments checks that count files have the segment columns of the
// query that made them.
func sameSegments(by []string, spec Spec, queryPath string) error {
	if len(by) != len(spec.By) {
		return fmt.Errorf("the count files have segments %v but the query %s counts by %d columns: give the query that made the files", by, queryPath, len(spec.By))
	}
	for i, b := range spec.By {
		if by[i] != b.Name {
			return fmt.Errorf("the count files have segments %v but the query %s counts by %s: give the query that made the files", by, queryPath, b.Name)
		}
	}
	return nil
}

// AmountType describes the amounts counted elsewhere, for the report.
func AmountType(s Spec) string {
	return fmt.Sprintf("whole units of 10^-%d, counted by %s", s.Scale, s.Engine)
}

// BinDrill is the engine's query that lists the records behind a flagged
// digit bin (or a flagged stretch of first-two bins) of a scan on counts.
type BinDrill struct {
	Test    benford.Test `json:"test"`
	Segment string       `json:"segment,omitempty"` // the segment's label; empty for the whole selection
	Bins    string       `json:"bins"`              // e.g. "47", or "45-49" for a stretch
	Signal  string       `json:"signal"`            // "bin flag" or "local surplus"
	Count   int64        `json:"count"`             // records the counts put there
	Query   string       `json:"query"`
}

// DrillSegments is the most segments per test whose flags get drill-down
// queries: the first flagged ones of the test's ranking (most distorted
// first). A query is some 3 KB of SQL; a thousand flagged users would
// otherwise print megabytes. The ranking names the others, and
// count-sql --where narrows a query to any one of them.
const DrillSegments = 10

// Drills returns the drill-down queries of a scan on counts: for the
// whole selection and the first DrillSegments flagged segments of each
// test's ranking, each test's bins to follow up first (TopFlagged) and
// the first-two test's flagged local surplus stretches, in the engine's
// SQL (BinRecordsQuery). names are the segment names of the query, in the
// report's order.
func Drills(spec Spec, rep *battery.Report, names []string) ([]BinDrill, error) {
	out := []BinDrill{}
	add := func(label string, key segment.Key, rs []benford.Result) error {
		for _, r := range rs {
			bins := map[int]benford.Bin{}
			for _, b := range r.Bins {
				bins[b.Bin] = b
			}
			for _, b := range r.TopFlagged {
				q, err := BinRecordsQuery(spec, r.Test, b, b, names, key)
				if err != nil {
					return err
				}
				out = append(out, BinDrill{Test: r.Test, Segment: label, Bins: r.Test.Label(b), Signal: "bin flag", Count: bins[b].Count, Query: q})
			}
			if l := r.LocalSurplus; l != nil {
				for _, st := range l.Flagged {
					q, err := BinRecordsQuery(spec, r.Test, st.FromBin, st.ToBin, names, key)
					if err != nil {
						return err
					}
					out = append(out, BinDrill{Test: r.Test, Segment: label, Bins: st.Label(), Signal: "local surplus", Count: st.Count, Query: q})
				}
			}
		}
		return nil
	}
	if err := add("", nil, rep.Tests); err != nil {
		return nil, err
	}
	if rep.Segments == nil {
		return out, nil
	}
	byLabel := map[string]battery.SegmentResult{}
	for _, sr := range rep.SegmentResults {
		byLabel[sr.Key.Label()] = sr
	}
	for _, rk := range rep.Segments.Rankings {
		n := 0
		for _, row := range rk.Rows {
			local := row.LocalFlagged != nil && *row.LocalFlagged > 0
			if row.Flagged == 0 && !local {
				continue
			}
			if n == DrillSegments {
				break
			}
			n++
			sr := byLabel[row.Segment]
			for _, r := range sr.Results {
				if r.Test == rk.Test {
					if err := add(row.Segment, sr.Key, []benford.Result{r}); err != nil {
						return nil, err
					}
				}
			}
		}
	}
	return out, nil
}
