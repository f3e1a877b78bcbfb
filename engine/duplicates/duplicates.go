// Package duplicates runs leadline's duplicate tests over the ledger, each
// group ranked and addressable for drill-down:
//
//   - exact: exact duplicates, the same amount, counterparty, posted date
//     and document, two records or more;
//   - same_amount: the same amount and counterparty under two or more
//     documents (possible double payments), optionally only where two
//     documents fall within a window of days;
//   - same_doc: the same document and counterparty with different amounts;
//   - spread: one amount spread across many counterparties;
//   - rsf: the relative size factor per counterparty, the largest amount
//     divided by the second largest (M. J. Nigrini (2012), Benford's Law,
//     Wiley; the factor as described there, from memory).
//
// What a practitioner follows up is money at stake: exact, same_amount and
// spread groups are ranked by the amount times its extra copies, same_doc
// groups by what the document holds beyond its largest line. Groups whose
// amounts are all below a floor (Options.Floor, DefaultFloor unless set)
// are left out, and so are same_doc groups whose lines all belong to
// documents that net to zero (the lines of one balanced document differ by
// design). Each test says how many groups and records it left out for
// each reason (TestResult.LeftOut).
//
// A test whose key columns the ledger lacks (never filled: not mapped at
// load) is reported as skipped with the column it needs, not as an error.
// The tests run in DuckDB over the population (engine/population: filter,
// signs, minimum, with the scan's defaults); only the top groups reach Go. To
// keep tens of millions of rows fast, candidate keys are first found by
// grouping on 64-bit hashes of the text columns and then counted on the
// text itself, which is exact; only the spread test counts distinct
// counterparties by hash (queries/duplicates.sql gives the odds).
//
// A stored run keeps each group's key, so that `leadline drill --dup
// RUN:TEST:GROUP` lists its records again (GroupSelection, drill.DuplicateGroup).
//
// Results are signals for follow-up, never proof of fraud: recurring
// payments, instalments and round prices produce many innocent groups.
//
// It owns the duplicate tests: finding, ranking and naming the groups of
// records that repeat.
package duplicates

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/field"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Test names, stable in JSON, CSV and group references.
const (
	Exact      = "exact"
	SameAmount = "same_amount"
	SameDoc    = "same_doc"
	Spread     = "spread"
	RSF        = "rsf"
)

// Tests lists the tests in the order they run and print.
var Tests = []string{Exact, SameAmount, SameDoc, Spread, RSF}

// Defaults.
const (
	DefaultTop               = 20 // groups kept per test
	DefaultMinCounterparties = 3  // spread: counterparties an amount must reach
	DefaultMinRecords        = 3  // rsf: records a counterparty must have (our own default)
	// DefaultFloor is the smallest absolute amount a group must reach to
	// be listed (our own default, common practice, no source: below it a
	// repeat rarely repays the follow-up; 0 lists every group).
	DefaultFloor = "100"
)

// Reasons a group is left out (LeftOut.Reason).
const (
	LeftBelowFloor = "below_floor"       // every amount of the group below the floor
	LeftBalanced   = "balanced_document" // same_doc: lines of documents that net to zero
)

// Kind is the kind of the stored run.
const Kind = "duplicates"

// Options say which tests to run over which population.
type Options struct {
	population.Spec
	Tests             []string `json:"tests"`              // default: all
	WindowDays        int      `json:"window_days"`        // same_amount: 0 = any dates; N = documents within N days
	MinCounterparties int      `json:"min_counterparties"` // spread
	MinRecords        int      `json:"min_records"`        // rsf
	Top               int      `json:"top"`                // groups kept per test; -1 = all
	Floor             string   `json:"floor"`              // smallest absolute amount a group must reach (exact decimal; "0" lists all)
}

func (o *Options) defaults() {
	o.Spec = o.Spec.WithDefaults()
	if len(o.Tests) == 0 {
		o.Tests = append([]string(nil), Tests...)
	}
	if o.MinCounterparties == 0 {
		o.MinCounterparties = DefaultMinCounterparties
	}
	if o.MinRecords == 0 {
		o.MinRecords = DefaultMinRecords
	}
	if o.Top == 0 {
		o.Top = DefaultTop
	}
	if strings.TrimSpace(o.Floor) == "" {
		o.Floor = DefaultFloor
	}
}

// Check fills in the defaults and checks the options as Run does, so that
// a pack refuses a setting for the same reason as the command line. Its
// refusals are *field.Error values naming the setting (tests,
// window_days, top, min_counterparties, min_records, floor).
func (o *Options) Check() error {
	o.defaults()
	return o.check()
}

