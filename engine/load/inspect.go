package load

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/engine/xlsxin"
	"github.com/leadline/leadline/queries"
)

// ColumnInfo describes one column of an inspected file.
type ColumnInfo struct {
	Name     string `json:"name"`
	Detected string `json:"detected_type"` // DuckDB's guess from a sample
}

// Inspection is what `leadline inspect` reports about a file.
type Inspection struct {
	Path         string              `json:"path"`
	Format       string              `json:"format"`
	SizeBytes    int64               `json:"size_bytes"`
	SHA256       string              `json:"sha256"`
	Delimiter    string              `json:"delimiter,omitempty"`
	Encoding     string              `json:"encoding,omitempty"`
	EncodingWhy  string              `json:"encoding_why,omitempty"` // the evidence for it
	Columns      []ColumnInfo        `json:"columns"`
	Sample       [][]string          `json:"sample"`
	Mapping      Mapping             `json:"suggested_mapping"`
	MappingWhy   map[string]Match    `json:"mapping_why"` // per canonical column (and debit, credit): the header and why
	Ambiguities  []string            `json:"ambiguities"`
	Candidates   map[string][]string `json:"candidates"`
	AmountCheck  *AmountCheck        `json:"amount_check,omitempty"`
	DateFormat   string              `json:"date_format,omitempty"` // strptime format of posted; "" for YYYY-MM-DD
	DateWhy      string              `json:"date_format_why,omitempty"`
	Warnings     []string            `json:"warnings"`
	LoadCommand  string              `json:"load_command"`
	MissingHints []string            `json:"missing"`
	Sheet        *xlsxin.Table       `json:"sheet,omitempty"` // XLSX: the sheets, the one read and its header row
}

// AmountCheck tells how many sampled amounts parse, with and without a
// decimal comma, so the right --decimal-comma choice is visible up front.
type AmountCheck struct {
	Column          string `json:"column"`
	Sampled         int64  `json:"sampled"`
	ParsePoint      int64  `json:"parse_with_decimal_point"`
	ParseComma      int64  `json:"parse_with_decimal_comma"`
	SuggestDecComma bool   `json:"suggest_decimal_comma"`
	// Large counts the amounts of 10^16 or more under the suggested mark,
	// which need --precision 38.
	Large            int64 `json:"large_amounts"`
	SuggestPrecision bool  `json:"suggest_precision_38"`
}

