package followup_test

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/xuri/excelize/v2"
)

// ledger loads two small files: a/gl.csv (lines 2-5) and b/ap.csv (lines
// 2-3), and with twin a third file named gl.csv in another folder.
func ledger(t *testing.T, twin bool) (*workspace.Workspace, string) {
	t.Helper()
	dir := t.TempDir()
	write := func(rel, text string) string {
		p := filepath.Join(dir, rel)
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	files := []string{
		write("a/gl.csv", "entity,amount,descr\nE1,100.00,rent\nE1,250.50,fuel\nE2,999.99,fees\nE2,12.00,post\n"),
		write("b/ap.csv", "entity,amount,descr\nE3,40.00,ink\nE3,41.00,paper\n"),
	}
	if twin {
		files = append(files, write("c/gl.csv", "entity,amount,descr\nE9,1.00,x\nE9,2.00,y\n"))
	}
	ctx := context.Background()
	ws, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	if _, err := load.Load(ctx, ws, files, load.Options{}); err != nil {
		t.Fatal(err)
	}
	return ws, dir
}

func returned(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// Each returned row is stored when its file name and line name one loaded
// record, else refused with the reason and its line in the returned file;
// rows read = stored + refused. The file here is what a spreadsheet of a
// decimal-comma locale saves: semicolons, a byte-order mark, columns moved,
// a formula-neutralising quote kept.
func TestReadMatchesAndRefuses(t *testing.T) {
	ws, dir := ledger(t, false)
	text := "\ufefffollowup_status;file_name;line;amount;followup_note;followup_reviewer;followup_reviewed_on\n" +
		" Explained ;gl.csv;2;100.00;agreed to lease;AB;2026-01-15\n" + // line 2
		";gl.csv;3;250.50;;;\n" + // line 3: returned blank
		"open;gl.csv;9;1.00;;;\n" + // line 4: no record at line 9
		"open;gl.csv;two;1.00;;;\n" + // line 5: not a number
		"open;nothere.csv;2;1.00;;;\n" + // line 6: no such file
		"exception;ap.csv;3;41.00;'=not a formula;CD;\n" + // line 7
		"open;;2;;;;\n" // line 8: no file name
	p := returned(t, dir, "back.csv", text)
	got, err := followup.Read(context.Background(), ws, []string{p}, followup.Options{})
	if err != nil {
		t.Fatal(err)
	}
	fr := got[0]
	if fr.RowsRead != 7 || fr.RowsStored != 3 || fr.RowsRefused != 4 || fr.Filled != 2 {
		t.Fatalf("read %d stored %d refused %d filled %d, want 7 3 4 2", fr.RowsRead, fr.RowsStored, fr.RowsRefused, fr.Filled)
	}
	want := []followup.Refusal{
		{Line: 4, Reason: `file "gl.csv" has no loaded record at line 9`},
		{Line: 5, Reason: `the line is not a whole number: "two"`},
		{Line: 6, Reason: `no loaded file is named "nothere.csv"`},
		{Line: 8, Reason: "no file name (the file_name column is blank)"},
	}
	if !reflect.DeepEqual(fr.Refusals, want) {
		t.Errorf("refusals %+v\nwant %+v", fr.Refusals, want)
	}
	if !reflect.DeepEqual(fr.Statuses, []string{"exception", "explained"}) {
		t.Errorf("statuses %v", fr.Statuses)
	}
	st, err := followup.Load(context.Background(), ws.Conn)
	if err != nil {
		t.Fatal(err)
	}
	type rec struct{ file, line, amount, status, note, who string }
	var recs []rec
	for _, r := range st.Records {
		recs = append(recs, rec{r.FileName, itoa(r.Line), r.Amount, r.Status, r.Note, r.Who})
	}
	wantRecs := []rec{
		{"ap.csv", "3", "41.00", "exception", "=not a formula", "CD"},
		{"gl.csv", "2", "100.00", "explained", "agreed to lease", "AB"},
		{"gl.csv", "3", "250.50", "", "", ""},
	}
	if !reflect.DeepEqual(recs, wantRecs) {
		t.Errorf("records %+v\nwant %+v", recs, wantRecs)
	}
	if len(st.Files) != 1 || st.Files[0].Read != 7 || st.Files[0].Stored+st.Files[0].Refused != 7 || len(st.Refused) != 4 {
		t.Errorf("files %+v, refused %v", st.Files, st.Refused)
	}
}

func itoa(n int64) string { return strconv.FormatInt(n, 10) }

// For each record the latest follow-up entered counts: a later file's
// status replaces an earlier one, a later blank row does not erase it. A
// file name shared by two loaded files names no single record.
func TestLatestFollowupCounts(t *testing.T) {
	ws, dir := ledger(t, true)
	ctx := context.Background()
	first := returned(t, dir, "first.csv", "file_name,line,followup_status\ngl.csv,2,open\nap.csv,2,exception\n")
	second := returned(t, dir, "second.csv", "file_name,line,followup_status,followup_note\nap.csv,2,,\nap.csv,3,explained,ok\ngl.csv,3,open,\n")
	res, err := followup.Read(ctx, ws, []string{first, second}, followup.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if res[0].RowsRefused != 1 || !strings.Contains(res[0].Refusals[0].Reason, "name 2 records (several loaded files share the name)") {
		t.Errorf("a shared file name: %+v", res[0])
	}
	if res[1].RowsRefused != 1 || res[1].RowsStored != 2 || res[1].Missing[0] != followup.Reviewer {
		t.Errorf("second file: %+v", res[1])
	}
	st, err := followup.Load(ctx, ws.Conn)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]string{}
	for _, r := range st.Records {
		got[r.FileName+":"+itoa(r.Line)] = r.Status
	}
	want := map[string]string{"ap.csv:2": "exception", "ap.csv:3": "explained"}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("latest follow-up %v, want %v", got, want)
	}
	tables := followup.Tables(st)
	if tables[0].Name != "followup_status" || len(tables[0].Rows) != 2 {
		t.Errorf("status table %+v", tables[0])
	}
}

// A returned workbook sheet: the headings in words are read as the
// columns, line numbers as numbers, and a refused row is named by its
// sheet row.
func TestReadWorkbookSheet(t *testing.T) {
	ws, dir := ledger(t, false)
	f := excelize.NewFile()
	f.NewSheet("extract_bins")
	rows := [][]any{
		{"Item", "Line", "Amount", "File name", "Followup status", "Followup note", "Followup reviewer", "Followup reviewed on"},
		{"first_two bin 25", 3, 250.5, "gl.csv", "explained", "fuel card", "AB", "2026-01-15"},
		{"first_two bin 99", 4, 999.99, "gl.csv", "", "", "", ""},
		{"first_two bin 99", 40, 999.99, "gl.csv", "open", "", "", ""},
	}
	for i, r := range rows {
		cell, _ := excelize.CoordinatesToCellName(1, i+3) // a title above the table
		f.SetSheetRow("extract_bins", cell, &r)
	}
	f.SetCellValue("extract_bins", "A1", "Extract first_two_bins")
	p := filepath.Join(dir, "back.xlsx")
	if err := f.SaveAs(p); err != nil {
		t.Fatal(err)
	}
	res, err := followup.Read(context.Background(), ws, []string{p}, followup.Options{Sheet: "extract_bins"})
	if err != nil {
		t.Fatal(err)
	}
	fr := res[0]
	if fr.Sheet != "extract_bins" || fr.RowsRead != 3 || fr.RowsStored != 2 || fr.RowsRefused != 1 || fr.Refusals[0].Line != 6 {
		t.Fatalf("%+v", fr)
	}
	st, _ := followup.Load(context.Background(), ws.Conn)
	if st.Records[0].Item != "first_two bin 25" || st.Records[0].Status != "explained" || st.Records[0].Line != 3 {
		t.Errorf("records %+v", st.Records)
	}
}

// A file without the key columns, or without any follow-up column, is an
// error naming the file and what it lacks; nothing is stored.
func TestReadRefusesFilesWithoutKeys(t *testing.T) {
	ws, dir := ledger(t, false)
	ctx := context.Background()
	noLine := returned(t, dir, "noline.csv", "file_name,followup_status\ngl.csv,open\n")
	_, err := followup.Read(ctx, ws, []string{noLine}, followup.Options{})
	if !errors.Is(err, followup.ErrNoKey) || !strings.Contains(err.Error(), "noline.csv") || !strings.Contains(err.Error(), `"line"`) {
		t.Errorf("no line column: %v", err)
	}
	noFollow := returned(t, dir, "plain.csv", "file_name,line,amount\ngl.csv,2,100.00\n")
	if _, err := followup.Read(ctx, ws, []string{noFollow}, followup.Options{}); err == nil || !strings.Contains(err.Error(), "none of the follow-up columns") {
		t.Errorf("no follow-up column: %v", err)
	}
	st, err := followup.Load(ctx, ws.Conn)
	if err != nil || st != nil {
		t.Errorf("state after two refused files: %+v, %v", st, err)
	}
}
