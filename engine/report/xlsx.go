package report

import (
	"encoding/json"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/output"
	"github.com/xuri/excelize/v2"
)

// ChartTests are the digit tests that get a native chart in the workbook.
var ChartTests = []benford.Test{benford.FirstDigit, benford.FirstTwo}

// ChartSheetName is the sheet a digit test's chart goes to.
func ChartSheetName(t benford.Test) string { return "chart_" + string(t) }

// AddDigitChart writes the bins of a digit test to a sheet of its own (bin,
// count, observed proportion within bounds, observed proportion of flagged
// bins, expected, lower and upper bound) and draws a native chart beside
// them: the observed proportions as columns (flagged bins in orange, the
// others in blue), the expected proportions as a black line with markers
// and the 95% bounds as dashed grey lines. The data are the sheet's cells,
// so the chart stays live if a reviewer edits them. It returns the sheet's
// name (sheet, or sheet_2... when taken).
func AddDigitChart(f *excelize.File, sheet string, r *benford.Result) (string, error) {
	name := sheet
	for k := 2; ; k++ {
		if idx, _ := f.GetSheetIndex(name); idx < 0 {
			break
		}
		name = fmt.Sprintf("%s_%d", sheet, k)
	}
	if _, err := f.NewSheet(name); err != nil {
		return "", err
	}
	head := []any{"Bin", "Count", "Observed (within bounds)", "Observed (flagged)", "Expected", "Lower bound", "Upper bound", "Flagged"}
	if err := f.SetSheetRow(name, "A1", &head); err != nil {
		return "", err
	}
	for i, b := range r.Bins {
		row := []any{b.Label, b.Count, nil, nil, b.Expected, b.Lower, b.Upper, output.FlagWord("flagged", b.Flagged)}
		if b.Flagged {
			row[3] = b.Actual
		} else {
			row[2] = b.Actual
		}
		cell, _ := excelize.CoordinatesToCellName(1, i+2)
		if err := f.SetSheetRow(name, cell, &row); err != nil {
			return "", err
		}
	}
	n := len(r.Bins) + 1
	pct, err := f.NewStyle(&excelize.Style{NumFmt: 10}) // 0.00%
	if err != nil {
		return "", err
	}
	if err := f.SetCellStyle(name, "C2", fmt.Sprintf("G%d", n), pct); err != nil {
		return "", err
	}
	bold, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	if err != nil {
		return "", err
	}
	if err := f.SetCellStyle(name, "A1", "H1", bold); err != nil {
		return "", err
	}
	if err := f.SetPanes(name, &excelize.Panes{Freeze: true, YSplit: 1, TopLeftCell: "A2", ActivePane: "bottomLeft"}); err != nil {
		return "", err
	}
	if err := f.AutoFilter(name, fmt.Sprintf("A1:H%d", max(n, 2)), nil); err != nil {
		return "", err
	}
	_ = f.SetColWidth(name, "A", "A", 6)
	_ = f.SetColWidth(name, "B", "H", 14)
	q := "'" + strings.ReplaceAll(name, "'", "''") + "'"
	col := func(c string) string { return fmt.Sprintf("%s!$%s$2:$%s$%d", q, c, c, n) }
	cats := col("A")
	solid := func(hex string) excelize.Fill {
		return excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{hex}}
	}
	overlap := 100
	vary := false
	gap := uint(40)
	width := 640 + 6*len(r.Bins)
	bars := &excelize.Chart{
		Type: excelize.Col,
		Series: []excelize.ChartSeries{
			{Name: q + "!$C$1", Categories: cats, Values: col("C"), Fill: solid(colBlue)},
			{Name: q + "!$D$1", Categories: cats, Values: col("D"), Fill: solid(colOrange)},
		},
		Overlap:      &overlap,
		VaryColors:   &vary,
		GapWidth:     &gap,
		Format:       excelize.GraphicOptions{OffsetX: 10, OffsetY: 10},
		Dimension:    excelize.ChartDimension{Width: uint(width), Height: 380},
		Legend:       excelize.ChartLegend{Position: "top"},
		Title:        excelize.ChartTitle{Paragraph: []excelize.RichTextRun{{Text: capitalise(r.Test.Name()) + fmt.Sprintf(": observed and expected proportions (N = %d, %d bins flagged)", r.N, r.Flagged)}}},
		YAxis:        excelize.ChartAxis{MajorGridLines: true, NumFmt: excelize.ChartNumFmt{CustomNumFmt: "0%"}},
		XAxis:        excelize.ChartAxis{TickLabelSkip: tickSkip(len(r.Bins))},
		ShowBlanksAs: "gap",
	}
	lines := &excelize.Chart{
		Type: excelize.Line,
		Series: []excelize.ChartSeries{
			{Name: q + "!$E$1", Categories: cats, Values: col("E"), Fill: solid(colInk), Line: excelize.LineOptions{Width: 1.5},
				Marker: excelize.ChartMarker{Symbol: "circle", Size: 4, Fill: solid("#ffffff")}},
			{Name: q + "!$F$1", Categories: cats, Values: col("F"), Fill: solid(colGrey), Line: excelize.LineOptions{Width: 1, Dash: excelize.LineDashDash},
				Marker: excelize.ChartMarker{Symbol: "none"}},
			{Name: q + "!$G$1", Categories: cats, Values: col("G"), Fill: solid(colGrey), Line: excelize.LineOptions{Width: 1, Dash: excelize.LineDashDash},
				Marker: excelize.ChartMarker{Symbol: "none"}},
		},
	}
	if err := f.AddChart(name, "J3", bars, lines); err != nil {
		return "", fmt.Errorf("chart of the %s: %w", r.Test.Name(), err)
	}
	note := "Results are signals for follow-up, never proof of fraud or error. Flagged: the observed proportion lies outside the bin's 95% bounds."
	if err := f.SetCellValue(name, "J1", note); err != nil {
		return "", err
	}
	return name, nil
}

