package report

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"sort"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/load"
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
	// it shows the latest run of each kind (and the latest MaxDrills drill
	// runs).
	RunIDs []int64
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

	runs, err := pickRuns(ctx, ws, opts)
	if err != nil {
		return nil, err
	}
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
	if len(opts.Manifest) > 0 {
		g, err := genericFrom(nil, "Manifest", opts.Manifest, ref{Src: "manifest#", Field: "manifest"})
		if err != nil {
			return nil, fmt.Errorf("report: reading the manifest: %w", err)
		}
		m.Manifest = g
	}
	m.explainAbsent(len(opts.RunIDs) > 0)
	return m, nil
}

// pickRuns lists the runs the report shows, with their documents.
func pickRuns(ctx context.Context, ws *workspace.Workspace, opts Options) ([]*Run, error) {
	rows, err := ws.Conn.QueryContext(ctx, stmt("report_run_list"))
	if err != nil {
		return nil, fmt.Errorf("report: listing the runs: %w", err)
	}
	var all []*Run
	for rows.Next() {
		r := &Run{}
		if err := rows.Scan(&r.ID, &r.Kind, &r.StartedAt, &r.FinishedAt, &r.ToolVersion); err != nil {
			rows.Close()
			return nil, err
		}
		all = append(all, r)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	var picked []*Run
	if len(opts.RunIDs) > 0 {
		byID := map[int64]*Run{}
		for _, r := range all {
			byID[r.ID] = r
		}
		seen := map[int64]bool{}
		for _, id := range opts.RunIDs {
			r, ok := byID[id]
			if !ok {
				return nil, fmt.Errorf("report: no run %d in workspace %s (list the runs with: leadline sql \"SELECT run_id, kind, started_at FROM runs\")", id, ws.Path)
			}
			if !seen[id] {
				seen[id] = true
				picked = append(picked, r)
			}
		}
	} else {
		// The latest run of each kind; of drill-downs and sensitivity
		// studies (several of which make sense side by side) the latest
		// MaxDrills.
		latest := map[string]*Run{}
		several := map[string][]*Run{}
		for _, r := range all {
			if r.Kind == KindDrill || r.Kind == KindSensitivity {
				several[r.Kind] = append(several[r.Kind], r)
				continue
			}
			latest[r.Kind] = r
		}
		for _, k := range sortedKeys(latest) {
			picked = append(picked, latest[k])
		}
		for _, k := range sortedKeys(several) {
			rs := several[k]
			if len(rs) > opts.MaxDrills {
				rs = rs[len(rs)-opts.MaxDrills:]
			}
			picked = append(picked, rs...)
		}
	}
	sort.SliceStable(picked, func(i, j int) bool { return picked[i].ID < picked[j].ID })
	for _, r := range picked {
		var params, result string
		if err := ws.Conn.QueryRowContext(ctx, stmt("report_run_docs"), r.ID).Scan(&params, &result); err != nil {
			return nil, fmt.Errorf("report: reading run %d: %w", r.ID, err)
		}
		r.Params, r.Result = json.RawMessage(params), json.RawMessage(result)
	}
	return picked, nil
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
		var err error
		base := runBase(r.ID)
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
		default:
			err = m.addOther(r, fmt.Sprintf("Run %d: %s", r.ID, r.Kind))
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

func (m *Model) addOther(r *Run, title string) error {
	g, err := genericFrom(r, title, r.Result, srcRef(runBase(r.ID), "", r.Kind))
	if err != nil {
		return err
	}
	m.Others = append(m.Others, g)
	return nil
}

// explainAbsent records why each missing section is missing.
func (m *Model) explainAbsent(explicit bool) {
	how := map[string]string{
		"digits":     "leadline scan",
		"runs":       "leadline scan",
		"segments":   "leadline scan with segments",
		"limits":     "leadline limits",
		"ranges":     "leadline ranges",
		"duplicates": "leadline dups",
		"drill":      "leadline drill, or a pack with extracts",
		"manifest":   "leadline run PACK",
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
	}
	for k, cmd := range how {
		if present[k] {
			continue
		}
		switch {
		case k == "runs" && m.Digits != nil:
			m.absent[k] = "Not run: the digit tests in this report include no first-two digits test, so there is no runs test to show."
		case explicit:
			m.absent[k] = "Not run: none of the runs named for this report is of this kind (" + cmd + ")."
		default:
			m.absent[k] = "Not run: the workspace holds no run of this kind. Run " + cmd + " and make the report again."
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
