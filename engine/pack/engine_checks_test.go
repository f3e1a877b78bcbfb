package pack

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/field"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/sample"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/workspace"
)

// packProblems checks the base pack, with head added to its [pack] table
// and add appended, and returns its text and problems.
func packProblems(t *testing.T, head, add string) (string, *Problems) {
	t.Helper()
	return packProblemsWith(t, head, add, nil)
}

// packProblemsWith is packProblems with files (name -> content) written
// beside the pack first.
func packProblemsWith(t *testing.T, head, add string, files map[string]string) (string, *Problems) {
	t.Helper()
	text := `[pack]
name = "one"
client = "Client A"
period = "2025"
` + head + `[[source]]
files = ["skerrimoor_ledger_2025.parquet"]
` + add
	path := packDir(t, text)
	for name, content := range files {
		if err := os.WriteFile(filepath.Join(filepath.Dir(path), name), []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	p, err := Read(path)
	if err != nil {
		t.Fatal(err)
	}
	_, probs := Check(context.Background(), p)
	return text, probs
}

// TestPackRefusesAsTheEngine: a value the engine refuses is refused by the
// pack checker for the same reason, because the checker asks the engine's
// own function; the problem names the pack's key and line.
func TestPackRefusesAsTheEngine(t *testing.T) {
	ctx := context.Background()
	mem, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer mem.Close()
	if _, err := mem.Conn.ExecContext(ctx, "CREATE TABLE ledger (amount DECIMAL(18,2), entity VARCHAR)"); err != nil {
		t.Fatal(err)
	}
	engine := func(f func() error) error { return f() }
	cases := []struct {
		name, head, add, marker string
		err                     error // the engine's refusal of the same value
	}{
		{"scale", "scale = 9\n", "", "scale = 9", load.CheckAmountType(9, 18)},
		{"per_decade", "", "[ranges]\nper_decade = -1\n", "per_decade", ranges.Layout{PerDecade: -1}.Check()},
		{"width and per_decade", "", "[ranges]\nwidth = 500\nper_decade = 10\n", "[ranges]", ranges.Layout{Width: 500, PerDecade: 10}.Check()},
		{"limit", "", "[limits]\nvalues = [-5]\n", "values", engine(func() error { _, err := limits.ParseLimit("-5"); return err })},
		{"limit width", "", "[limits]\nwidth = 1.5\n", "width", limits.CheckWidth(1.5)},
		{"last_two", "", "[battery]\nlast_two = \"cents\"\n", "last_two", battery.Options{LastTwo: "cents"}.WithDefaults().Check()},
		{"segment", "", "[battery]\nsegments = [\"amount\"]\n", "segments", engine(func() error { _, err := segment.Resolve(ctx, mem, []string{"amount"}); return err })},
		{"sample", "", "[battery]\n[[extract]]\nname = \"e\"\nfrom = \"battery\"\nsample = \"haphazard\"\n", "sample =", sample.CheckMethod("haphazard")},
		{"date_format", "", "date_format = \"dd.mm.yyyy\"\n", "date_format", load.CheckSettings(ctx, mem, load.Options{DateFormat: "dd.mm.yyyy"})[0]},
		{"time_zone", "", "time_zone = \"Mars/Olympus\"\n", "time_zone", load.CheckSettings(ctx, mem, load.Options{TimeZone: "Mars/Olympus"})[0]},
		{"delimiter", "", "delimiter = \";;\"\n", "delimiter", load.CheckSettings(ctx, mem, load.Options{Delimiter: ";;"})[0]},
		{"debit", "", "debit = \"amount\"\n", "debit", load.CheckDebitCredit(false, "amount", "")},
		{"in_place", "", "[[source]]\nfiles = [\"skerrimoor_ledger_2025.csv\"]\nin_place = true\n", "in_place = true", load.CheckInPlace("skerrimoor_ledger_2025.csv", "csv")},
		{"encoding", "", "encoding = \"ebcdic\"\n", "encoding", engine(func() error { _, err := load.NormalizeEncoding("ebcdic"); return err })},
		{"duplicates floor", "", "[duplicates]\nfloor = -5\n", "floor", (&duplicates.Options{Floor: "-5"}).Check()},
		{"duplicates window", "", "[duplicates]\nwindow_days = -2\n", "window_days", (&duplicates.Options{WindowDays: -2}).Check()},
		{"duplicates min_records", "", "[duplicates]\nmin_records = 1\n", "min_records", (&duplicates.Options{MinRecords: 1}).Check()},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			fe, ok := field.As(c.err)
			if !ok {
				t.Fatalf("the engine's refusal %v is not a *field.Error", c.err)
			}
			// The reason with each field in its own name, as the pack
			// names these.
			reason := (&field.Error{Reason: fe.Reason, Args: fe.Args}).Render(func(f string) string { return f })
			text, probs := packProblems(t, c.head, c.add)
			line := lineOf(t, text, c.marker)
			for _, pr := range probs.Errors() {
				if pr.Line == line && strings.Contains(pr.Message, reason) {
					return
				}
			}
			t.Errorf("want a problem at line %d with the engine's reason %q; got:\n%s", line, reason, probs.Error())
		})
	}
}

// TestPackAndCommandLineReadLimitsAlike: a limit written as text is taken
// by the pack exactly when the limit probe takes it from --limits (one
// grammar of amounts: no exponent, no other base; digits may be grouped
// by _).
func TestPackAndCommandLineReadLimitsAlike(t *testing.T) {
	for _, text := range []string{"1e3", "0x10", "1_000", "2500.50", "+5000", "5,000", "inf"} {
		_, cliErr := limits.ParseLimit(text)
		_, probs := packProblems(t, "", "[limits]\nvalues = [\""+text+"\"]\n")
		var packErr string
		for _, pr := range probs.Errors() {
			if strings.HasPrefix(pr.Key, "limits.values") {
				packErr = pr.Message
			}
		}
		if (cliErr == nil) != (packErr == "") {
			t.Errorf("limit %q: --limits says %v, the pack says %q", text, cliErr, packErr)
		}
	}
}

// TestControlFileProblemsNameKeys: a control file the reconciliation
// refuses is refused by the pack in the pack's own names (decimal_comma,
// [control.columns]), never in the command line's flags.
func TestControlFileProblemsNameKeys(t *testing.T) {
	for _, c := range []struct{ tb, want string }{
		{"entity,net\nA,1.234\nB,5\n", "give decimal_comma or decimal_point"},
		{"entity,net\nA,1.50\nB,\"2,50\"\n", "give decimal_comma or decimal_point"},
		{"entity,Betrag\nA,1.00\n", "map them, e.g. [control.columns] net=Betrag"},
	} {
		_, probs := packProblemsWith(t, "", "[control]\nfile = \"tb.csv\"\n", map[string]string{"tb.csv": c.tb})
		var got []string
		for _, pr := range probs.Errors() {
			if pr.Key == "control.file" {
				got = append(got, pr.Message)
			}
		}
		if len(got) != 1 || !strings.Contains(got[0], c.want) || strings.Contains(got[0], "--") {
			t.Errorf("control file %q: problems %q, want one saying %q and naming no flag", c.tb, got, c.want)
		}
	}
}
