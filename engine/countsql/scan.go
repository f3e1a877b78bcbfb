package countsql

import (
	"fmt"
	"os"
	"strings"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/population"
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
func Scan(queryPath string, files []string, o battery.Options) (*battery.Report, *Source, error) {
	spec, text, err := readSpec(queryPath)
	if err != nil {
		return nil, nil, err
	}
	if spec.Test != "" {
		return nil, nil, fmt.Errorf("--count-query %s counts the bands of leadline %s: run leadline %s --counts with it, or print the battery's query with count-sql", queryPath, spec.Test, spec.Test)
	}
	m, err := ReadFiles(files)
	if err != nil {
		return nil, nil, err
	}
	if err := sameSegments(m.By, spec, queryPath); err != nil {
		return nil, nil, err
	}
	all, segs, err := m.Counts(o.By, spec.Scale)
	if err != nil {
		return nil, nil, err
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
		return nil, nil, err
	}
	src := &Source{Engine: spec.Engine, Table: spec.Table, Query: queryPath, QuerySHA256: SHA256(text), Files: m.Files}
	return rep, src, nil
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
