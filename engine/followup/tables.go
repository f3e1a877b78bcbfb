package followup

import (
	"context"
	"database/sql"
	"fmt"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Section is the section name of the follow-up tables in a run's output
// (results.json, the workbook, the report).
const Section = "followup"

// NotEntered is how the tables name records returned with the follow-up
// columns left blank.
const NotEntered = "(not entered)"

// Record is one ledger record's latest follow-up.
type Record struct {
	Item, FileName    string
	Line              int64
	Amount            string
	Status, Note, Who string
	ReviewedOn        string
	Returned          string // the returned file's base name
	ReturnedLine      int64
}

// State is what the workspace holds of follow-up: the returned files read,
// each record's latest follow-up, the rows refused.
type State struct {
	Files   []FileRead
	Records []Record
	Refused [][]any // returned file, line, file_name, line given, reason
}

// FileRead is one returned file read.
type FileRead struct {
	ReadID                int64
	ReadAt                time.Time
	Path, Sheet, SHA256   string
	Read, Stored, Refused int64
}

// maxRefusedListed bounds the refused rows a report lists (all stay in
// the followup_refused table).
const maxRefusedListed = 2000

// Load reads the follow-up state of the workspace; nil when no returned
// file was ever read.
func Load(ctx context.Context, db output.Querier) (*State, error) {
	var n int
	rows, err := db.QueryContext(ctx, queries.Get("followup_has_tables"))
	if err != nil {
		return nil, err
	}
	if rows.Next() {
		rows.Scan(&n)
	}
	rows.Close()
	if n < 3 {
		return nil, nil
	}
	st := &State{}
	rows, err = db.QueryContext(ctx, queries.Get("followup_reads_list"))
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var f FileRead
		if err := rows.Scan(&f.ReadID, &f.ReadAt, &f.Path, &f.Sheet, &f.SHA256, &f.Read, &f.Stored, &f.Refused); err != nil {
			rows.Close()
			return nil, err
		}
		st.Files = append(st.Files, f)
	}
	rows.Close()
	if len(st.Files) == 0 {
		return nil, rows.Err()
	}
	rows, err = db.QueryContext(ctx, queries.Get("followup_latest"))
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var r Record
		var item, amount, status, note, who, on sql.NullString
		var returned string
		if err := rows.Scan(&item, &r.FileName, &r.Line, &amount, &status, &note, &who, &on, &returned, &r.ReturnedLine); err != nil {
			rows.Close()
			return nil, err
		}
		r.Item, r.Amount, r.Status, r.Note, r.Who, r.ReviewedOn = item.String, amount.String, status.String, note.String, who.String, on.String
		r.Returned = filepath.Base(returned)
		st.Records = append(st.Records, r)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	rows, err = db.QueryContext(ctx, queries.Get("followup_refused_list"), maxRefusedListed)
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var path, fileName, line, reason string
		var at int64
		if err := rows.Scan(&path, &at, &fileName, &line, &reason); err != nil {
			rows.Close()
			return nil, err
		}
		st.Refused = append(st.Refused, []any{filepath.Base(path), at, fileName, line, reason})
	}
	rows.Close()
	return st, rows.Err()
}

// itemOf names a record's item: the extract's item, else the returned
// file (a drill export has no item column).
func (r Record) itemOf() string {
	if r.Item != "" {
		return r.Item
	}
	return "records of " + r.Returned
}

func (r Record) statusOf() string {
	if r.Status == "" {
		return NotEntered
	}
	return r.Status
}

