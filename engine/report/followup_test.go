package report

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/followup"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/workspace"
)

// The report of a workspace holding follow-up read back shows the records
// by status, the items and each record's follow-up, and still fits the
// page at 1024 and 1400 px and in A4 print with long notes.
func TestReportShowsFollowup(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	gl := filepath.Join(dir, "gl.csv")
	os.WriteFile(gl, []byte("entity,amount,counterparty\nE1,100.00,Alder Ltd\nE1,4999.00,Birch plc\nE2,4998.50,Cedar GmbH\n"), 0o644)
	ws, err := workspace.Open(ctx, filepath.Join(dir, "ws.duckdb"), workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()
	if _, err := load.Load(ctx, ws, []string{gl}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	long := strings.Repeat("the approval sits with the regional director and was given by e-mail after the posting ", 4)
	back := filepath.Join(dir, "back.csv")
	os.WriteFile(back, []byte("item,file_name,line,amount,followup_status,followup_note,followup_reviewer,followup_reviewed_on\n"+
		"\"limit 5000.00, entity=E1, 4500:5000\",gl.csv,3,4999.00,explained,\""+long+"\",AB,2026-01-15\n"+
		"\"limit 5000.00, entity=E1, 4500:5000\",gl.csv,4,4998.50,,,,\n"+
		"\"limit 5000.00, entity=E1, 4500:5000\",gl.csv,40,1.00,open,,,\n"), 0o644)
	if _, err := followup.Read(ctx, ws, []string{back}, followup.Options{}); err != nil {
		t.Fatal(err)
	}
	m, err := FromWorkspace(ctx, ws, Options{Now: time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, m); err != nil {
		t.Fatal(err)
	}
	sec := buf.String()
	i := strings.Index(sec, `id="followup"`)
	if i < 0 {
		t.Fatal("no follow-up section")
	}
	sec = sec[i:]
	sec = sec[:strings.Index(sec, "</section>")]
	plain := strings.Join(strings.Fields(regexp.MustCompile(`<[^>]+>`).ReplaceAllString(sec, " ")), " ")
	for _, s := range []string{"2 record(s) returned with follow-up columns: (not entered) 1, explained 1.",
		"limit 5000.00, entity=E1, 4500:5000 2 1 (not entered) 1, explained 1", "regional director", "no loaded record at line 40"} {
		if !strings.Contains(plain, s) {
			t.Errorf("the follow-up section lacks %q:\n%s", s, plain)
		}
	}
	b := browserOrSkip(t)
	path := filepath.Join(dir, "report.html")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	checkFits(t, b, path)
}
