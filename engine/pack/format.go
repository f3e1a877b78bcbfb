// Package pack reads, checks and runs leadline packs: a TOML file that
// saves one client's whole set-up (sources, column mapping, parsing rules,
// filters, tests and their parameters, drill-down extracts and extra SQL
// checks) so that it can be reviewed like a workpaper and rerun with one
// command. docs/packs.md is the reference; queries/packs/example.toml is a
// commented example.
//
// Read parses a pack; Check validates it completely before anything runs
// (every problem with its file and line); Run loads the sources (or reuses
// the workspace when the inputs are unchanged), runs every step and builds
// an output.Run for the writers.
//
// It owns packs: their format, the check of a whole pack before anything
// runs, and the run of its steps.
package pack

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/BurntSushi/toml"
	"github.com/leadline/leadline/engine/population"
)

// Pack is a pack file as read. Field names follow the TOML keys; see
// docs/packs.md for what each means.
type Pack struct {
	Pack       Header            `toml:"pack" json:"pack"`
	Sources    []Source          `toml:"source" json:"sources"`
	Filters    map[string]string `toml:"filters" json:"filters"`
	Population Population        `toml:"population" json:"population"`
	Battery    *Battery          `toml:"battery" json:"battery,omitempty"`
	Limits     *Limits           `toml:"limits" json:"limits,omitempty"`
	Ranges     *Ranges           `toml:"ranges" json:"ranges,omitempty"`
	Duplicates *Duplicates       `toml:"duplicates" json:"duplicates,omitempty"`
	Extracts   []Extract         `toml:"extract" json:"extracts"`
	Checks     []SQLCheck        `toml:"check" json:"checks"`
	Control    *Control          `toml:"control" json:"control,omitempty"`

	File   string `toml:"-" json:"-"` // absolute path of the pack file
	Dir    string `toml:"-" json:"-"` // its folder: relative paths start here
	SHA256 string `toml:"-" json:"-"` // of the file's bytes
	Bytes  []byte `toml:"-" json:"-"`

	lines     *lineIndex
	undecoded []toml.Key
}

// Header is the [pack] table.
type Header struct {
	Name        string `toml:"name" json:"name"`
	Client      string `toml:"client" json:"client"`
	Period      string `toml:"period" json:"period"`
	Description string `toml:"description" json:"description,omitempty"`
	Workspace   string `toml:"workspace" json:"workspace"`                 // relative to the pack; default: the pack file's name with .duckdb, beside it
	Scale       Number `toml:"scale" json:"scale"`                         // decimal places of amounts, 1 to 6 (default 2)
	Precision   Number `toml:"precision" json:"precision"`                 // 18 or 38 (default 18)
	CSVFormulas string `toml:"csv_formulas" json:"csv_formulas,omitempty"` // quote (default) or keep
}

// Source is one [[source]]: files and how to read them.
type Source struct {
	Name         string            `toml:"name" json:"name"`
	Files        []string          `toml:"files" json:"files"` // globs relative to the pack's folder
	Columns      map[string]string `toml:"columns" json:"columns"`
	Debit        string            `toml:"debit" json:"debit,omitempty"`
	Credit       string            `toml:"credit" json:"credit,omitempty"`
	DecimalComma bool              `toml:"decimal_comma" json:"decimal_comma"`
	Delimiter    string            `toml:"delimiter" json:"delimiter,omitempty"`
	Encoding     string            `toml:"encoding" json:"encoding,omitempty"`
	DateFormat   string            `toml:"date_format" json:"date_format,omitempty"`
	DecimalPoint bool              `toml:"decimal_point" json:"decimal_point,omitempty"` // settles amounts such as 1.234 that read both ways
	MaxRejects   string            `toml:"max_rejects" json:"max_rejects,omitempty"`     // largest share of a file's rows rejected, "5%"
	TimeZone     string            `toml:"time_zone" json:"time_zone,omitempty"`         // zone of Parquet timestamps with a time zone (default UTC)
	// Sheet is the sheet of .xlsx files to read, by name or 1-based
	// position ("" for the first sheet holding a value).
	Sheet   string `toml:"sheet" json:"sheet,omitempty"`
	InPlace bool   `toml:"in_place" json:"in_place,omitempty"` // register Parquet files where they lie instead of copying them
}