func (o *Options) check() error {
	seen := map[string]bool{}
	for i, t := range o.Tests {
		t = strings.ToLower(strings.TrimSpace(t))
		o.Tests[i] = t
		if _, ok := titles[t]; !ok {
			return &field.Error{Field: "tests", Reason: "unknown test {0}; give any of {1}", Args: []any{strconv.Quote(t), strings.Join(Tests, ", ")}}
		}
		if seen[t] {
			return &field.Error{Field: "tests", Reason: "{0} given twice", Args: []any{t}}
		}
		seen[t] = true
	}
	if o.WindowDays < 0 {
		return &field.Error{Field: "window_days", Value: strconv.Itoa(o.WindowDays), Reason: "give 0 (any dates) or a number of days"}
	}
	if o.MinCounterparties < 2 {
		return &field.Error{Field: "min_counterparties", Value: strconv.Itoa(o.MinCounterparties), Reason: "give 2 or more"}
	}
	if o.MinRecords < 2 {
		return &field.Error{Field: "min_records", Value: strconv.Itoa(o.MinRecords), Reason: "the size factor needs 2 records or more"}
	}
	if o.Top < -1 {
		return &field.Error{Field: "top", Value: strconv.Itoa(o.Top), Reason: "give a number of groups, or -1 for all"}
	}
	f, ok := population.ParseDecimal(o.Floor)
	if !ok || f.Sign() < 0 {
		return &field.Error{Field: "floor", Value: strconv.Quote(o.Floor), Reason: "give the smallest absolute amount a group must reach, 0 or more (0 lists every group); {0}", Args: []any{population.DecimalHint}}
	}
	o.Floor = strings.ReplaceAll(strings.TrimPrefix(strings.TrimSpace(o.Floor), "+"), "_", "")
	return o.Spec.Check()
}

var titles = map[string]string{
	Exact:      "exact duplicates: same amount, counterparty, date and document",
	SameAmount: "same amount and counterparty, different documents (possible double payments)",
	SameDoc:    "same document and counterparty, different amounts",
	Spread:     "one amount across many counterparties",
	RSF:        "relative size factor: largest / second-largest amount per counterparty (Nigrini 2012)",
}

var rankings = map[string]string{
	Exact:      "excess amount |amount| x (records - 1), largest first",
	SameAmount: "excess amount |amount| x (documents - 1), largest first",
	SameDoc:    "excess amount: sum of |amount| beyond the largest line, largest first",
	Spread:     "excess amount |amount| x (counterparties - 1), largest first",
	RSF:        "relative size factor, largest first",
}

// needs lists the key columns of each test.
func needs(test string, o Options) []string {
	switch test {
	case Exact:
		return []string{"counterparty", "doc_id", "posted"}
	case SameAmount:
		if o.WindowDays > 0 {
			return []string{"counterparty", "doc_id", "posted"}
		}
		return []string{"counterparty", "doc_id"}
	case SameDoc:
		return []string{"counterparty", "doc_id"}
	}
	return []string{"counterparty"}
}

// Group is one duplicate group. Which fields are set depends on the test
// (docs/json.md lists them); amounts are exact decimal text.
type Group struct {
	ID             int     `json:"id"`            // rank within the test, from 1
	Ref            string  `json:"ref,omitempty"` // RUN:TEST:ID for leadline drill --dup
	Amount         string  `json:"amount,omitempty"`
	Counterparty   string  `json:"counterparty,omitempty"`
	DocID          string  `json:"doc_id,omitempty"`
	Posted         string  `json:"posted,omitempty"`
	FirstPosted    string  `json:"first_posted,omitempty"`
	LastPosted     string  `json:"last_posted,omitempty"`
	Records        int64   `json:"records"`
	Documents      int64   `json:"documents,omitempty"`
	Amounts        int64   `json:"amounts,omitempty"` // distinct amounts
	Counterparties int64   `json:"counterparties,omitempty"`
	MinAmount      string  `json:"min_amount,omitempty"`
	MaxAmount      string  `json:"max_amount,omitempty"`
	Largest        string  `json:"largest,omitempty"`
	Second         string  `json:"second,omitempty"`
	RSF            float64 `json:"rsf,omitempty"`
	Excess         string  `json:"excess,omitempty"`
	Total          string  `json:"total"`
}

