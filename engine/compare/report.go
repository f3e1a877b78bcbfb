package compare

import "github.com/leadline/leadline/engine/benford"

// Kind is the run kind of a comparison in the workspace's runs table.
const Kind = "compare"

// Modes: where the two sides come from.
const (
	ModeRuns       = "runs"       // two stored scan runs
	ModeFilters    = "filters"    // two filters over one workspace's ledger
	ModeSplit      = "split"      // two values of one column of one workspace
	ModeWorkspaces = "workspaces" // the same population in two workspaces
)

// Report is the document leadline compare prints with --format json and
// stores as its run (docs/json.md).
type Report struct {
	Kind  string   `json:"kind"` // "compare"
	RunID int64    `json:"run_id"`
	Mode  string   `json:"mode"`
	Left  SideInfo `json:"left"`
	Right SideInfo `json:"right"`
	// Options are the comparison's settings: the bin flag's alpha and
	// materiality margin, the Monte Carlo draws and their seed.
	Options Options      `json:"options"`
	Tests   []TestResult `json:"tests"`
	// Notes are remarks on the comparison as a whole (populations tested
	// with different settings, sides of very different sizes).
	Notes []string `json:"notes"`
	// With --by: the segments compared on both sides, per test
	// (CompareSegments), the segment columns, the smallest N a segment
	// needs on each side, and the segments left out.
	By               []string      `json:"by,omitempty"`
	MinSegment       int64         `json:"min_segment,omitempty"`
	Segments         []SegmentTest `json:"segments,omitempty"`
	SegmentsOneSide  int           `json:"segments_one_side,omitempty"`
	SegmentsTooSmall int           `json:"segments_too_small,omitempty"`
}

// SideInfo says where one side's counts come from.
type SideInfo struct {
	Label     string `json:"label"`
	Workspace string `json:"workspace"`        // the workspace file
	RunID     int64  `json:"run_id,omitempty"` // the stored scan run (mode runs)
	// The population tested: filter, signs and minimum |amount|; Split is
	// the column=value of mode split.
	Where  string `json:"where,omitempty"`
	Split  string `json:"split,omitempty"`
	Signs  string `json:"signs"`
	Min    string `json:"min"`
	Tested int64  `json:"tested"` // amounts tested (N of the first-digit test)
}

// NewReport compares the sides and fills the document.
// lc and rc hold each side's bin counts per test.
func NewReport(mode string, left, right SideInfo, lc, rc map[benford.Test][]int64, o Options) (*Report, error) {
	l := Side{Label: left.Label, Counts: lc}
	r := Side{Label: right.Label, Counts: rc}
	res, err := Compare(l, r, o)
	if err != nil {
		return nil, err
	}
	rep := &Report{Kind: Kind, Mode: mode, Left: left, Right: right, Options: o, Tests: res.Tests, Notes: []string{}}
	if left.Signs != right.Signs || left.Min != right.Min {
		rep.Notes = append(rep.Notes, "the sides were tested with different settings (signs "+left.Signs+" and "+right.Signs+", minimum "+left.Min+" and "+right.Min+"): part of any difference may come from the settings, not the data")
	}
	return rep, nil
}