// Inspect examines a file without loading it. ws may be an in-memory
// workspace: only DuckDB's readers are used.
func Inspect(ctx context.Context, ws *workspace.Workspace, path string, opts Options, sampleRows int) (*Inspection, error) {
	paths, err := ExpandPaths([]string{path})
	if err != nil {
		return nil, err
	}
	if len(paths) != 1 {
		return nil, fmt.Errorf("inspect takes one file; %q matches %d", path, len(paths))
	}
	path = paths[0]
	format, _, err := FormatOf(path)
	if err != nil {
		return nil, err
	}
	if format == "xlsx" {
		return inspectXLSX(ctx, ws, path, opts, sampleRows)
	}
	var src *Source
	var det Detection
	if format == "csv" {
		// The whole file's bytes decide the encoding unless --encoding does.
		if det, err = DetectEncoding(path); err != nil {
			return nil, err
		}
		enc := opts.Encoding
		if enc == "" {
			enc = det.Encoding
		}
		src, err = ExamineCSV(path, opts.Delimiter, enc)
	} else {
		src, err = examineParquet(ctx, ws, path)
	}
	if err != nil {
		return nil, err
	}
	src.Size, src.SHA256, err = Hash(path)
	if err != nil {
		return nil, err
	}
	in := &Inspection{Path: path, Format: format, SizeBytes: src.Size, SHA256: src.SHA256, Delimiter: src.Delimiter,
		Encoding: src.Encoding, Warnings: src.Warnings, Ambiguities: []string{}}
	if in.Warnings == nil {
		in.Warnings = []string{}
	}
	if format == "csv" {
		in.EncodingWhy = det.Why
		if src.declared != "" && src.Encoding != det.Encoding && src.declared != "utf-16" {
			in.EncodingWhy = "--encoding " + src.declared + " as given"
			in.Warnings = append(in.Warnings, fmt.Sprintf("the file's bytes point to %s (%s), not %s as --encoding says", det.Encoding, det.Why, src.declared))
		}
		// A sample of the file as the load's reader will see it (in UTF-8).
		if err := src.prepareText(64 << 20); err != nil {
			return nil, err
		}
		defer src.removeText()
	}
	// Detected types: DuckDB's own sniffer on a sample (CSV), the schema (Parquet).
	detected := map[string]string{}
	if format == "csv" {
		q := "DESCRIBE SELECT * FROM read_csv(" + queries.QuoteString(ExactPath(src.csvPath())) + ", delim = " + queries.QuoteString(src.Delimiter) +
			", header = true, encoding = " + queries.QuoteString(src.csvEncoding()) + ", sample_size = 20480, ignore_errors = true)"
		if rows, err := ws.Conn.QueryContext(ctx, q); err == nil {
			cols, _ := rows.Columns()
			i := 0
			for rows.Next() {
				vals := make([]any, len(cols))
				ptrs := make([]any, len(cols))
				for k := range vals {
					ptrs[k] = &vals[k]
				}
				if rows.Scan(ptrs...) == nil && i < len(src.Columns) {
					detected[src.Columns[i]] = fmt.Sprint(vals[1])
				}
				i++
			}
			rows.Close()
		} else {
			in.Warnings = append(in.Warnings, "DuckDB's sniffer could not guess types: "+oneLine(err))
		}
	} else {
		for i, c := range src.Columns {
			detected[c] = src.types[i]
		}
	}
	for _, c := range src.Columns {
		in.Columns = append(in.Columns, ColumnInfo{Name: c, Detected: detected[c]})
	}
	reader := readerSQL(src, "ll_rejects_0")
	reader = strings.Replace(reader, "store_rejects = true", "store_rejects = false, ignore_errors = true", 1)
	reader = strings.Replace(reader, ", rejects_table = 'll_rejects_0', rejects_scan = 'll_rejects_0_scan'", "", 1)
	var sel []string
	for _, c := range src.Columns {
		sel = append(sel, "CAST("+src.ref(c)+" AS VARCHAR)")
	}
	rows, err := ws.Conn.QueryContext(ctx, fmt.Sprintf("SELECT %s FROM %s LIMIT %d", strings.Join(sel, ", "), reader, sampleRows))
	if err != nil {
		return nil, fmt.Errorf("%s: reading a sample: %s", path, explainReadError(err))
	}
	for rows.Next() {
		vals := make([]any, len(src.Columns))
		ptrs := make([]any, len(vals))
		for i := range vals {
			ptrs[i] = &vals[i]
		}
		if err := rows.Scan(ptrs...); err != nil {
			rows.Close()
			return nil, err
		}
		rec := make([]string, len(vals))
		for i, v := range vals {
			if v != nil {
				rec[i] = fmt.Sprint(v)
			}
		}
		in.Sample = append(in.Sample, rec)
	}
	rows.Close()
	var ambiguous []string
	in.Mapping, in.Candidates, in.MappingWhy, ambiguous = SuggestWhy(src.Columns)
	in.Ambiguities = append(in.Ambiguities, ambiguous...)
	if err := applyExplicit(in, src, opts); err != nil {
		return nil, err
	}
	if format == "csv" {
		in.AmountCheck = amountMarks(ctx, ws, src, in.Mapping, reader)
		in.DateFormat, in.DateWhy = dateFormat(ctx, ws, src, in.Mapping, reader, &in.Warnings)
		if msg := separatorCheck(ctx, ws, src, in.Mapping, reader, in.AmountCheck); msg != "" {
			in.Warnings = append(in.Warnings, "CHECK the decimal mark: "+msg)
		}
		if msg := currencyMarkers(ctx, ws, src, in.Mapping, reader); msg != "" {
			in.Warnings = append(in.Warnings, msg)
		}
	}
	for _, c := range Canonical {
		if _, ok := in.Mapping.Columns[c]; !ok && !(c == "amount" && in.Mapping.Debit != "") {
			in.MissingHints = append(in.MissingHints, c)
		}
	}
	cmd := []string{"leadline load"}
	for _, c := range Canonical {
		if n, ok := in.Mapping.Columns[c]; ok && !strings.EqualFold(n, c) {
			cmd = append(cmd, fmt.Sprintf("--map %s=%s", c, shellQuote(n)))
		}
	}
	if in.Mapping.Debit != "" {
		cmd = append(cmd, "--debit "+shellQuote(in.Mapping.Debit), "--credit "+shellQuote(in.Mapping.Credit))
	}
	if in.AmountCheck != nil && in.AmountCheck.SuggestDecComma {
		cmd = append(cmd, "--decimal-comma")
	}
	if in.AmountCheck != nil && in.AmountCheck.SuggestPrecision {
		cmd = append(cmd, "--precision 38")
	}
	if in.DateFormat != "" {
		cmd = append(cmd, "--date-format "+shellQuote(in.DateFormat))
	}
	if format == "csv" && src.Encoding != "utf-8" {
		cmd = append(cmd, "--encoding "+src.Encoding)
	}
	if format == "csv" && src.Delimiter != "," {
		d := src.Delimiter
		if d == "\t" {
			d = `\t`
		}
		cmd = append(cmd, "--delimiter "+shellQuote(d))
	}
	cmd = append(cmd, shellQuote(path))
	in.LoadCommand = strings.Join(cmd, " ")
	return in, nil
}

func shellQuote(s string) string {
	if s != "" && strings.IndexFunc(s, func(r rune) bool {
		return !(r == '-' || r == '_' || r == '.' || r == '/' || r == '=' || r >= '0' && r <= '9' || r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z')
	}) < 0 {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
