package report

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"sort"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/workspace"
)

// Run kinds the report has sections for.
const (
	KindScan        = "scan"
	KindLimits      = "limits"
	KindRanges      = "ranges"
	KindDuplicates  = "duplicates"
	KindDrill       = "drill"
	KindPack        = "pack"
	KindSensitivity = "sensitivity"
)

// Options say what a report covers.
type Options struct {
	// Title heads the report (default "leadline report").
	Title string
	// RunIDs, when given, are the only runs the report shows; otherwise
	// Set chooses them.
	RunIDs []int64
	// Set names the runs the report shows when RunIDs is empty: SetPack
	// (the latest pack run and the runs it stored), SetLatest (the latest
	// run of each kind made with the population settings of the latest
	// scan, and the latest MaxDrills drill-downs) or SetAuto (the pack
	// set when there is a pack run, else the latest set).
	Set string
	// Manifest is the manifest of a pack run (its JSON), shown in the
	// manifest section; when empty, the latest pack run's stored result
	// is used, if any.
	Manifest json.RawMessage
	// MaxDrills bounds the drill runs and the sensitivity studies shown
	// when RunIDs is empty (default 5 of each).
	MaxDrills int
	// RejectSamples is the number of rejected rows shown per file as
	// examples (default 5).
	RejectSamples int
	// Now stamps the report (default time.Now); tests fix it.
	Now time.Time
}

// FromWorkspace assembles the report model from the workspace: the
// completeness tables from files, rejects and loads, and the sections from
// the stored runs (see Options.RunIDs). It only reads.
func FromWorkspace(ctx context.Context, ws *workspace.Workspace, opts Options) (*Model, error) {
	if opts.Title == "" {
		opts.Title = "leadline report"
	}
	if opts.MaxDrills <= 0 {
		opts.MaxDrills = 5
	}
	if opts.RejectSamples <= 0 {
		opts.RejectSamples = 5
	}
	now := opts.Now
	if now.IsZero() {
		now = time.Now()
	}
	m := &Model{Title: opts.Title, GeneratedAt: now, ToolVersion: workspace.Version, Workspace: ws.Path, absent: map[string]string{}}
	if v, err := ws.DuckDBVersion(ctx); err == nil {
		m.DuckDB = v
	}
	c, err := readCompleteness(ctx, ws, opts.RejectSamples)
	if err != nil {
		return nil, fmt.Errorf("report: reading the load log: %w", err)
	}
	m.Completeness = c

	runs, set, err := pickRuns(ctx, ws, opts)
	if err != nil {
		return nil, err
	}
	m.Set = set
	var latestLoad sql.NullTime
	if err := ws.Conn.QueryRowContext(ctx, stmt("report_latest_load")).Scan(&latestLoad); err != nil {
		return nil, fmt.Errorf("report: reading the loads: %w", err)
	}
	for _, r := range runs {
		// A run is stale when a load finished after it did (a pack run
		// loads inside itself, so its start precedes its own load).
		if latestLoad.Valid && r.FinishedAt.Before(latestLoad.Time) {
			r.Stale = true
			m.Notes = append(m.Notes, fmt.Sprintf("Run %d (%s) was made before the latest load finished (%s): its figures may not describe the ledger as it is now; rerun it.",
				r.ID, r.Kind, latestLoad.Time.UTC().Format("2006-01-02 15:04:05 UTC")))
		}
		m.Runs = append(m.Runs, *r)
	}
	if err := m.addRuns(runs); err != nil {
		return nil, err
	}
	if err := m.followupFromWorkspace(ctx, ws); err != nil {
		return nil, err
	}
	if len(opts.Manifest) > 0 {
		ms, err := manifestFrom(nil, opts.Manifest, "manifest#", "")
		if err != nil {
			return nil, fmt.Errorf("report: reading the manifest: %w", err)
		}
		m.Manifest = ms
	}
	m.explainAbsent()
	return m, nil
}

