package reconcile

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"math/big"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Statuses of a reconciliation line.
const (
	Ties          = "ties"
	Differs       = "differs"
	OnlyInControl = "only in the control file"
	OnlyInLedger  = "only in the ledger"
)

// Line is one key and measure: expected, loaded and the difference
// (loaded - expected), as exact decimal text.
type Line struct {
	Key        []string `json:"key"` // in Result.Keys order
	Measure    string   `json:"measure"`
	Expected   *string  `json:"expected"` // nil when the key is only in the ledger
	Loaded     string   `json:"loaded"`   // "0" when the key is only in the control file
	Difference string   `json:"difference"`
	Opening    string   `json:"opening,omitempty"` // trial balance, net line
	Closing    string   `json:"closing,omitempty"`
	Status     string   `json:"status"`
	// ControlLine is the control file's line of the key (0: only in the
	// ledger).
	ControlLine int `json:"control_line"`
}

// Result is one reconciliation.
type Result struct {
	ID        int64     `json:"reconciliation_id"`
	CreatedAt time.Time `json:"created_at"`
	Control   Control   `json:"control"`
	Keys      []string  `json:"keys"`
	Measures  []string  `json:"measures"`
	Scale     int       `json:"scale"`
	Lines     []Line    `json:"lines"`
	// Keys counted: in the control file, in the ledger, compared (both),
	// with any difference, on one side only with a total other than zero.
	KeysControl   int `json:"keys_in_control"`
	KeysLedger    int `json:"keys_in_ledger"`
	KeysBoth      int `json:"keys_in_both"`
	KeysDiffering int `json:"keys_differing"`
	OnlyInControl int `json:"only_in_control"`
	OnlyInLedger  int `json:"only_in_ledger"`
	// Ties is true when every total of every key is equal.
	Ties     bool     `json:"ties"`
	Accepted bool     `json:"accepted"`
	Verdict  string   `json:"verdict"`
	Notes    []string `json:"notes"`

	workspace string // the workspace's file, for the commands shown
}

