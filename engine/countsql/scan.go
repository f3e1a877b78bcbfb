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
}

// Scan runs the digit battery on count files: the query file (as count-sql
// printed it) gives the population and the scale, the files are merged
// exactly, and the statistics are those of a local scan of the same rows.
// From o it takes the tests, the segments (--by, names among the query's
// segments) and the ranking options; the population is the query's.
func Scan(queryPath string, files []string, o battery.Options) (*battery.Report, *Source, error) {
	text, err := os.ReadFile(queryPath)
	if err != nil {
		return nil, nil, fmt.Errorf("--count-query: %w", err)
	}
	spec, err := ReadQuery(string(text))
	if err != nil {
		return nil, nil, fmt.Errorf("--count-query %s: %w", queryPath, err)
	}
	m, err := ReadFiles(files)
	if err != nil {
		return nil, nil, err
	}
	if len(m.By) != len(spec.By) {
		return nil, nil, fmt.Errorf("the count files have segments %v but the query %s counts by %d columns: give the query that made the files", m.By, queryPath, len(spec.By))
	}
	for i, b := range spec.By {
		if m.By[i] != b.Name {
			return nil, nil, fmt.Errorf("the count files have segments %v but the query %s counts by %s: give the query that made the files", m.By, queryPath, b.Name)
		}
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

// AmountType describes the amounts counted elsewhere, for the report.
func AmountType(s Spec) string {
	return fmt.Sprintf("whole units of 10^-%d, counted by %s", s.Scale, s.Engine)
}