// pickRuns lists the runs the report shows, with their documents, and
// describes the set they form (see Options.Set).
func pickRuns(ctx context.Context, ws *workspace.Workspace, opts Options) ([]*Run, *RunSet, error) {
	rows, err := ws.Conn.QueryContext(ctx, stmt("report_run_list"))
	if err != nil {
		return nil, nil, fmt.Errorf("report: listing the runs: %w", err)
	}
	var all []*Run
	for rows.Next() {
		r := &Run{}
		var params string
		if err := rows.Scan(&r.ID, &r.Kind, &r.StartedAt, &r.FinishedAt, &r.ToolVersion, &params); err != nil {
			rows.Close()
			return nil, nil, err
		}
		r.Params = json.RawMessage(params)
		all = append(all, r)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, nil, err
	}
	readResult := func(r *Run) error {
		if r.Result != nil {
			return nil
		}
		var params, result string
		if err := ws.Conn.QueryRowContext(ctx, stmt("report_run_docs"), r.ID).Scan(&params, &result); err != nil {
			return fmt.Errorf("report: reading run %d: %w", r.ID, err)
		}
		r.Result = json.RawMessage(result)
		return nil
	}
	// The latest pack run's result names the runs it stored of its steps.
	for i := len(all) - 1; i >= 0; i-- {
		if all[i].Kind == KindPack {
			if err := readResult(all[i]); err != nil {
				return nil, nil, err
			}
			break
		}
	}
	picked, set, err := chooseSet(all, opts, ws.Path)
	if err != nil {
		return nil, nil, err
	}
	sort.SliceStable(picked, func(i, j int) bool { return picked[i].ID < picked[j].ID })
	for _, r := range picked {
		if err := readResult(r); err != nil {
			return nil, nil, err
		}
	}
	return picked, set, nil
}

// readCompleteness reads the load log, the rejects and the control totals.
func readCompleteness(ctx context.Context, ws *workspace.Workspace, samples int) (*Completeness, error) {
	c := &Completeness{Balanced: true}
	hasLedger, err := ws.HasLedger(ctx)
	if err != nil {
		return nil, err
	}
	q := stmt("report_files_no_ledger")
	if hasLedger {
		q = stmt("report_files")
	}
	rows, err := ws.Conn.QueryContext(ctx, q)
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var f FileRow
		if err := rows.Scan(&f.FileID, &f.LoadID, &f.Path, &f.Name, &f.Format, &f.SizeBytes, &f.SHA256,
			&f.RowsRead, &f.RowsLoaded, &f.RowsRejected, &f.LoadedAt, &f.InLedger, &f.Positive, &f.Negative, &f.Net); err != nil {
			rows.Close()
			return nil, err
		}
		f.Balanced = f.RowsRead == f.RowsLoaded+f.RowsRejected && f.InLedger == f.RowsLoaded
		if !f.Balanced {
			c.Balanced = false
		}
		c.RowsRead += f.RowsRead
		c.RowsLoaded += f.RowsLoaded
		c.RowsRejected += f.RowsRejected
		c.Files = append(c.Files, f)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	if hasLedger {
		if c.Mode, err = load.Mode(ctx, ws); err != nil {
			return nil, err
		}
		if c.Mode == load.ModeInPlace {
			for i := range c.Files {
				c.Files[i].Format += ", in place"
			}
		}
		c.LedgerKnown = true
		if err := ws.Conn.QueryRowContext(ctx, stmt("report_ledger_rows")).Scan(&c.LedgerRows); err != nil {
			return nil, err
		}
		ents, err := load.EntityTotals(ctx, ws)
		if err != nil {
			return nil, err
		}
		for _, e := range ents {
			c.Entities = append(c.Entities, EntityRow{Entity: e.Entity, Currency: e.Currency, Rows: e.Rows, Positive: e.Positive, Negative: e.Negative, Net: e.Net})
		}
		if err := currencyRows(ctx, ws, c); err != nil {
			return nil, err
		}
	}
	if c.LedgerRows != c.RowsLoaded {
		c.Balanced = false
	}
	if hasLedger {
		period, err := journal.SavedPeriod(ctx, ws)
		if err != nil {
			return nil, err
		}
		if c.Journal, err = journal.Run(ctx, ws, journal.Options{Period: period}); err != nil {
			return nil, err
		}
		if c.Reconciliation, err = reconcile.Latest(ctx, ws); err != nil {
			return nil, err
		}
	}
	rows, err = ws.Conn.QueryContext(ctx, stmt("report_reject_reasons"))
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var r ReasonRow
		if err := rows.Scan(&r.FileID, &r.File, &r.Reason, &r.Rows, &r.FirstLine); err != nil {
			rows.Close()
			return nil, err
		}
		c.Reasons = append(c.Reasons, r)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	rows, err = ws.Conn.QueryContext(ctx, stmt("report_reject_samples"), samples)
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var s RejectSample
		if err := rows.Scan(&s.File, &s.Line, &s.Column, &s.RawValue, &s.Reason); err != nil {
			rows.Close()
			return nil, err
		}
		if len(s.RawValue) > 80 {
			s.RawValue = s.RawValue[:77] + "…"
		}
		c.Samples = append(c.Samples, s)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	rows, err = ws.Conn.QueryContext(ctx, stmt("report_loads"))
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var l LoadRow
		if err := rows.Scan(&l.LoadID, &l.StartedAt, &l.FinishedAt, &l.ToolVersion); err != nil {
			rows.Close()
			return nil, err
		}
		c.Loads = append(c.Loads, l)
	}
	rows.Close()
	return c, rows.Err()
}