// Compare reconciles the workspace's ledger against a control file read
// by Read. accept marks the differences as accepted (the verdict says so;
// the caller then does not fail).
func Compare(ctx context.Context, ws *workspace.Workspace, c *Control, scale int, accept bool) (*Result, error) {
	has, err := ws.HasLedger(ctx)
	if err != nil {
		return nil, err
	}
	if !has {
		return nil, fmt.Errorf("the workspace %s holds no ledger: load the extracts first (leadline load)", ws.Path)
	}
	cols, err := ws.LedgerColumns(ctx)
	if err != nil {
		return nil, err
	}
	have := map[string]bool{}
	for _, col := range cols {
		have[strings.ToLower(col.Name)] = true
	}
	if have["currency"] && !contains(c.Keys, "currency") {
		// Totals over several currencies mean nothing: the control file
		// must say which currency each total is in.
		var n int
		var list string
		if err := ws.Conn.QueryRowContext(ctx, queries.Get("reconcile_currencies")).Scan(&n, &list); err != nil {
			return nil, err
		}
		if n > 1 {
			return nil, fmt.Errorf("%s: the ledger holds amounts in %d currencies (%s), and the control file has no currency column, so its totals would add amounts of different currencies; give the control file a currency column (or map it with --control-map currency=COLUMN)",
				c.Path, n, list)
		}
	}
	var sel strings.Builder
	for i, k := range c.Keys {
		if !have[k] {
			return nil, fmt.Errorf("%s: the control file totals by %s (column %q), but the ledger has no %s column; load the extract with --map %s=COLUMN, or leave the column out of the control file",
				c.Path, k, c.Columns[k], k, k)
		}
		fmt.Fprintf(&sel, "trim(coalesce(CAST(%s AS VARCHAR), '')) AS ll_k%d, ", queries.QuoteIdent(k), i+1)
	}
	q := queries.Render("reconcile_loaded", map[string]string{"key_select": sel.String()})
	rows, err := ws.Conn.QueryContext(ctx, q)
	if err != nil {
		return nil, fmt.Errorf("reading the ledger's totals per %s: %w", strings.Join(c.Keys, ", "), err)
	}
	type loadedTotals struct {
		key    []string
		values map[string]*big.Rat
	}
	var loaded []loadedTotals
	for rows.Next() {
		dest := make([]any, len(c.Keys)+4)
		keys := make([]string, len(c.Keys))
		for i := range keys {
			dest[i] = &keys[i]
		}
		var n int64
		var debit, credit, net string
		dest[len(keys)], dest[len(keys)+1], dest[len(keys)+2], dest[len(keys)+3] = &n, &debit, &credit, &net
		if err := rows.Scan(dest...); err != nil {
			rows.Close()
			return nil, err
		}
		lt := loadedTotals{key: keys, values: map[string]*big.Rat{"rows": new(big.Rat).SetInt64(n)}}
		for m, t := range map[string]string{"debit": debit, "credit": credit, "net": net} {
			v, ok := new(big.Rat).SetString(t)
			if !ok {
				rows.Close()
				return nil, fmt.Errorf("the ledger's %s total %q is not a decimal", m, t)
			}
			lt.values[m] = v
		}
		loaded = append(loaded, lt)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}

	res := &Result{CreatedAt: time.Now().UTC(), Control: *c, Keys: c.Keys, Measures: c.Measures, Scale: scale, Lines: []Line{},
		Notes: append([]string{}, c.Notes...), Accepted: accept, workspace: ws.Path}
	res.Control.Notes = nil
	byKey := map[string]int{}
	for i, lt := range loaded {
		byKey[strings.Join(lt.key, "\x00")] = i
	}
	matched := map[int]bool{}
	zero := new(big.Rat)
	format := func(m string, v *big.Rat) string {
		if m == "rows" {
			return v.FloatString(0)
		}
		return v.FloatString(scale)
	}
	for _, cl := range c.Lines {
		i, inLedger := byKey[strings.Join(cl.Key, "\x00")]
		differs := false
		var lines []Line
		for _, m := range c.Measures {
			exp := cl.Values[m]
			got := zero
			if inLedger {
				got = loaded[i].values[m]
			}
			diff := new(big.Rat).Sub(got, exp)
			e := format(m, exp)
			l := Line{Key: cl.Key, Measure: m, Expected: &e, Loaded: format(m, got), Difference: format(m, diff), ControlLine: cl.Line, Status: Ties}
			if m == "net" && cl.Opening != nil {
				l.Opening, l.Closing = cl.Opening.FloatString(scale), cl.Closing.FloatString(scale)
			}
			if diff.Sign() != 0 {
				l.Status = Differs
				differs = true
			}
			lines = append(lines, l)
		}
		res.KeysControl++
		if inLedger {
			matched[i] = true
			res.KeysBoth++
		} else {
			for j := range lines {
				lines[j].Status = OnlyInControl
			}
			if differs {
				res.OnlyInControl++
			} else {
				res.Notes = append(res.Notes, fmt.Sprintf("%s (control file line %d) has no rows in the ledger and totals of zero: it ties", describeKey(c.Keys, cl.Key), cl.Line))
			}
		}
		if differs {
			res.KeysDiffering++
		}
		res.Lines = append(res.Lines, lines...)
	}
	for i, lt := range loaded {
		res.KeysLedger++
		if matched[i] {
			continue
		}
		differs := false
		var lines []Line
		for _, m := range c.Measures {
			got := lt.values[m]
			if got.Sign() != 0 {
				differs = true
			}
			lines = append(lines, Line{Key: lt.key, Measure: m, Loaded: format(m, got), Difference: format(m, got), Status: OnlyInLedger})
		}
		if differs {
			res.OnlyInLedger++
			res.KeysDiffering++
		} else {
			res.Notes = append(res.Notes, fmt.Sprintf("%s is only in the ledger, with totals of zero", describeKey(c.Keys, lt.key)))
		}
		res.Lines = append(res.Lines, lines...)
	}
	res.Ties = res.KeysDiffering == 0
	res.Verdict = res.verdict()
	return res, nil
}

func (r *Result) verdict() string {
	counts := fmt.Sprintf("%d key(s) in the control file, %d in the ledger, %d in both", r.KeysControl, r.KeysLedger, r.KeysBoth)
	if r.Ties {
		return fmt.Sprintf("ties: every total of %s (%s) equals the loaded ledger's; %s", strings.Join(r.Measures, ", "), r.Control.Name, counts)
	}
	what := fmt.Sprintf("%d key(s) differ (%d only in the control file, %d only in the ledger); %s", r.KeysDiffering, r.OnlyInControl, r.OnlyInLedger, counts)
	if r.Accepted {
		return "accepted: does not tie, and the differences were accepted explicitly: " + what
	}
	return "does not tie: " + what
}

