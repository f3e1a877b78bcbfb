package report

import (
	"encoding/json"
	"fmt"
	"html/template"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/sensitivity"
)

// Caution is the sentence every report opens with.
const Caution = "The results in this report are signals for follow-up, never proof of fraud or error. " +
	"A flagged bin, range, limit, segment or duplicate group says where to look; " +
	"whether anything is wrong is for the engagement team to judge under the auditing standards that apply to them."

// Model is everything a report shows. FromWorkspace fills it from a
// workspace; a caller holding results in memory may fill it directly.
// A nil section is shown as "not run".
type Model struct {
	Title       string
	GeneratedAt time.Time
	ToolVersion string
	DuckDB      string
	Workspace   string
	// Runs are the stored runs the report draws on, by run id.
	Runs []Run
	// Set says how the runs were chosen and which were left out (nil for
	// a report built from a run in memory).
	Set *RunSet
	// Notes are remarks on the job as a whole (for instance a run made
	// before the latest load).
	Notes []string
	// Pack names the pack run the report shows (name, client, period,
	// file, SHA-256), and Findings are its key findings in sentences.
	Pack     []Fact
	Findings []string

	Completeness *Completeness
	Digits       *DigitSection
	Segments     *SegmentSection
	Limits       *LimitSection
	Ranges       *RangeSection
	Duplicates   *DuplicateSection
	Drills       *DrillSection
	Followup     *FollowupSection // the team's follow-up read back (followup.go)
	Sensitivity  []*SensitivitySection
	Compares     []*CompareSection // leadline compare runs (compare.go)
	Manifest     *ManifestSection
	// Checks are the journal-entry checks of a pack run, each with the
	// SQL that produced it.
	Checks []*CheckSection

	// Others are runs of kinds the report has no section of its own for
	// (or whose result it could not read), shown as generic tables.
	Others []*GenericSection

	// absent explains, per section key, why a section is not run.
	absent map[string]string
}

// Run is one stored run.
type Run struct {
	ID          int64           `json:"run_id"`
	Kind        string          `json:"kind"`
	StartedAt   time.Time       `json:"started_at"`
	FinishedAt  time.Time       `json:"finished_at"`
	ToolVersion string          `json:"tool_version"`
	Params      json.RawMessage `json:"params"`
	Result      json.RawMessage `json:"result"`
	// Stale is set when the run started before the latest load finished:
	// its figures may not describe the ledger as it is now.
	Stale bool `json:"stale"`
	// PartOf is the pack run that stored this run of one of its steps
	// (0 for a run of its own); its result is shown from the pack run's.
	PartOf int64 `json:"part_of,omitempty"`
}

// ref addresses numbers in a run's stored JSON: the run id and a JSON
// pointer, plus the readable field name prefix used in data-field.
type ref struct {
	Src   string // "run/12#/tests/2" or "files/3"
	Field string // "first_two"
	// cell, when set, gives the source of each key instead of Src/key
	// (the cells of a table row, the totals over the files).
	cell func(key string) string
}

// srcRef addresses the value at ptr (a JSON pointer) under base, the
// source of a document: "run/12#" for a stored run's result,
// "run/12#/results/limits" or "results.json#/results/limits" for one step
// of a pack run.
func srcRef(base, ptr, field string) ref {
	return ref{Src: base + ptr, Field: field}
}

// runBase is the source of a stored run's result document.
func runBase(id int64) string { return fmt.Sprintf("run/%d#", id) }

// At descends into key (an object key or an array index).
func (r ref) At(key any) ref {
	k := fmt.Sprint(key)
	sep := "/"
	if len(r.Src) > 0 && r.Src[len(r.Src)-1] == '#' {
		sep = ""
		k = "/" + escapePointer(k)
	} else {
		k = escapePointer(k)
	}
	f := r.Field
	if f != "" {
		f += "."
	}
	return ref{Src: r.Src + sep + k, Field: f + fmt.Sprint(key)}
}