// TestResult is what one test found.
type TestResult struct {
	Test         string    `json:"test"`
	Title        string    `json:"title"`
	Status       string    `json:"status"`           // ok or skipped
	Reason       string    `json:"reason,omitempty"` // why skipped, e.g. "needs doc_id"
	Needs        []string  `json:"needs"`
	Ranking      string    `json:"ranking"`
	GroupsTotal  int64     `json:"groups_total"`  // groups found and kept (Groups holds the top ones)
	RecordsTotal int64     `json:"records_total"` // records in all groups kept
	LeftOut      []LeftOut `json:"left_out"`      // groups found but left out, by reason
	Groups       []Group   `json:"groups"`
	Seconds      float64   `json:"seconds"`
}

// LeftOut counts the groups of a test left out for one reason.
type LeftOut struct {
	Reason  string `json:"reason"` // below_floor or balanced_document
	Groups  int64  `json:"groups"`
	Records int64  `json:"records"`
}

// Result is a duplicates run: the document `leadline dups --format json`
// prints and the workspace stores.
type Result struct {
	RunID         int64        `json:"run_id"` // 0 until stored
	Kind          string       `json:"kind"`
	StartedAt     time.Time    `json:"started_at"`
	AmountType    string       `json:"amount_type"`
	Currency      string       `json:"currency,omitempty"` // of every amount tested ("" when they name none)
	Options       Options      `json:"options"`
	RecordsTested int64        `json:"records_tested"`
	Tests         []TestResult `json:"tests"`
	Seconds       float64      `json:"seconds"`
	Note          string       `json:"note"`
}

// Note is printed with every result.
const Note = "Duplicate groups are signals for follow-up, never proof of fraud: recurring payments, instalments and fixed prices make innocent groups."

// Run runs the tests. It does not store the result; see Save.
func Run(ctx context.Context, ws *workspace.Workspace, o Options) (*Result, error) {
	started := time.Now()
	o.defaults()
	if err := o.check(); err != nil {
		return nil, err
	}
	pop, err := population.Prepare(ctx, ws, o.Spec)
	if err != nil {
		return nil, err
	}
	currency, err := population.OneCurrency(ctx, ws, pop, "the duplicate tests compare amounts of one currency")
	if err != nil {
		return nil, err
	}
	at, base := pop.AmountType, pop.Where()
	res := &Result{Kind: Kind, StartedAt: started.UTC(), AmountType: at.SQL(), Currency: currency, Options: o, Note: Note}
	if err := ws.Conn.QueryRowContext(ctx, queries.Render("dup_records_tested", map[string]string{"base": base.SQL}), base.Args...).Scan(&res.RecordsTested); err != nil {
		return nil, fmt.Errorf("duplicates: %w", err)
	}
	have := map[string]bool{}
	var cp, doc, posted bool
	if err := ws.Conn.QueryRowContext(ctx, queries.Get("dup_columns")).Scan(&cp, &doc, &posted); err != nil {
		return nil, fmt.Errorf("duplicates: %w", err)
	}
	have["counterparty"], have["doc_id"], have["posted"] = cp, doc, posted
	repl := map[string]string{"base": base.SQL, "wide": fmt.Sprintf("DECIMAL(38,%d)", at.Scale)}
	limit := int64(o.Top)
	if limit < 0 {
		limit = 1 << 62
	}
	defer ws.Step("duplicates")()
	for _, test := range o.Tests {
		tr := TestResult{Test: test, Title: titles[test], Status: "ok", Needs: needs(test, o), Ranking: rankings[test], Groups: []Group{}, LeftOut: []LeftOut{}}
		var missing []string
		for _, c := range tr.Needs {
			if !have[c] {
				missing = append(missing, c)
			}
		}
		if len(missing) > 0 {
			tr.Status = "skipped"
			tr.Reason = "needs " + strings.Join(missing, ", ") + " (not in this ledger; map it at load with --map)"
			res.Tests = append(res.Tests, tr)
			continue
		}
		ws.Step("duplicates: " + test)
		t0 := time.Now()
		if err := runTest(ctx, ws, test, o, repl, base.Args, limit, &tr); err != nil {
			return nil, fmt.Errorf("duplicates, test %s: %w", test, err)
		}
		tr.Seconds = time.Since(t0).Seconds()
		res.Tests = append(res.Tests, tr)
	}
	res.Seconds = time.Since(started).Seconds()
	return res, nil
}