// addRuns decodes each run into its section.
func (m *Model) addRuns(runs []*Run) error {
	for _, r := range runs {
		if r.PartOf != 0 {
			continue // stored by a pack run whose result holds it too
		}
		var err error
		base := runBase(r.ID)
		before := *m
		switch r.Kind {
		case KindScan:
			err = m.addScan(r, r.Result, base)
		case KindLimits:
			err = m.addLimits(r, r.Result, base)
		case KindRanges:
			err = m.addRanges(r, r.Result, base)
		case KindDuplicates:
			err = m.addDuplicates(r, r.Result, base)
		case KindDrill:
			err = m.addDrill(r, r.Result, base, fmt.Sprintf("Extract (run %d)", r.ID))
		case KindPack:
			err = m.addPackDoc(r, r.Result, base)
		case KindSensitivity:
			err = m.addSensitivity(r, r.Result, base)
		case KindCompare:
			err = m.addCompare(r, r.Result, base)
		default:
			err = m.addOther(r, fmt.Sprintf("Run %d: %s", r.ID, r.Kind))
		}
		if taken := m.replaced(&before); taken != "" {
			// One section shows one run: a second run of the same kind
			// is named, not mixed in.
			*m = before
			m.Notes = append(m.Notes, fmt.Sprintf("Run %d (%s) is not shown: this report already shows %s from run %s. Its own report: leadline report %s--runs %d",
				r.ID, r.Kind, taken, m.sectionRun(taken), dbArg(m.Workspace), r.ID))
			continue
		}
		if err != nil {
			// A result the report cannot read in detail is still shown.
			if gerr := m.addOther(r, fmt.Sprintf("Run %d: %s (shown as stored: %v)", r.ID, r.Kind, err)); gerr != nil {
				return fmt.Errorf("report: run %d (%s): %w", r.ID, r.Kind, gerr)
			}
		}
	}
	return nil
}

// replaced names the section that adding a run replaced in m (one that
// before already showed from another run), or "".
func (m *Model) replaced(before *Model) string {
	switch {
	case before.Digits != nil && m.Digits != before.Digits:
		return "the digit tests"
	case before.Limits != nil && m.Limits != before.Limits:
		return "the limit probe"
	case before.Ranges != nil && m.Ranges != before.Ranges:
		return "the amount ranges"
	case before.Duplicates != nil && m.Duplicates != before.Duplicates:
		return "the duplicate tests"
	case before.Segments != nil && m.Segments != before.Segments:
		return "the segment ranking"
	}
	return ""
}

