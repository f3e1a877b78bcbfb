package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/compare"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/fixtures"
	"github.com/spf13/pflag"
)

func TestCompareFlags(t *testing.T) {
	parse := func(args ...string) (compareOptions, error) {
		fs := pflag.NewFlagSet("compare", pflag.ContinueOnError)
		check := compareFlags(fs)
		if err := fs.Parse(args); err != nil {
			return compareOptions{}, err
		}
		return check(fs.Args())
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{nil, "give one of --runs"},
		{[]string{"--runs", "1,2", "--split", "entity=A,B"}, "give one of --runs"},
		{[]string{"--runs", "1"}, "give two run ids"},
		{[]string{"--runs", "1,x"}, `"x" is not a run id`},
		{[]string{"--runs", "1,2", "--signs", "both"}, "--signs with --runs"},
		{[]string{"--runs", "1,2", "--by", "entity"}, "--by with --runs"},
		{[]string{"--split", "entity=A,B", "--by", "month", "--min-segment", "0"}, "--min-segment 0"},
		{[]string{"--left", "entity = 'A'"}, "--left and --right go together"},
		{[]string{"--left", "a", "--right", "b", "--where", "c"}, "--where with --left and --right"},
		{[]string{"--split", "entity"}, "give COLUMN=LEFT,RIGHT"},
		{[]string{"--split", "entity=A,A"}, "the two values are the same"},
		{[]string{"--split", "entity=A,B", "--min-excess", "-1"}, "--min-excess"},
		{[]string{"--split", "entity=A,B", "--simulations", "5"}, "--simulations 5"},
		{[]string{"--split", "entity=A,B", "--format", "xml"}, "xml"},
		{[]string{"--split", "entity=A,B", "--tests", "summation"}, "--tests summation: compare takes the count-based digit tests"},
		{[]string{"--split", "entity=A,B", "--tests", "firsttwo"}, `unknown test "firsttwo"`},
	} {
		_, err := parse(c.args...)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%v: error %v, want one containing %q", c.args, err, c.want)
		}
	}
	o, err := parse("--split", "entity=KELP,TIDE", "--signs", "both")
	if err != nil || o.mode() != compare.ModeSplit || o.split != "entity" || o.values != [2]string{"KELP", "TIDE"} || o.spec.Signs != "both" {
		t.Fatalf("--split: %+v %v", o, err)
	}
	if o, err = parse("--split", "entity=A,B", "--tests", "f2,last_two"); err != nil || len(o.compare.Only) != 2 || o.compare.Only[0] != benford.FirstTwo || o.compare.Only[1] != benford.LastTwo {
		t.Fatalf("--tests f2,last_two: %+v %v", o.compare.Only, err)
	}
	if o, err = parse("--runs", "3,9"); err != nil || o.mode() != compare.ModeRuns || o.runs[0] != 3 || o.runs[1] != 9 {
		t.Fatalf("--runs: %+v %v", o, err)
	}
}

// compareDoc is the part of compare's JSON the tests read.
type compareDoc struct {
	RunID int64  `json:"run_id"`
	Mode  string `json:"mode"`
	Left  struct {
		Label  string `json:"label"`
		Tested int64  `json:"tested"`
	} `json:"left"`
	Right struct {
		Label  string `json:"label"`
		Tested int64  `json:"tested"`
	} `json:"right"`
	Tests []struct {
		Test        string `json:"test"`
		LeftN       int64  `json:"left_n"`
		RightN      int64  `json:"right_n"`
		Homogeneity struct {
			Chi2 float64 `json:"chi2"`
			DF   int     `json:"df"`
			P    float64 `json:"p"`
		} `json:"homogeneity"`
		Flagged int `json:"flagged"`
		Bins    []struct {
			Bin     int     `json:"bin"`
			Diff    float64 `json:"diff"`
			Flagged bool    `json:"flagged"`
		} `json:"bins"`
		Left *struct {
			MAD float64 `json:"mad"`
		} `json:"left"`
	} `json:"tests"`
}

