package drill

import (
	"context"
	"database/sql"
	"fmt"
	"math/big"
	"strings"

	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/sample"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// SampleDrawn records a sample as drawn: enough for a reviewer to draw it
// again from the same records in the same order. Pack extracts and
// drill --sample write it into the manifest, the stored run and the
// report.
type SampleDrawn struct {
	Method            string `json:"method"`
	Seed              int64  `json:"seed"`
	Size              int    `json:"size"`               // asked for
	Selected          int    `json:"selected"`           // records selected
	PopulationRecords int64  `json:"population_records"` // the records sampled from
	PopulationTotal   string `json:"population_total"`   // sum of |amount| over them
	Interval          string `json:"interval,omitempty"` // monetary: the sampling interval
	Start             string `json:"start,omitempty"`    // monetary: the random start
	Order             string `json:"order"`              // the population's order
	// Positions are the selected records' places in the order (from 0).
	Positions []int64 `json:"-"`
}

// FileOrder says the order drill --sample draws in: the order in which
// the records were loaded, which is the file order of drill --out.
const FileOrder = "the selected records in file order (by file as loaded, then line), the order of leadline drill --out without --sort"

// Querier runs SQL: a *sql.Conn, *sql.DB or *sql.Tx.
type Querier interface {
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
}

// Describe says the draw in words: method, interval and start, the
// records asked and selected, the population and seed.
func (d *SampleDrawn) Describe() string {
	how := "simple random sample (each record equally likely)"
	if d.Method == "monetary" {
		how = fmt.Sprintf("monetary-unit sample (probability proportional to |amount|; interval %s, random start %s)", numfmt.Money(d.Interval), numfmt.Money(d.Start))
	}
	return fmt.Sprintf("%s of %s record(s) asked, %s selected, from %s records totalling %s (|amount|), seed %d",
		how, numfmt.Int(int64(d.Size)), numfmt.Int(int64(d.Selected)), numfmt.Int(d.PopulationRecords), numfmt.Money(d.PopulationTotal), d.Seed)
}

// DrawSample draws a sample from stage, a table of records numbered in
// their order by ll_pos (from 0) with their amount: method "random" draws
// size records with equal probability, "monetary" by |amount| (see
// engine/sample). It returns the drawn records (every column of stage but
// those named in exclude and ll_pos, in ll_pos order) and what was drawn;
// scale is the amounts' decimal places, order says the stage's order in
// words.
func DrawSample(ctx context.Context, db Querier, stage string, exclude []string, method string, size int, seed int64, scale int, order string) (*tabular.Table, *SampleDrawn, error) {
	d := &SampleDrawn{Method: method, Seed: seed, Size: size, Order: order}
	rows, err := db.QueryContext(ctx, queries.Render("sample_sizes", map[string]string{"table": stage}))
	if err != nil {
		return nil, nil, err
	}
	var sizes []*big.Int
	total := new(big.Int)
	for rows.Next() {
		var a sql.NullString
		if err := rows.Scan(&a); err != nil {
			rows.Close()
			return nil, nil, err
		}
		u := new(big.Int)
		if a.Valid {
			if _, ok := u.SetString(strings.Replace(a.String, ".", "", 1), 10); !ok {
				rows.Close()
				return nil, nil, fmt.Errorf("amount %q is not a decimal", a.String)
			}
		}
		sizes = append(sizes, u)
		total.Add(total, u)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, nil, err
	}
	d.PopulationRecords = int64(len(sizes))
	d.PopulationTotal = UnitsText(total, scale)
	var positions []int64
	switch method {
	case "random":
		positions = sample.Random(int64(len(sizes)), size, uint64(seed))
	case "monetary":
		res, err := sample.Monetary(sizes, size, uint64(seed))
		if err != nil {
			return nil, nil, err
		}
		positions = res.Positions
		d.Interval, d.Start = UnitsText(res.Interval, scale), UnitsText(res.Start, scale)
	default:
		return nil, nil, fmt.Errorf("unknown sampling method %q: give %s", method, strings.Join(sample.Methods, " or "))
	}
	d.Selected = len(positions)
	d.Positions = positions
	marks := "NULL"
	var args []any
	if len(positions) > 0 {
		marks = strings.TrimSuffix(strings.Repeat("?, ", len(positions)), ", ")
		for _, p := range positions {
			args = append(args, p)
		}
	}
	ex := []string{"ll_pos"}
	for _, c := range exclude {
		ex = append(ex, quoteIdent(c))
	}
	srows, err := db.QueryContext(ctx, queries.Render("sample_rows", map[string]string{"table": stage, "exclude": strings.Join(ex, ", "), "ids": marks}), args...)
	if err != nil {
		return nil, nil, err
	}
	t, _, err := tabular.FromRows(srows, len(positions)+1)
	if err != nil {
		return nil, nil, err
	}
	exactDecimals(t)
	return t, d, nil
}

// UnitsText writes an amount in the smallest units as decimal text with
// scale decimal places.
func UnitsText(u *big.Int, scale int) string {
	s := new(big.Int).Abs(u).String()
	if scale > 0 {
		if len(s) <= scale {
			s = strings.Repeat("0", scale-len(s)+1) + s
		}
		s = s[:len(s)-scale] + "." + s[len(s)-scale:]
	}
	if u.Sign() < 0 {
		s = "-" + s
	}
	return s
}

// DefaultSampleSize is the records a sample asks for unless told.
const DefaultSampleSize = 25

// sampleStage is the temporary table drill --sample numbers the
// selection's records in.
const sampleStage = "ll_drill_sample"

// Sample draws a sample of the selection's records in file order
// (FileOrder): method "random" or "monetary", size records asked, seed.
// It returns the records drawn and what was drawn; ExportSample then
// writes them to a file.
func Sample(ctx context.Context, ws *workspace.Workspace, b *Built, method string, size int, seed int64) (*tabular.Table, *SampleDrawn, error) {
	q, args, err := recordsQuery(ctx, ws, b, RecordOptions{})
	if err != nil {
		return nil, nil, err
	}
	stage := quoteIdent(sampleStage)
	if _, err := ws.Conn.ExecContext(ctx, queries.Render("sample_stage_drill", map[string]string{"table": stage, "query": strings.TrimSuffix(strings.TrimSpace(q), ";")}), args...); err != nil {
		return nil, nil, fmt.Errorf("drill: %w", err)
	}
	t, d, err := DrawSample(ctx, ws.Conn, stage, nil, method, size, seed, b.AmountType.Scale, FileOrder)
	if err != nil {
		return nil, nil, fmt.Errorf("--sample %s: %w", method, err)
	}
	t.Name = "sample"
	return t, d, nil
}

// ExportSample writes the records Sample drew (d) to path as Export
// writes records, follow-up columns included.
func ExportSample(ctx context.Context, ws *workspace.Workspace, d *SampleDrawn, path string) error {
	format, err := ExportFormat(path)
	if err != nil {
		return err
	}
	marks := "NULL"
	var args []any
	if len(d.Positions) > 0 {
		marks = strings.TrimSuffix(strings.Repeat("?, ", len(d.Positions)), ", ")
		for _, p := range d.Positions {
			args = append(args, p)
		}
	}
	q := queries.Render("sample_rows", map[string]string{"table": quoteIdent(sampleStage), "exclude": "ll_pos", "ids": marks})
	return exportRecords(ctx, ws, q, args, path, format)
}

// FileColumnName is the name of the file-name column of the workspace's
// exported records: file_name, unless the ledger has a column of that name.
func FileColumnName(ctx context.Context, ws *workspace.Workspace) (string, error) {
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return "", err
	}
	return fileColumn(cols), nil
}