// sectionRun is the run id a section named by replaced is shown from.
func (m *Model) sectionRun(what string) string {
	var r *Run
	switch what {
	case "the digit tests":
		r = m.Digits.Run
	case "the limit probe":
		r = m.Limits.Run
	case "the amount ranges":
		r = m.Ranges.Run
	case "the duplicate tests":
		r = m.Duplicates.Run
	case "the segment ranking":
		r = m.Segments.Run
	}
	if r == nil {
		return "?"
	}
	return fmt.Sprint(r.ID)
}

func (m *Model) addOther(r *Run, title string) error {
	g, err := genericFrom(r, title, r.Result, srcRef(runBase(r.ID), "", r.Kind))
	if err != nil {
		return err
	}
	m.Others = append(m.Others, g)
	return nil
}

// explainAbsent records why each missing section is missing, with the
// command that would run it on the set's population.
func (m *Model) explainAbsent() {
	var pop runPop
	set := ""
	if m.Set != nil {
		set = m.Set.Name
		pop = m.Set.pop
	}
	if m.Digits != nil {
		pop = m.Digits.pop
	}
	db := dbArg(m.Workspace)
	cmd := func(kind, extra string) string {
		return "leadline " + commandOf(kind) + " " + db + strings.TrimSpace(extra+pop.flags(kind))
	}
	how := map[string]string{
		"digits":     cmd(KindScan, ""),
		"runs":       cmd(KindScan, "--tests first_two"),
		"segments":   cmd(KindScan, "--by entity"),
		"limits":     cmd(KindLimits, ""),
		"ranges":     cmd(KindRanges, ""),
		"duplicates": cmd(KindDuplicates, ""),
		"drill":      "leadline drill " + db + "(a bin, range, segment or duplicate group), or a pack with extracts",
		"manifest":   "leadline run PACK --out DIR",
		"checks":     "leadline run PACK --out DIR, with the checks as [[check]] entries of the pack",
	}
	if pop.Known && pop.HasBy && len(pop.By) > 0 {
		how["segments"] = cmd(KindScan, "")
	}
	present := map[string]bool{
		"digits":     m.Digits != nil,
		"runs":       m.Digits != nil && m.hasRunsTest(),
		"segments":   m.Segments != nil,
		"limits":     m.Limits != nil,
		"ranges":     m.Ranges != nil,
		"duplicates": m.Duplicates != nil,
		"drill":      m.Drills != nil && len(m.Drills.Extracts) > 0,
		"manifest":   m.Manifest != nil,
		"checks":     len(m.Checks) > 0,
	}
	for k, c := range how {
		if present[k] {
			continue
		}
		switch {
		case k == "runs" && m.Digits != nil:
			m.absent[k] = "Not run in this set: the digit tests in this report include no first-two digits test, so there is no runs test to show. Run: " + c
		case set == setNamed:
			m.absent[k] = "Not run in this set: none of the runs named for this report is of this kind. Run: " + c
		case set == SetPack:
			m.absent[k] = "Not run in this set: the pack run has no such step. Add it to the pack, or run: " + c
		case set == SetLatest && pop.Known:
			m.absent[k] = "Not run in this set: the workspace holds no run of this kind made with this set's population settings. Run: " + c + " and make the report again."
		default:
			m.absent[k] = "Not run in this set: the workspace holds no run of this kind. Run: " + c + " and make the report again."
		}
	}
}

func (m *Model) hasRunsTest() bool {
	for _, t := range m.Digits.Tests {
		if t.Result.Runs != nil {
			return true
		}
	}
	return false
}

// Absent says why a section is not shown ("" when it is).
func (m *Model) Absent(key string) string { return m.absent[key] }

func ptrJoin(parts ...string) string {
	var b strings.Builder
	for _, p := range parts {
		b.WriteString("/" + escapePointer(p))
	}
	return b.String()
}