// Failed reports whether the reconciliation should make the command fail:
// a difference not accepted.
func (r *Result) Failed() bool { return !r.Ties && !r.Accepted }

// Error is the message of a reconciliation that does not tie.
func (r *Result) Error() string {
	return fmt.Sprintf("the ledger does not tie to the control file %s: %d key(s) differ (reconciliation %d, stored in the workspace: leadline sql --db %s \"SELECT * FROM ll_reconciliation_rows WHERE reconciliation_id = %d AND status <> 'ties' ORDER BY seq\"). Give --accept-differences to accept them",
		r.Control.Name, r.KeysDiffering, r.ID, r.workspace, r.ID)
}

// KeyText names a line's key for a table cell.
func (r *Result) KeyText(l Line) string { return describeKey(r.Keys, l.Key) }

// Save stores the reconciliation in the workspace and sets its ID.
func Save(ctx context.Context, ws *workspace.Workspace, r *Result) error {
	tx, err := ws.Conn.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if _, err := tx.ExecContext(ctx, queries.Get("reconcile_create")); err != nil {
		return fmt.Errorf("creating the reconciliation tables: %w", err)
	}
	if err := tx.QueryRowContext(ctx, queries.Get("reconcile_next_id")).Scan(&r.ID); err != nil {
		return err
	}
	doc, err := json.Marshal(r)
	if err != nil {
		return err
	}
	keys, _ := json.Marshal(r.Keys)
	if _, err := tx.ExecContext(ctx, queries.Get("reconcile_insert"), r.ID, r.CreatedAt, r.Control.Path, r.Control.Name, r.Control.SHA256, r.Control.SizeBytes,
		r.Control.Shape, string(keys), r.KeysBoth, r.KeysDiffering, r.OnlyInControl, r.OnlyInLedger, r.Ties, r.Accepted, r.Verdict, string(doc)); err != nil {
		return err
	}
	st, err := tx.PrepareContext(ctx, queries.Get("reconcile_insert_row"))
	if err != nil {
		return err
	}
	defer st.Close()
	for i, l := range r.Lines {
		key := map[string]any{}
		for j, k := range r.Keys {
			key[k] = l.Key[j]
		}
		var exp any
		if l.Expected != nil {
			exp = *l.Expected
		}
		var line any
		if l.ControlLine > 0 {
			line = int64(l.ControlLine)
		}
		if _, err := st.ExecContext(ctx, r.ID, i+1, key["entity"], key["account"], key["currency"], l.Measure, exp, l.Loaded, l.Difference, l.Status, line); err != nil {
			return err
		}
	}
	return tx.Commit()
}

// Latest returns the workspace's latest stored reconciliation, or nil.
func Latest(ctx context.Context, ws *workspace.Workspace) (*Result, error) {
	var n int
	if err := ws.Conn.QueryRowContext(ctx, queries.Get("reconcile_exists")).Scan(&n); err != nil || n == 0 {
		return nil, err
	}
	var doc string
	err := ws.Conn.QueryRowContext(ctx, queries.Get("reconcile_latest")).Scan(&doc)
	if err == sql.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	r := &Result{}
	if err := json.Unmarshal([]byte(doc), r); err != nil {
		return nil, fmt.Errorf("reading the stored reconciliation: %w", err)
	}
	return r, nil
}

// Run reads the control file, reconciles and stores the result: what
// `load --control` and `leadline reconcile` do.
func Run(ctx context.Context, ws *workspace.Workspace, path string, o Options, accept bool) (*Result, error) {
	scale, err := LedgerScale(ctx, ws)
	if err != nil {
		return nil, err
	}
	o.Scale = scale
	c, err := Read(path, o)
	if err != nil {
		return nil, err
	}
	res, err := Compare(ctx, ws, c, scale, accept)
	if err != nil {
		return nil, err
	}
	if err := Save(ctx, ws, res); err != nil {
		return nil, fmt.Errorf("storing the reconciliation: %w", err)
	}
	return res, nil
}

// LedgerScale is the decimal places of the workspace's amounts (2 when no
// load has fixed them yet).
func LedgerScale(ctx context.Context, ws *workspace.Workspace) (int, error) {
	t, ok, err := ws.Meta(ctx, "amount_type")
	if err != nil || !ok {
		return 2, err
	}
	if i := strings.LastIndexByte(t, ','); i >= 0 {
		if s, err := strconv.Atoi(strings.TrimSuffix(t[i+1:], ")")); err == nil {
			return s, nil
		}
	}
	return 2, nil
}