// Tables are the follow-up tables of a run's output, in the section
// Section: the records by status, the items with their counts by status,
// every record's latest follow-up, the returned files read and the rows
// refused. nil when st is nil.
func Tables(st *State) []*output.Table {
	if st == nil {
		return nil
	}
	byStatus := map[string]int64{}
	type itemCount struct {
		records int64
		by      map[string]int64
		order   int
	}
	items := map[string]*itemCount{}
	for i, r := range st.Records {
		byStatus[r.statusOf()]++
		ic := items[r.itemOf()]
		if ic == nil {
			ic = &itemCount{by: map[string]int64{}, order: i}
			items[r.itemOf()] = ic
		}
		ic.records++
		ic.by[r.statusOf()]++
	}
	statuses := make([]string, 0, len(byStatus))
	for s := range byStatus {
		statuses = append(statuses, s)
	}
	sort.Slice(statuses, func(i, j int) bool {
		if byStatus[statuses[i]] != byStatus[statuses[j]] {
			return byStatus[statuses[i]] > byStatus[statuses[j]]
		}
		return statuses[i] < statuses[j]
	})
	var srows [][]any
	for _, s := range statuses {
		srows = append(srows, []any{s, byStatus[s]})
	}
	status := output.NewTable("followup_status", "Follow-up: records returned, by status", Section, []string{"status", "records"}, srows,
		map[string]output.Kind{"status": output.Text, "records": output.Count})
	status.Note = fmt.Sprintf("%s: the follow-up columns were left blank. The latest follow-up entered for each record counts.", NotEntered)

	names := make([]string, 0, len(items))
	for k := range items {
		names = append(names, k)
	}
	sort.Slice(names, func(i, j int) bool { return items[names[i]].order < items[names[j]].order })
	var irows [][]any
	for _, k := range names {
		ic := items[k]
		var parts []string
		for _, s := range statuses {
			if n := ic.by[s]; n > 0 {
				parts = append(parts, fmt.Sprintf("%s %d", s, n))
			}
		}
		irows = append(irows, []any{k, ic.records, ic.records - ic.by[NotEntered], strings.Join(parts, ", ")})
	}
	itemT := output.NewTable("followup_items", "Follow-up by flagged item", Section, []string{"item", "records_returned", "records_followed_up", "by_status"}, irows,
		map[string]output.Kind{"item": output.Text, "records_returned": output.Count, "records_followed_up": output.Count, "by_status": output.Text})

	var rrows [][]any
	for _, r := range st.Records {
		var amount any
		if d, ok := output.NewDecimal(r.Amount); ok {
			amount = d
		}
		rrows = append(rrows, []any{r.itemOf(), r.FileName, r.Line, amount, r.statusOf(), r.Note, r.Who, r.ReviewedOn, r.Returned, r.ReturnedLine})
	}
	recs := output.NewTable("followup_records", "Follow-up of each record returned (the latest entered)", Section,
		[]string{"item", "file_name", "line", "amount", "status", "note", "reviewer", "reviewed_on", "returned_file", "returned_line"}, rrows,
		map[string]output.Kind{"item": output.Text, "file_name": output.Text, "line": output.Count, "amount": output.Money, "status": output.Text,
			"note": output.Text, "reviewer": output.Text, "reviewed_on": output.Text, "returned_file": output.Text, "returned_line": output.Count})

	var frows [][]any
	for _, f := range st.Files {
		frows = append(frows, []any{f.ReadID, f.ReadAt, f.Path, f.Sheet, f.SHA256, f.Read, f.Stored, f.Refused})
	}
	files := output.NewTable("followup_files", "Returned files read: rows read = rows stored + rows refused", Section,
		[]string{"read_id", "read_at", "path", "sheet", "sha256", "rows_read", "rows_stored", "rows_refused"}, frows,
		map[string]output.Kind{"read_id": output.Count, "read_at": output.Timestamp, "path": output.Text, "sheet": output.Text, "sha256": output.Text,
			"rows_read": output.Count, "rows_stored": output.Count, "rows_refused": output.Count})
	out := []*output.Table{status, itemT, recs, files}
	if len(st.Refused) > 0 {
		ref := output.NewTable("followup_refused", "Returned rows refused: they name no single ledger record", Section,
			[]string{"returned_file", "returned_line", "file_name", "line", "reason"}, st.Refused,
			map[string]output.Kind{"returned_file": output.Text, "returned_line": output.Count, "file_name": output.Text, "line": output.Text, "reason": output.Text})
		out = append(out, ref)
	}
	return out
}

// Summary says the state in one sentence for a run's findings.
func Summary(st *State) string {
	if st == nil {
		return ""
	}
	var entered, blank int64
	for _, r := range st.Records {
		if r.Status == "" {
			blank++
		} else {
			entered++
		}
	}
	var refused int64
	for _, f := range st.Files {
		refused += f.Refused
	}
	return fmt.Sprintf("Follow-up: %d returned file(s) read; %d record(s) with a status entered, %d returned blank; %d row(s) refused.",
		len(st.Files), entered, blank, refused)
}

// LoadTables reads the workspace's follow-up state as output tables (nil
// when no returned file was read).
func LoadTables(ctx context.Context, ws *workspace.Workspace) ([]*output.Table, *State, error) {
	st, err := Load(ctx, ws.Conn)
	if err != nil {
		return nil, nil, fmt.Errorf("follow-up: %w", err)
	}
	return Tables(st), st, nil
}