func runTest(ctx context.Context, ws *workspace.Workspace, test string, o Options, repl map[string]string, baseArgs []any, limit int64, tr *TestResult) error {
	name := "dup_" + test
	args := append([]any(nil), baseArgs...)
	switch test {
	case SameAmount:
		if o.WindowDays > 0 {
			name = "dup_same_amount_window"
			args = append(args, o.WindowDays)
		}
	case Spread:
		args = append(args, o.MinCounterparties)
	case RSF:
		args = append(args, o.MinRecords)
	}
	args = append(args, o.Floor, limit)
	rows, err := ws.Conn.QueryContext(ctx, queries.Render(name, repl), args...)
	if err != nil {
		return err
	}
	defer rows.Close()
	var keep bool
	var floorGroups, floorRecords, balGroups, balRecords int64
	for rows.Next() {
		g := Group{ID: len(tr.Groups) + 1}
		var ns [4]sql.NullString
		var dest []any
		switch test {
		case Exact:
			dest = []any{&g.Amount, &g.Counterparty, &g.Posted, &g.DocID, &g.Records, &g.Excess, &g.Total}
		case SameAmount:
			dest = []any{&g.Amount, &g.Counterparty, &g.Records, &g.Documents, &ns[0], &ns[1], &g.Excess, &g.Total}
		case SameDoc:
			dest = []any{&g.DocID, &g.Counterparty, &g.Records, &g.Amounts, &g.MinAmount, &g.MaxAmount, &ns[0], &ns[1], &g.Excess, &g.Total}
		case Spread:
			dest = []any{&g.Amount, &g.Counterparties, &g.Records, &g.Excess, &g.Total}
		case RSF:
			dest = []any{&g.Counterparty, &g.Records, &g.Largest, &g.Second, &g.RSF, &g.Total}
		}
		dest = append(dest, &keep, &tr.GroupsTotal, &tr.RecordsTotal, &floorGroups, &floorRecords, &balGroups, &balRecords)
		if err := rows.Scan(dest...); err != nil {
			return err
		}
		if !keep { // rows of groups left out only carry the counts
			continue
		}
		g.FirstPosted, g.LastPosted = ns[0].String, ns[1].String
		tr.Groups = append(tr.Groups, g)
	}
	if err := rows.Err(); err != nil {
		return err
	}
	if balGroups > 0 {
		tr.LeftOut = append(tr.LeftOut, LeftOut{Reason: LeftBalanced, Groups: balGroups, Records: balRecords})
	}
	if floorGroups > 0 {
		tr.LeftOut = append(tr.LeftOut, LeftOut{Reason: LeftBelowFloor, Groups: floorGroups, Records: floorRecords})
	}
	return nil
}

// Save stores the result as a run of kind "duplicates" and gives it and its
// groups their run id and references.
func Save(ctx context.Context, ws *workspace.Workspace, res *Result) error {
	_, err := ws.SaveRun(ctx, workspace.Run{Kind: Kind, Started: res.StartedAt, Params: res.Options, Result: res, SetID: func(id int64) {
		res.RunID = id
		for i := range res.Tests {
			for j := range res.Tests[i].Groups {
				g := &res.Tests[i].Groups[j]
				g.Ref = fmt.Sprintf("%d:%s:%d", id, res.Tests[i].Test, g.ID)
			}
		}
	}})
	return err
}

// Ref is a reference to one group of a stored run.
type Ref struct {
	Run   int64 // 0 = the latest duplicates run
	Test  string
	Group int
}

// ParseRef reads RUN:TEST:GROUP (e.g. 7:same_amount:3) or TEST:GROUP for
// the latest duplicates run.
func ParseRef(s string) (Ref, error) {
	parts := strings.Split(strings.TrimSpace(s), ":")
	bad := fmt.Errorf("--dup %q: write RUN:TEST:GROUP as printed by leadline dups, e.g. --dup 7:same_amount:3 (or TEST:GROUP for the latest run)", s)
	var r Ref
	switch len(parts) {
	case 3:
		n, err := strconv.ParseInt(parts[0], 10, 64)
		if err != nil || n <= 0 {
			return r, bad
		}
		r.Run = n
		parts = parts[1:]
	case 2:
	default:
		return r, bad
	}
	r.Test = strings.ToLower(parts[0])
	if _, ok := titles[r.Test]; !ok {
		return r, fmt.Errorf("--dup %q: unknown test %q; the tests are %s", s, parts[0], strings.Join(Tests, ", "))
	}
	g, err := strconv.Atoi(parts[1])
	if err != nil || g <= 0 {
		return r, bad
	}
	r.Group = g
	return r, nil
}