// TestCompareCommand loads a ledger of two entities, B with 5% more
// amounts in [4,500, 5,000), and compares them every way: the values of a
// column, two stored runs, two workspaces (the same counts, so the same
// statistics), and two halves of A (no flag).
func TestCompareCommand(t *testing.T) {
	dir := t.TempDir()
	write := func(name string, rows func(b *strings.Builder)) string {
		var b strings.Builder
		b.WriteString("amount,entity,posted\n")
		rows(&b)
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	a := fixtures.LogUniformAmounts(20000, 10, 1e6, 31)
	bAmounts := fixtures.LogUniformAmounts(20000, 10, 1e6, 32)
	for i := range 1000 {
		bAmounts = append(bAmounts, 450000+int64(i*50)%50000+int64(i%7))
	}
	rowsOf := func(entity string, amounts []int64) func(b *strings.Builder) {
		return func(b *strings.Builder) {
			for i, c := range amounts {
				month := 1 + i%12
				fmt.Fprintf(b, "%d.%02d,%s,2025-%02d-15\n", c/100, c%100, entity, month)
			}
		}
	}
	both := write("gl.csv", func(b *strings.Builder) { rowsOf("A", a)(b); rowsOf("B", bAmounts)(b) })
	onlyA := write("a.csv", rowsOf("A", a))
	onlyB := write("b.csv", rowsOf("B", bAmounts))
	cmd := func(args ...string) string {
		t.Helper()
		var out, errs bytes.Buffer
		if code := run(context.Background(), args, &env{stdout: &out, stderr: &errs}); code != 0 {
			t.Fatalf("leadline %s exited %d: %s", strings.Join(args, " "), code, errs.String())
		}
		return out.String()
	}
	db := filepath.Join(dir, "ws.duckdb")
	dbA := filepath.Join(dir, "a.duckdb")
	dbB := filepath.Join(dir, "b.duckdb")
	cmd("load", "--db", db, both)
	cmd("load", "--db", dbA, onlyA)
	cmd("load", "--db", dbB, onlyB)
	parse := func(s string) compareDoc {
		t.Helper()
		var d compareDoc
		if err := json.Unmarshal([]byte(s), &d); err != nil {
			t.Fatalf("%v in %s", err, s)
		}
		return d
	}

	split := parse(cmd("compare", "--db", db, "--split", "entity=A,B", "--format", "json"))
	if split.Mode != compare.ModeSplit || split.Left.Tested != 20000 || split.Right.Tested != 21000 || len(split.Tests) != 5 {
		t.Fatalf("split: mode %s, N %d and %d, %d tests", split.Mode, split.Left.Tested, split.Right.Tested, len(split.Tests))
	}
	ft := split.Tests[2]
	if ft.Test != "first_two" || ft.Homogeneity.P > 1e-6 {
		t.Fatalf("first-two: %+v", ft.Homogeneity)
	}
	for _, b := range ft.Bins {
		want := b.Bin >= 45 && b.Bin <= 49
		if b.Flagged != want || (want && b.Diff <= 0) {
			t.Errorf("first-two bin %d: flagged %v (diff %.4f), want %v", b.Bin, b.Flagged, b.Diff, want)
		}
	}

	// The same two populations from two stored scan runs, and from two
	// workspaces: the same counts, so the same statistic.
	scanA := cmd("scan", "--db", db, "--where", "entity = 'A'", "--format", "json")
	idA := parse(scanA).RunID
	idB := parse(cmd("scan", "--db", db, "--where", "entity = 'B'", "--format", "json")).RunID
	runs := parse(cmd("compare", "--db", db, "--runs", fmt.Sprintf("%d,%d", idA, idB), "--format", "json"))
	ws := parse(cmd("compare", "--db", dbA, "--against", dbB, "--format", "json"))
	// A pack run holds its battery as results.battery; --runs with
	// --against reads the right run from the other workspace.
	w, err := workspace.Open(context.Background(), db, workspace.Options{MustExist: true})
	if err != nil {
		t.Fatal(err)
	}
	packID, err := w.SaveRun(context.Background(), workspace.Run{Kind: "pack", Started: time.Now(), Params: map[string]any{},
		Result: json.RawMessage(`{"results": {"battery": ` + scanA + `}}`)})
	w.Close()
	if err != nil {
		t.Fatal(err)
	}
	idBOnly := parse(cmd("scan", "--db", dbB, "--format", "json")).RunID
	packs := parse(cmd("compare", "--db", db, "--runs", fmt.Sprintf("%d,%d", packID, idBOnly), "--against", dbB, "--format", "json"))
	if !strings.HasPrefix(packs.Left.Label, fmt.Sprintf("pack run %d (entity = 'A') of ", packID)) {
		t.Errorf("pack run side: %q", packs.Left.Label)
	}
	for _, d := range []compareDoc{runs, ws, packs} {
		if len(d.Tests) != 5 {
			t.Fatalf("%s: %d tests", d.Mode, len(d.Tests))
		}
		for i, tr := range d.Tests {
			if tr.Homogeneity.Chi2 != split.Tests[i].Homogeneity.Chi2 || tr.Flagged != split.Tests[i].Flagged {
				t.Errorf("%s, %s: chi2 %v flagged %d; split gave %v and %d", d.Mode, tr.Test, tr.Homogeneity.Chi2, tr.Flagged, split.Tests[i].Homogeneity.Chi2, split.Tests[i].Flagged)
			}
		}
	}

	// Two halves of a year of A: one population, nothing flagged.
	text := cmd("compare", "--db", db, "--left", "entity = 'A' AND posted < DATE '2025-07-01'", "--right", "entity = 'A' AND posted >= DATE '2025-07-01'")
	for _, want := range []string{"Left  entity = 'A' AND posted < DATE '2025-07-01': 10,002 amounts", "First-two digits test (left N 10,002, right N 9,998)", "Homogeneity: chi-square", "Conformity: left MAD", "Flagged bins: 0 of 90", "Flagged bins: 0 of 900"} {
		if !strings.Contains(text, want) {
			t.Errorf("text output lacks %q:\n%s", want, text)
		}
	}
	if strings.Contains(text, "up\n") || strings.Contains(text, " down\n") {
		t.Errorf("a bin flagged between two halves of one population:\n%s", text)
	}

	// --by month: every month of B holds its share of the injection (83
	// amounts in bins 45 to 49 among about 1,750), so any month flagged is
	// a true change, and some are (the 89-df homogeneity test has modest
	// power on five bins of one month); a side against itself differs
	// nowhere.
	var segDoc struct {
		Segments []struct {
			Test     string `json:"test"`
			Compared int    `json:"compared"`
			Flagged  int    `json:"flagged"`
			Segments []struct {
				Segment string  `json:"segment"`
				P       float64 `json:"p_adjusted"`
				Flagged bool    `json:"flagged"`
			} `json:"segments"`
		} `json:"segments"`
	}
	if err := json.Unmarshal([]byte(cmd("compare", "--db", db, "--split", "entity=A,B", "--by", "month", "--tests", "first_two", "--format", "json")), &segDoc); err != nil {
		t.Fatal(err)
	}
	if len(segDoc.Segments) != 1 || segDoc.Segments[0].Compared != 12 || segDoc.Segments[0].Flagged < 2 {
		t.Errorf("A against B by month: %+v", segDoc.Segments)
	}
	same := cmd("compare", "--db", db, "--left", "entity = 'A'", "--right", "entity = 'A'", "--by", "month", "--tests", "first_two")
	if !strings.Contains(same, "First-two digits test by segment: 12 compared, 0 flagged") {
		t.Errorf("A against itself by month:\n%s", same)
	}

	// Each comparison is stored as a run (--against: in the --db workspace).
	out := cmd("sql", "--db", db, "--format", "csv", "SELECT count(*) AS n FROM runs WHERE kind = 'compare'")
	if strings.TrimSpace(out) != "n\n6" {
		t.Errorf("compare runs stored: %s", out)
	}

	// Bad input names the flag and the fix.
	var errs bytes.Buffer
	if code := run(context.Background(), []string{"compare", "--db", db, "--split", "entity=A,C"}, &env{stdout: &bytes.Buffer{}, stderr: &errs}); code == 0 || !strings.Contains(errs.String(), `no amounts tested where entity is "C" (values with amounts: A, B)`) {
		t.Errorf("missing value: exit %d, %s", code, errs.String())
	}
	errs.Reset()
	if code := run(context.Background(), []string{"compare", "--db", db, "--runs", fmt.Sprintf("%d,%d", idA, split.RunID)}, &env{stdout: &bytes.Buffer{}, stderr: &errs}); code == 0 || !strings.Contains(errs.String(), "is a compare run; give scan or pack runs") {
		t.Errorf("a compare run as a side: exit %d, %s", code, errs.String())
	}
	errs.Reset()
	if code := run(context.Background(), []string{"compare", "--db", dbA, "--against", dbB, "--where", "entity = 'A'"}, &env{stdout: &bytes.Buffer{}, stderr: &errs}); code == 0 || !strings.Contains(errs.String(), "--against: no amounts tested") {
		t.Errorf("an empty side: exit %d, %s", code, errs.String())
	}
	errs.Reset()
	if code := run(context.Background(), []string{"compare", "--db", db, "--left", "entity = 'A'", "--right", "DELETE FROM ledger"}, &env{stdout: &bytes.Buffer{}, stderr: &errs}); code == 0 || !strings.Contains(errs.String(), "--right") {
		t.Errorf("a statement as a filter: exit %d, %s", code, errs.String())
	}
}