// AtField descends into key in the source but names the field label.
func (r ref) AtField(key any, label any) ref {
	n := r.At(key)
	f := r.Field
	if f != "" {
		f += "."
	}
	n.Field = f + fmt.Sprint(label)
	return n
}

// F marks up the number at key.
func (r ref) F(key string, v any, kind string) template.HTML {
	n := r.At(key)
	if r.cell != nil {
		n.Src = r.cell(key)
	}
	return numHTML(n.Field, n.Src, v, kind)
}

// Completeness is what was loaded: files with their counts and control
// totals, entity totals, reject reasons and the loads.
type Completeness struct {
	Files        []FileRow
	Currencies   []CurrencyRow // per file and currency, shown when a currency is named or a file is debit/credit
	Entities     []EntityRow
	Reasons      []ReasonRow
	Samples      []RejectSample
	Loads        []LoadRow
	LedgerRows   int64 // rows in the ledger table now
	RowsRead     int64
	RowsLoaded   int64
	RowsRejected int64
	Balanced     bool // every file: read = loaded + rejected, and the ledger holds the loaded rows
	// LedgerKnown is set when the ledger's row count was read from the
	// workspace (not for a pack run's own report, built from its tables).
	LedgerKnown bool
	// Journal is the journal checks; Reconciliation the latest
	// reconciliation with a control file (nil when none was made).
	Journal        *journal.Summary
	Reconciliation *reconcile.Result
	// Mode is how the workspace holds its ledger: "copy", or "in place"
	// (a view over Parquet files checked unchanged when the report opened
	// the workspace).
	Mode   string
	totals ref
}

// TotalRef addresses the totals over the files.
func (c *Completeness) TotalRef() ref {
	if c.totals.Src != "" || c.totals.cell != nil {
		return c.totals
	}
	return ref{Field: "total", cell: func(k string) string { return "files/*/" + k }}
}

// FileRow is one loaded file.
type FileRow struct {
	FileID       int64
	Source       string // the pack's source name (pack runs)
	LoadID       int64
	Name, Path   string
	Format       string
	SizeBytes    int64
	SHA256       string
	RowsRead     int64
	RowsLoaded   int64
	RowsRejected int64
	InLedger     int64  // rows of the file in the ledger now
	Positive     string // exact control totals of the rows in the ledger
	Negative     string
	Net          string
	PerCurrency  bool // the file holds several currencies: its totals are in Currencies only
	LoadedAt     time.Time
	Balanced     bool
	src          func(col string) string
}

// R addresses the file's numbers.
func (f FileRow) R() ref {
	if f.src != nil {
		return ref{Field: "files." + f.Name, cell: f.src}
	}
	return ref{Src: fmt.Sprintf("files/%d", f.FileID), Field: fmt.Sprintf("files.%d", f.FileID)}
}

// EntityRow is one entity's control totals over the ledger.
type EntityRow struct {
	Entity   string
	Currency string
	Rows     int64
	Positive string
	Negative string
	Net      string
	src      func(col string) string
}

// R addresses the entity's numbers.
func (e EntityRow) R() ref {
	if e.src != nil {
		return ref{Field: "entities." + e.Entity, cell: e.src}
	}
	if e.Currency != "" {
		return ref{Src: "entities/" + escapePointer(e.Entity) + "/" + escapePointer(e.Currency), Field: "entities." + e.Entity + "." + e.Currency}
	}
	return ref{Src: "entities/" + escapePointer(e.Entity), Field: "entities." + e.Entity}
}

// EntitiesHaveCurrency says the entity totals are per currency.
func (c *Completeness) EntitiesHaveCurrency() bool {
	for _, e := range c.Entities {
		if e.Currency != "" {
			return true
		}
	}
	return false
}

// HasDebitCredit says a file of Currencies is a debit/credit extract.
func (c *Completeness) HasDebitCredit() bool {
	for _, r := range c.Currencies {
		if r.DebitRows != nil {
			return true
		}
	}
	return false
}