// Population is the [population] table: who is tested unless a step says
// otherwise.
type Population struct {
	Filter    string `toml:"filter" json:"filter"`         // name of a [filters] entry; "" or "none" for all rows
	Signs     string `toml:"signs" json:"signs"`           // positive, negative or both (default positive)
	MinAmount Number `toml:"min_amount" json:"min_amount"` // smallest |amount| tested (default 10)
}

// Scope overrides the population for one step; empty fields inherit.
type Scope struct {
	Filter    string `toml:"filter" json:"filter,omitempty"`
	Signs     string `toml:"signs" json:"signs,omitempty"`
	MinAmount Number `toml:"min_amount" json:"min_amount,omitzero"`
}

// Battery is the [battery] table: the digit tests.
type Battery struct {
	Enabled        *bool    `toml:"enabled" json:"enabled"`
	Tests          []string `toml:"tests" json:"tests"`                       // digit tests, and "duplication" for number duplication
	Segments       []string `toml:"segments" json:"segments"`                 // segmentations: a column, or columns joined with + for their combination
	MinSegmentRows Number   `toml:"min_segment_rows" json:"min_segment_rows"` // smallest segment ranked
	DuplicationTop Number   `toml:"duplication_top" json:"duplication_top"`   // exact amounts listed by number duplication
	LastTwo        string   `toml:"last_two" json:"last_two,omitempty"`       // scale (default) or units
	Scope
}

// Limits is the [limits] table: the limit-clustering probe.
type Limits struct {
	Enabled  *bool    `toml:"enabled" json:"enabled"`
	Values   []Number `toml:"values" json:"values"`       // the client's limits; empty: scan round values
	Width    Number   `toml:"width" json:"width"`         // share below and above each limit (default 0.10)
	By       []string `toml:"by" json:"by"`               // segment columns; a segment is their combination
	MinCount Number   `toml:"min_count" json:"min_count"` // fewest amounts in a band for a limit to be tested
	Scope
}

// Ranges is the [ranges] table: the amount-range table.
type Ranges struct {
	Enabled    *bool    `toml:"enabled" json:"enabled"`
	Width      Number   `toml:"width" json:"width"`             // fixed band width in currency units, or
	PerDecade  Number   `toml:"per_decade" json:"per_decade"`   // bands per power of ten (default 20)
	From       Number   `toml:"from" json:"from"`               // first band's start (default: 0 or the smallest amount)
	To         Number   `toml:"to" json:"to"`                   // last band's end (default: the largest amount)
	By         []string `toml:"by" json:"by"`                   // segment columns; a segment is their combination
	MinSegment Number   `toml:"min_segment" json:"min_segment"` // with by: fewest tested amounts for a segment to be scored
	Scope
}

// Duplicates is the [duplicates] table.
type Duplicates struct {
	Enabled           *bool    `toml:"enabled" json:"enabled"`
	Tests             []string `toml:"tests" json:"tests"`
	WindowDays        Number   `toml:"window_days" json:"window_days"`               // same_amount: documents within this many days (0: any dates)
	Top               Number   `toml:"top" json:"top"`                               // groups kept per test
	MinCounterparties Number   `toml:"min_counterparties" json:"min_counterparties"` // spread: counterparties an amount must reach
	MinRecords        Number   `toml:"min_records" json:"min_records"`               // rsf: records a counterparty must have
	Floor             Number   `toml:"floor" json:"floor"`                           // smallest absolute amount a group must reach (0: every group)
	Scope
}

// Extract is one [[extract]]: records behind the top results of a step.
type Extract struct {
	Name    string `toml:"name" json:"name"`
	From    string `toml:"from" json:"from"` // battery, limits, ranges or duplicates
	Test    string `toml:"test" json:"test,omitempty"`
	Top     Number `toml:"top" json:"top"`
	GroupBy string `toml:"group_by" json:"group_by,omitempty"`
	MaxRows Number `toml:"max_rows" json:"max_rows"`
	// A reproducible sample of the extract's records to vouch.
	Sample     string `toml:"sample" json:"sample,omitempty"` // random or monetary
	SampleSize Number `toml:"sample_size" json:"sample_size"`
	Seed       Number `toml:"seed" json:"seed"`
}

