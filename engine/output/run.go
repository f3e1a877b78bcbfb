package output

import "time"

// FormatVersion names the shape of results.json and manifest.json; it
// changes only when a field is renamed or removed (fields are added freely).
const FormatVersion = "leadline-run/1"

// Caution is the sentence every run's summary carries.
const Caution = "Results are signals for follow-up, not proof of fraud or error: " +
	"each flagged bin, range, group or record needs an explanation from the engagement team, " +
	"who judge it under the auditing standards that apply to them."

// Run is everything one run produced: the writers take it as it is.
// results.json holds all of it except the manifest, which goes to
// manifest.json: so results.json is the same, byte for byte, whenever the
// same pack runs on the same inputs.
type Run struct {
	Format   string         `json:"format"`
	Pack     PackInfo       `json:"pack"`
	Manifest *Manifest      `json:"-"`
	Summary  Summary        `json:"summary"`
	Tables   []*Table       `json:"tables"`
	Results  map[string]any `json:"results"` // each step's own result document, by step name
}

// PackInfo names the pack that was run.
type PackInfo struct {
	Name   string `json:"name"`
	Client string `json:"client"`
	Period string `json:"period"`
	File   string `json:"file"`   // the pack file as given, made absolute
	SHA256 string `json:"sha256"` // of the pack file's bytes
}

// Summary is what the summary sheet and the top of the report show.
type Summary struct {
	Caution      string       `json:"caution"`
	Completeness Completeness `json:"completeness"`
	Findings     []Finding    `json:"findings"`
	Notes        []string     `json:"notes"`
}

// Completeness totals the load: rows read = rows loaded + rows rejected.
type Completeness struct {
	Files        int    `json:"files"`
	RowsRead     int64  `json:"rows_read"`
	RowsLoaded   int64  `json:"rows_loaded"`
	RowsRejected int64  `json:"rows_rejected"`
	SumPositive  string `json:"sum_positive"`
	SumNegative  string `json:"sum_negative"`
	Net          string `json:"net"`
	Balanced     bool   `json:"balanced"` // rows_read = rows_loaded + rows_rejected for every file
	// Journal is the journal checks, a line each; Reconciliation the
	// reconciliation with the pack's control file, if any.
	Journal        []IntegrityLine     `json:"journal,omitempty"`
	Reconciliation *ReconciliationLine `json:"reconciliation,omitempty"`
	// Currencies are the ledger's totals per currency when it holds more
	// than one; SumPositive, SumNegative and Net are then empty (amounts
	// in different currencies are never added together).
	Currencies []CurrencyTotal `json:"currencies,omitempty"`
}

// IntegrityLine is one journal check in the summary.
type IntegrityLine struct {
	Check  string `json:"check"`
	Status string `json:"status"` // ok, found or not possible
	Count  int64  `json:"count"`
	Text   string `json:"text"`
}

// ReconciliationLine is the reconciliation in the summary and the manifest.
type ReconciliationLine struct {
	ControlFile string `json:"control_file"`
	SHA256      string `json:"sha256"`
	Shape       string `json:"shape"` // totals or trial_balance
	Ties        bool   `json:"ties"`
	Accepted    bool   `json:"accepted"`
	Verdict     string `json:"verdict"`
}

// CurrencyTotal is the ledger's control totals in one currency.
type CurrencyTotal struct {
	Currency    string `json:"currency"`
	Rows        int64  `json:"rows"`
	SumPositive string `json:"sum_positive"`
	SumNegative string `json:"sum_negative"`
	Net         string `json:"net"`
}

// Finding is one key finding in a sentence, with the table that holds the
// detail.
type Finding struct {
	Section string `json:"section"`
	Table   string `json:"table,omitempty"`
	Text    string `json:"text"`
}

// Manifest records what was run, on what, with what: enough for a reviewer
// to rerun it and compare. Everything that differs between two runs of the
// same pack on the same inputs is under Run (times, run ids, whether the
// workspace was loaded or reused).
type Manifest struct {
	Format        string       `json:"format"`
	Tool          string       `json:"tool"`
	ToolVersion   string       `json:"tool_version"`
	DuckDBVersion string       `json:"duckdb_version"`
	Pack          PackInfo     `json:"pack"`
	Workspace     string       `json:"workspace"` // the workspace file (":memory:" for none)
	AmountType    string       `json:"amount_type"`
	Inputs        []Input      `json:"inputs"`
	Parameters    any          `json:"parameters"`
	Run           RunInfo      `json:"run"`
	Outputs       []OutputFile `json:"outputs"` // every file of the folder but manifest.json itself
	// Reconciliation is the reconciliation with the control file (its
	// SHA-256 and verdict), if the pack has one.
	Reconciliation *ReconciliationLine `json:"reconciliation,omitempty"`
}

// RunInfo is the part of the manifest that changes from run to run.
type RunInfo struct {
	StartedAt       time.Time        `json:"started_at"`
	FinishedAt      time.Time        `json:"finished_at"`
	RunID           int64            `json:"run_id"`           // the run's id in the workspace's runs table
	WorkspaceAction string           `json:"workspace_action"` // loaded, reused or reloaded
	WorkspaceReason string           `json:"workspace_reason"`
	StepRuns        map[string]int64 `json:"step_runs,omitempty"` // ids of steps stored as runs of their own (duplicates)
}

// Input is one input file.
type Input struct {
	Source       string `json:"source"`
	Path         string `json:"path"` // relative to the pack file's folder when inside it
	SizeBytes    int64  `json:"size_bytes"`
	SHA256       string `json:"sha256"`
	RowsRead     int64  `json:"rows_read"`
	RowsLoaded   int64  `json:"rows_loaded"`
	RowsRejected int64  `json:"rows_rejected"`
	Mode         string `json:"mode"` // copy, or in place (the workspace reads the file where it lies)
}

// OutputFile is one file written into the output folder.
type OutputFile struct {
	Path      string `json:"path"` // relative to the output folder, with /
	SizeBytes int64  `json:"size_bytes"`
	SHA256    string `json:"sha256"`
}

// Table returns the table with the given name, or nil.
func (r *Run) Table(name string) *Table {
	for _, t := range r.Tables {
		if t.Name == name {
			return t
		}
	}
	return nil
}