func tickSkip(k int) int {
	if k > 20 {
		return 5
	}
	return 1
}

// AddDigitCharts adds the charts of the first-digit and first-two digits
// tests among results (whole-population results; other tests are left
// out). It returns the sheets added.
func AddDigitCharts(f *excelize.File, results []benford.Result) ([]string, error) {
	var sheets []string
	for _, t := range ChartTests {
		for i := range results {
			if results[i].Test != t {
				continue
			}
			s, err := AddDigitChart(f, ChartSheetName(t), &results[i])
			if err != nil {
				return sheets, err
			}
			sheets = append(sheets, s)
			break
		}
	}
	return sheets, nil
}

// digitChartsHook is the workbook hook of a pack run: it finds the digit
// tests of the whole population among the run's results (the shallowest
// digit-test results of any step) and charts them.
func digitChartsHook(f *excelize.File, run *output.Run, _ map[string]string) error {
	results, err := digitResultsOf(run)
	if err != nil || len(results) == 0 {
		return err
	}
	_, err = AddDigitCharts(f, results)
	return err
}

// digitResultsOf returns the whole-population digit tests of a pack run.
func digitResultsOf(run *output.Run) ([]benford.Result, error) {
	for _, key := range sortedKeys(run.Results) {
		raw, err := json.Marshal(run.Results[key])
		if err != nil {
			return nil, err
		}
		root, err := parseOrdered(raw)
		if err != nil {
			return nil, err
		}
		var fs []found
		findObjects(root, "", 0, isDigitResult, &fs)
		var out []benford.Result
		for _, fd := range shallowest(fs) {
			sub, err := resolvePointer(raw, fd.ptr)
			if err != nil {
				return nil, err
			}
			var r benford.Result
			if err := json.Unmarshal(sub, &r); err != nil {
				return nil, err
			}
			out = append(out, r)
		}
		if len(out) > 0 {
			return out, nil
		}
	}
	return nil, nil
}