// SQLCheck is one [[check]]: a named read-only SELECT whose result is a
// table.
type SQLCheck struct {
	Name    string            `toml:"name" json:"name"`
	Title   string            `toml:"title" json:"title"`
	SQL     string            `toml:"sql" json:"sql"`
	Params  map[string]Param  `toml:"params" json:"params"`
	Formats map[string]string `toml:"formats" json:"formats,omitempty"`
	MaxRows Number            `toml:"max_rows" json:"max_rows"`
	// Finding: "rows" (default) reports the row count among the key findings
	// when there are rows; "none" never does.
	Finding string `toml:"finding" json:"finding,omitempty"`
}

// Number is a number as written in a pack: an integer, a float or a string
// of decimal digits ("5000.00"). It is kept as written so that Check can
// report a value that is not a number with its line, together with every
// other problem, instead of stopping at the first.
type Number struct {
	raw any
	set bool
}

// N makes a Number (for building packs in Go).
func N(v any) Number { return Number{raw: v, set: true} }

// UnmarshalTOML keeps the value as written.
func (n *Number) UnmarshalTOML(v any) error {
	n.raw, n.set = v, true
	return nil
}

// IsZero reports whether the number was left out.
func (n Number) IsZero() bool { return !n.set }

// Set reports whether the number was given.
func (n Number) Set() bool { return n.set }

// Text returns the number as exact decimal text ("5000", "0.1", "4999.99").
func (n Number) Text() (string, error) {
	switch x := n.raw.(type) {
	case int64:
		return strconv.FormatInt(x, 10), nil
	case float64:
		return strconv.FormatFloat(x, 'f', -1, 64), nil
	case string:
		t := strings.TrimSpace(x)
		if _, ok := population.ParseDecimal(t); ok {
			return strings.ReplaceAll(strings.TrimPrefix(t, "+"), "_", ""), nil
		}
		hint := ""
		if strings.ContainsAny(t, ", '") {
			hint = " (write it without thousands separators, e.g. 5000 or \"5000.00\")"
		}
		return "", fmt.Errorf("%q is not a number%s", x, hint)
	case nil:
		return "", errors.New("no value")
	}
	return "", fmt.Errorf("%v is a TOML %s, not a number", n.raw, tomlKind(n.raw))
}

// Float returns the number as a float64.
func (n Number) Float() (float64, error) {
	t, err := n.Text()
	if err != nil {
		return 0, err
	}
	return strconv.ParseFloat(t, 64)
}

// Int returns the number as a whole number.
func (n Number) Int() (int64, error) {
	t, err := n.Text()
	if err != nil {
		return 0, err
	}
	v, err := strconv.ParseInt(t, 10, 64)
	if err != nil {
		return 0, fmt.Errorf("%s is not a whole number", t)
	}
	return v, nil
}

// MarshalJSON writes the number as written: numbers as JSON numbers, text
// as a string.
func (n Number) MarshalJSON() ([]byte, error) {
	if !n.set {
		return []byte("null"), nil
	}
	return json.Marshal(n.raw)
}

// MarshalTOML writes the number back.
func (n Number) MarshalTOML() ([]byte, error) {
	switch x := n.raw.(type) {
	case string:
		return []byte(strconv.Quote(x)), nil
	case nil:
		return []byte(`""`), nil
	}
	return []byte(fmt.Sprint(n.raw)), nil
}

// Param is a value bound to a check's SQL as $name: a string, an integer,
// a float, a boolean or a date. It is never pasted into the SQL text.
type Param struct {
	raw any
}

// P makes a Param (for building packs in Go).
func P(v any) Param { return Param{raw: v} }

// UnmarshalTOML keeps the value as written.
func (p *Param) UnmarshalTOML(v any) error {
	p.raw = v
	return nil
}

// Value returns the value to bind.
func (p Param) Value() (any, error) {
	switch x := p.raw.(type) {
	case string, int64, float64, bool:
		return x, nil
	case int:
		return int64(x), nil
	case time.Time:
		if x.Hour() == 0 && x.Minute() == 0 && x.Second() == 0 && x.Nanosecond() == 0 {
			return time.Date(x.Year(), x.Month(), x.Day(), 0, 0, 0, 0, time.UTC), nil
		}
		return x, nil
	}
	return nil, fmt.Errorf("a %s cannot be bound as a parameter: give a string, number, boolean or date", tomlKind(p.raw))
}