// CurrencyRow is one file's control totals in one currency, with each
// side of a debit/credit extract.
type CurrencyRow struct {
	File       string
	Currency   string
	Rows       int64
	Positive   string
	Negative   string
	Net        string
	DebitRows  *int64
	Debit      *string
	CreditRows *int64
	Credit     *string
	BothSides  *int64
	Ties       *bool
	src        func(col string) string
	base       string
}

// R addresses the row's numbers.
func (r CurrencyRow) R() ref {
	if r.src != nil {
		return ref{Field: "currencies." + r.File + "." + r.Currency, cell: r.src}
	}
	return ref{Src: r.base, Field: "currencies." + r.File + "." + r.Currency}
}

// CurrencyName shows a row without a currency as (none).
func (r CurrencyRow) CurrencyName() string {
	if r.Currency == "" {
		return "(none)"
	}
	return r.Currency
}

// ReasonRow counts rejected rows of one file by reason.
type ReasonRow struct {
	FileID    int64
	File      string
	Reason    string
	Rows      int64
	FirstLine int64
	src       func(col string) string
}

// R addresses the row's numbers.
func (r ReasonRow) R() ref {
	if r.src != nil {
		return ref{Field: "rejects." + r.File + "." + r.Reason, cell: r.src}
	}
	return ref{Src: fmt.Sprintf("rejects/%d/%s", r.FileID, escapePointer(r.Reason)), Field: fmt.Sprintf("rejects.%d.%s", r.FileID, r.Reason)}
}

// RejectSample is one rejected row, shown as an example.
type RejectSample struct {
	File     string
	Line     int64
	Column   string
	RawValue string
	Reason   string
}

// LoadRow is one load.
type LoadRow struct {
	LoadID      int64
	StartedAt   time.Time
	FinishedAt  time.Time
	ToolVersion string
}

// PopLine is the population a section's run tested, in words, shown at
// the head of the section.
type PopLine struct {
	Pop string
	// PopDiffers, when set, says that this section's population differs
	// from the one the set's other sections share, and from which.
	PopDiffers string
	pop        runPop
}

// MissingTest is a digit test the set's battery did not run, with the
// command that runs it.
type MissingTest struct {
	Name string
	Cmd  string
}

// DigitSection holds the digit tests of one battery run.
type DigitSection struct {
	PopLine
	Run *Run
	// Missing are the digit tests not run in this set.
	Missing []MissingTest
	Tests   []DigitTest
	// Meta are facts of the scan (amounts tested, left out...).
	Meta []Fact
	// Duplication is the number duplication test, when run.
	Duplication *battery.Duplication
	DupRef      ref
}

// DigitTest is one digit test's result and where it sits in the run.
type DigitTest struct {
	Ref    ref
	Result benford.Result
	ID     string // element id prefix
}

// Fact is one labelled number or text of a section.
type Fact struct {
	Label string
	Value template.HTML
}

// SegmentSection ranks segments (entity, account, user, month...) by how
// far their digits stray from expectation, one group per segmentation.
type SegmentSection struct {
	PopLine
	Run    *Run
	Groups []*SegmentGroup
}

// SegmentGroup is the ranking of one segmentation of a battery run.
type SegmentGroup struct {
	Ref      ref // the segments object
	RankRef  ref // the ranking shown
	Segments battery.Segments
	Ranking  battery.Ranking // the ranking shown (first-two digits when run)
	Rows     []SegmentRow
	Hidden   int      // rows of the ranking not listed
	Others   []string // the other tests ranked in the run (in its JSON)
}

// HasRuns reports whether the ranking carries the runs test.
func (s *SegmentGroup) HasRuns() bool {
	for _, r := range s.Rows {
		if r.Row.Runs != nil {
			return true
		}
	}
	return false
}

// HasLocal reports whether the ranking carries the local surplus flag.
func (s *SegmentGroup) HasLocal() bool {
	for _, r := range s.Rows {
		if r.Row.LocalFlagged != nil {
			return true
		}
	}
	return false
}

// LocalValue is the segment's number of flagged local stretches (0 when
// not computed).
func (s SegmentRow) LocalValue() int {
	if s.Row.LocalFlagged == nil {
		return 0
	}
	return *s.Row.LocalFlagged
}