// LoadRun reads a stored duplicates run (run 0: the latest).
func LoadRun(ctx context.Context, ws *workspace.Workspace, run int64) (*Result, error) {
	var id int64
	var kind, doc string
	var err error
	if run == 0 {
		err = ws.Conn.QueryRowContext(ctx, queries.Get("dup_run_latest")).Scan(&id, &kind, &doc)
		if errors.Is(err, sql.ErrNoRows) {
			return nil, fmt.Errorf("no duplicates run in this workspace yet: run `leadline dups` first")
		}
	} else {
		err = ws.Conn.QueryRowContext(ctx, queries.Get("dup_run_by_id"), run).Scan(&id, &kind, &doc)
		if errors.Is(err, sql.ErrNoRows) {
			return nil, fmt.Errorf("no run %d in this workspace (see leadline sql \"SELECT run_id, kind, started_at FROM runs\")", run)
		}
	}
	if err != nil {
		return nil, err
	}
	if kind != Kind {
		return nil, fmt.Errorf("run %d is a %s run, not a duplicates run", id, kind)
	}
	var res Result
	if err := json.Unmarshal([]byte(doc), &res); err != nil {
		return nil, fmt.Errorf("run %d: reading its stored result: %w", id, err)
	}
	res.RunID = id
	return &res, nil
}

// GroupKey is what selects a group's records: the run's population
// (filter, signs, minimum), the group's key as a predicate, and a phrase
// saying what it selects.
type GroupKey struct {
	Population population.Spec
	Where      population.Predicate
	Described  string
}

// GroupSelection turns a group reference into its key, with the same
// conditions the test put on its key columns, so that a drill-down finds
// the group's records (as many as the run counted, unless the ledger
// changed since); drill.DuplicateGroup makes it a drill selection.
func GroupSelection(ctx context.Context, ws *workspace.Workspace, ref Ref) (GroupKey, *Group, error) {
	res, err := LoadRun(ctx, ws, ref.Run)
	if err != nil {
		return GroupKey{}, nil, err
	}
	var tr *TestResult
	for i := range res.Tests {
		if res.Tests[i].Test == ref.Test {
			tr = &res.Tests[i]
		}
	}
	if tr == nil {
		return GroupKey{}, nil, fmt.Errorf("run %d did not run the %s test", res.RunID, ref.Test)
	}
	if tr.Status != "ok" {
		return GroupKey{}, nil, fmt.Errorf("run %d skipped the %s test (%s)", res.RunID, ref.Test, tr.Reason)
	}
	if ref.Group > len(tr.Groups) {
		more := ""
		if tr.GroupsTotal > int64(len(tr.Groups)) {
			more = fmt.Sprintf("; it found %d, rerun leadline dups with --top %d to keep more", tr.GroupsTotal, ref.Group)
		}
		return GroupKey{}, nil, fmt.Errorf("run %d kept %d groups of the %s test, no group %d%s", res.RunID, len(tr.Groups), ref.Test, ref.Group, more)
	}
	g := tr.Groups[ref.Group-1]
	at, err := population.ParseAmountType(res.AmountType)
	if err != nil {
		return GroupKey{}, nil, err
	}
	amt := "amount = CAST(? AS " + at.SQL() + ")"
	var p population.Predicate
	var what string
	switch ref.Test {
	case Exact:
		p = population.Predicate{SQL: amt + " AND counterparty = ? AND posted = CAST(? AS DATE) AND doc_id = ?", Args: []any{g.Amount, g.Counterparty, g.Posted, g.DocID}}
		what = fmt.Sprintf("amount %s, counterparty %s, posted %s, document %s", g.Amount, g.Counterparty, g.Posted, g.DocID)
	case SameAmount:
		p = population.Predicate{SQL: amt + " AND counterparty = ? AND doc_id <> ''", Args: []any{g.Amount, g.Counterparty}}
		what = fmt.Sprintf("amount %s, counterparty %s", g.Amount, g.Counterparty)
		if res.Options.WindowDays > 0 {
			p.SQL += " AND posted BETWEEN CAST(? AS DATE) AND CAST(? AS DATE)"
			p.Args = append(p.Args, g.FirstPosted, g.LastPosted)
			what += fmt.Sprintf(", posted %s to %s", g.FirstPosted, g.LastPosted)
		}
	case SameDoc:
		p = population.Predicate{SQL: "doc_id = ? AND counterparty = ?", Args: []any{g.DocID, g.Counterparty}}
		what = fmt.Sprintf("document %s, counterparty %s", g.DocID, g.Counterparty)
	case Spread:
		p = population.Predicate{SQL: amt + " AND counterparty <> ''", Args: []any{g.Amount}}
		what = fmt.Sprintf("amount %s", g.Amount)
	case RSF:
		p = population.Predicate{SQL: "counterparty = ?", Args: []any{g.Counterparty}}
		what = fmt.Sprintf("counterparty %s", g.Counterparty)
	}
	key := GroupKey{
		Population: res.Options.Spec,
		Where:      p,
		Described:  fmt.Sprintf("duplicates run %d, %s group %d: %s", res.RunID, ref.Test, g.ID, what),
	}
	return key, &g, nil
}