// MarshalJSON writes the value.
func (p Param) MarshalJSON() ([]byte, error) {
	v, err := p.Value()
	if err != nil {
		return json.Marshal(fmt.Sprint(p.raw))
	}
	if t, ok := v.(time.Time); ok {
		return json.Marshal(t.Format("2006-01-02"))
	}
	return json.Marshal(v)
}

func tomlKind(v any) string {
	switch v.(type) {
	case string:
		return "string"
	case int64:
		return "integer"
	case float64:
		return "float"
	case bool:
		return "boolean"
	case time.Time:
		return "date"
	case []any:
		return "array"
	case map[string]any:
		return "table"
	}
	return fmt.Sprintf("%T", v)
}

// Read reads and parses a pack file. A file that is not valid TOML gives a
// *Problems holding one problem with its line; unknown keys and values are
// checked by Check.
func Read(path string) (*Pack, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	data, err := os.ReadFile(abs)
	if err != nil {
		return nil, fmt.Errorf("reading the pack: %w", err)
	}
	return Parse(abs, data)
}

// Parse parses pack text; path names the file in messages and anchors
// relative paths.
func Parse(path string, data []byte) (*Pack, error) {
	p := &Pack{File: path, Dir: filepath.Dir(path), Bytes: data}
	sum := sha256.Sum256(data)
	p.SHA256 = hex.EncodeToString(sum[:])
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	md, err := toml.NewDecoder(bytes.NewReader(data)).Decode(p)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &Problems{List: []Problem{{File: path, Line: pe.Position.Line, Message: tomlMessage(pe)}}}
		}
		return nil, &Problems{List: []Problem{{File: path, Message: err.Error()}}}
	}
	p.lines = indexLines(string(data))
	p.undecoded = md.Undecoded()
	return p, nil
}

func tomlMessage(pe toml.ParseError) string {
	msg := pe.Message
	if pe.LastKey != "" {
		msg = pe.LastKey + ": " + msg
	}
	if pe.Usage != "" {
		msg += " (" + strings.TrimSpace(pe.Usage) + ")"
	}
	return "not valid TOML: " + msg
}

// Problem is one thing wrong with a pack.
type Problem struct {
	File    string `json:"file"`
	Line    int    `json:"line"` // 0 when unknown
	Key     string `json:"key"`  // the key's path, e.g. check[1].sql
	Message string `json:"message"`
	Warning bool   `json:"warning"` // a warning does not stop the run
}

func (p Problem) String() string {
	var b strings.Builder
	b.WriteString(p.File)
	if p.Line > 0 {
		fmt.Fprintf(&b, ":%d", p.Line)
	}
	b.WriteString(": ")
	if p.Warning {
		b.WriteString("warning: ")
	}
	if p.Key != "" {
		b.WriteString(p.Key + ": ")
	}
	b.WriteString(p.Message)
	return b.String()
}

// Problems is every problem Check found, errors and warnings, in file
// order.
type Problems struct {
	List []Problem
}

// Errors returns the problems that stop a run.
func (ps *Problems) Errors() []Problem {
	var out []Problem
	for _, p := range ps.List {
		if !p.Warning {
			out = append(out, p)
		}
	}
	return out
}

// Warnings returns the problems that do not stop a run.
func (ps *Problems) Warnings() []Problem {
	var out []Problem
	for _, p := range ps.List {
		if p.Warning {
			out = append(out, p)
		}
	}
	return out
}

func (ps *Problems) Error() string {
	errs := ps.Errors()
	var b strings.Builder
	if len(errs) == 1 {
		b.WriteString("the pack has a problem; nothing was run:\n")
	} else {
		fmt.Fprintf(&b, "the pack has %d problems; nothing was run:\n", len(errs))
	}
	for _, p := range ps.List {
		b.WriteString("  " + p.String() + "\n")
	}
	return strings.TrimRight(b.String(), "\n")
}

func (ps *Problems) sort() {
	sort.SliceStable(ps.List, func(i, j int) bool {
		a, b := ps.List[i], ps.List[j]
		if a.Line != b.Line {
			if a.Line == 0 || b.Line == 0 {
				return b.Line == 0
			}
			return a.Line < b.Line
		}
		return false
	})
}