// SegmentRow is one ranked segment.
type SegmentRow struct {
	Ref ref
	Row battery.SegmentRow
}

// RunsValue is the segment's number of runs (0 when not run).
func (s SegmentRow) RunsValue() int {
	if s.Row.Runs == nil {
		return 0
	}
	return *s.Row.Runs
}

// RunsP is the runs test's p (1 when not run).
func (s SegmentRow) RunsP() float64 {
	if s.Row.RunsP == nil {
		return 1
	}
	return *s.Row.RunsP
}

// LimitSection is the limit-clustering probe.
type LimitSection struct {
	PopLine
	Run    *Run
	Ref    ref
	Report limits.Report
	Rows   []LimitRow // tested pairs by rank, at most maxLimitRows
	Hidden int        // pairs not listed (untested, or beyond maxLimitRows)
	Chart  template.HTML
}

// LimitRow is one (segment, limit) pair probed.
type LimitRow struct {
	Ref     ref
	Segment string // "all" for the whole selection
	Row     limits.Row
	Drill   string // the drill command listing the amounts below the limit
}

// RangeSection is the amount-range table and chart.
type RangeSection struct {
	PopLine
	Run     *Run
	Ref     ref
	Report  ranges.Report
	Bands   []RangeRow
	Flagged []RangeRow
	Chart   template.HTML
	Drills  []string // per stretch, the drill command listing its amounts
	// With --by: the segments' ranking, the first MaxRangeSegments rows.
	SegRef   ref
	SegBy    string
	Segments []RangeSegment
}

// MaxRangeSegments bounds the segments the report lists of a range table.
const MaxRangeSegments = 10

// RangeSegment is one segment of a range table run with --by.
type RangeSegment struct {
	Ref   ref
	Row   ranges.SegmentRow
	Drill string // the drill command of its largest inflated range ("" when none)
}

// RangeRow is one band.
type RangeRow struct {
	Ref ref
	Row ranges.Row
}

// DuplicateSection holds a duplicates run.
type DuplicateSection struct {
	PopLine
	Run    *Run
	Ref    ref
	Result duplicates.Result
	DB     string // "--db PATH " for the drill commands, when not the default workspace
}

// SensitivitySection is one sensitivity study: per signal, the share of
// seeds in which it fired, per injection rate.
type SensitivitySection struct {
	Run    *Run
	Ref    ref
	Result sensitivity.Result
	What   string // the injection in words
}

// DrillSection holds the drill-down extracts.
type DrillSection struct {
	Extracts []*GenericSection
}

// CheckSection is one journal-entry check: its rows and the SQL (and
// bound values) that produced them.
type CheckSection struct {
	Run    *Run
	Name   string
	SQL    string
	Params []Fact
	Table  *GenericSection
}

// ManifestSection is a pack run's manifest: what was run, on which files,
// with which tool, and the files written, each with its SHA-256.
type ManifestSection struct {
	Run     *Run
	Facts   []Fact
	Inputs  []ManifestFile
	Outputs []ManifestFile
	Note    string
}

// ManifestFile is one input or output file of a manifest.
type ManifestFile struct {
	Source       string
	Path         string
	SizeBytes    template.HTML
	SHA256       string
	RowsRead     template.HTML
	RowsLoaded   template.HTML
	RowsRejected template.HTML
}

// GenericSection shows a stored JSON document as facts and tables, for
// runs whose shape the report does not know in detail.
type GenericSection struct {
	Run    *Run
	Title  string
	Facts  []Fact
	Tables []GenericTable
}

// GenericTable is one array of objects of a JSON document.
type GenericTable struct {
	Title   string
	Columns []string
	Num     []bool // per column: numbers, aligned right
	Rows    [][]template.HTML
	More    int // rows not shown
}

// IsNum reports whether column j holds numbers.
func (t GenericTable) IsNum(j int) bool { return j < len(t.Num) && t.Num[j] }
