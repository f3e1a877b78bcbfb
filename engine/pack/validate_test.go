package pack

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// lineOf returns the 1-based line of the first line containing marker.
func lineOf(t *testing.T, text, marker string) int {
	t.Helper()
	for i, l := range strings.Split(text, "\n") {
		if strings.Contains(l, marker) {
			return i + 1
		}
	}
	t.Fatalf("no line with %q", marker)
	return 0
}

const brokenPack = `[pack]
name = "broken"
client = "Client A"
period = "2025"

[[source]]
files = ["skerrimoor_ledger_2025.csv"]
[source.columns]
amount = "amount"
entity = "Company"
acount = "account"

[[source]]
files = ["missing/*.csv"]

[filters]
large = "abs(amount) > 1000"

[population]
filter = "lareg"

[battery]
segmnts = ["entity"]

[limt]
values = [1]

[limits]
values = [
  5000,
  "5,000",
]
width = 0.10

[ranges]
per_decade = "twenty"

[duplicates]
tests = ["same_amout"]

[[check]]
name = "does_not_parse"
sql = "SELEC doc_id FROM ledger"

[[check]]
name = "writes"
sql = "DELETE FROM ledger"

[[check]]
name = "reads_a_file"
sql = "SELECT * FROM read_csv('/etc/passwd')"
`

// Every problem of a broken pack is reported together, each with the pack
// file, the line and a clear message; nothing runs: no workspace file and
// no output folder appear.
func TestValidationCollectsEveryProblem(t *testing.T) {
	path := packDir(t, brokenPack)
	dir := filepath.Dir(path)
	p := mustRead(t, path)
	_, probs := Check(context.Background(), p)
	cases := []struct {
		marker string // the line the problem is on
		want   string // part of the message
	}{
		{`entity = "Company"`, `no column "Company" in skerrimoor_ledger_2025.csv`},
		{`acount = "account"`, `"acount" is not a canonical column`},
		{`acount = "account"`, `did you mean "account"?`},
		{`files = ["missing/*.csv"]`, `pattern "missing/*.csv" matches no file`},
		{`filter = "lareg"`, `no filter named "lareg" under [filters]; did you mean "large"?`},
		{`segmnts = `, `unknown key "segmnts" in [battery]; did you mean "segments"?`},
		{`[limt]`, `unknown key "limt" at the top level; did you mean "limits"?`},
		{`"5,000",`, `limit "5,000" is not a number (write it without thousands separators`},
		{`per_decade = "twenty"`, `"twenty" is not a number`},
		{`tests = ["same_amout"]`, `unknown test "same_amout"; give any of exact, same_amount, same_doc, spread, rsf; did you mean "same_amount"?`},
		{`tests = ["same_amout"]`, `did you mean "same_amount"?`},
		{`sql = "SELEC doc_id FROM ledger"`, `the SQL does not parse: syntax error at or near "SELEC"`},
		{`sql = "DELETE FROM ledger"`, `refused: only a single read-only SELECT may run here`},
		{`read_csv('/etc/passwd')`, `refused: table function read_csv() is not allowed here`},
	}
	text := brokenPack
	for _, c := range cases {
		if c.want == "" {
			continue
		}
		line := lineOf(t, text, c.marker)
		found := false
		for _, pr := range probs.List {
			if pr.Line == line && strings.Contains(pr.Message, c.want) && pr.File == path {
				found = true
			}
		}
		if !found {
			t.Errorf("no problem at line %d containing %q; problems:\n%s", line, c.want, probs.Error())
		}
	}
	// Each message names the file and line in its text form.
	msg := probs.Error()
	if !strings.Contains(msg, path+":"+itoa(lineOf(t, text, `entity = "Company"`))+": source[1].columns.entity: no column") {
		t.Errorf("text form lacks file:line: key: message:\n%s", msg)
	}
	lines := map[int]bool{}
	for _, c := range cases {
		lines[lineOf(t, text, c.marker)] = true
	}
	if len(probs.Errors()) != len(lines) {
		t.Errorf("%d errors, want every one:\n%s", len(probs.Errors()), msg)
	}
	// Run refuses before any work.
	_, err := Run(context.Background(), p, RunOptions{Out: filepath.Join(dir, "out")})
	if _, ok := err.(*Problems); !ok {
		t.Fatalf("Run: %v, want *Problems", err)
	}
	for _, f := range []string{"out", "pack.duckdb"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err == nil {
			t.Errorf("%s exists after a refused run", f)
		}
	}
}

func itoa(n int) string {
	return strings.TrimSpace(strings.Repeat(" ", 0) + func() string { return fmtInt(n) }())
}

func fmtInt(n int) string {
	if n == 0 {
		return "0"
	}
	s := ""
	for n > 0 {
		s = string(rune('0'+n%10)) + s
		n /= 10
	}
	return s
}

// Single problems, each on its own, with its message.
func TestValidationCases(t *testing.T) {
	base := `[pack]
name = "one"
client = "Client A"
period = "2025"
[[source]]
files = ["skerrimoor_ledger_2025.parquet"]
`
	cases := []struct {
		name, add, marker, want string
	}{
		{"toml syntax", "[limits\nvalues = [1]\n", "[limits", "not valid TOML"},
		{"limit not a number", "[limits]\nvalues = [\"5k\"]\n", "values", `limit "5k" is not a number`},
		{"limit a boolean", "[limits]\nvalues = [true]\n", "values", "true is a TOML boolean, not a number"},
		{"width out of range", "[limits]\nwidth = 1.5\n", "width", "strictly between 0 and 1"},
		{"missing column in a Parquet file", "[source.columns]\ncounterparty = \"vendor\"\n", "counterparty", `no column "vendor" in skerrimoor_ledger_2025.parquet`},
		{"debit without credit", "debit = \"amount\"\n", "debit", "debit and credit go together"},
		{"share of rejects", "max_rejects = \"lots\"\n", "max_rejects", `give a percentage from 0% to 100%`},
		{"unknown time zone", "time_zone = \"Mars/Olympus\"\n", "time_zone", `not a time zone name`},
		{"both decimal marks", "decimal_comma = true\ndecimal_point = true\n", "decimal_point", "contradict each other"},
		{"unknown key in a check", "[[check]]\nname = \"x\"\nsqll = \"SELECT 1\"\n", "sqll", `unknown key "sqll" in [[check]]; did you mean "sql"?`},
		{"check without SQL", "[[check]]\nname = \"x\"\n", "[[check]]", "no SQL"},
		{"filter with a missing column", "[filters]\nbig = \"vendor = 'x'\"\n", "big =", `vendor`},
		{"unknown filter", "[filters]\nbig = \"amount > 1000\"\n[limits]\nfilter = \"bgi\"\n", "filter =", `no filter named "bgi" under [filters]; did you mean "big"?`},
		{"misspelt parameter", "[[check]]\nname = \"x\"\nsql = \"SELECT doc_id FROM ledger WHERE amount > $min_amount ORDER BY 1\"\n[check.params]\nmin_amuont = 1000\n", "sql =", `the SQL uses $min_amount but [check.params] gives no min_amount; did you mean "min_amuont"?`},
		{"unused parameter", "[[check]]\nname = \"x\"\nsql = \"SELECT doc_id FROM ledger WHERE amount > $a ORDER BY 1\"\n[check.params]\na = 1\nb = 2\n", "b = 2", "parameter b is not used by the SQL"},
		{"positional parameter", "[[check]]\nname = \"x\"\nsql = \"SELECT doc_id FROM ledger WHERE amount > ? ORDER BY 1\"\n", "sql =", "positional parameters"},
		{"unbound parameter", "[[check]]\nname = \"x\"\nsql = \"\"\"\nSELECT doc_id\nFROM ledger\nWHERE amount > $missing_param\nORDER BY doc_id\n\"\"\"\n[check.params]\nother = 1\n", "sql =", "missing_param"},
		{"format of a missing column", "[[check]]\nname = \"x\"\nsql = \"SELECT doc_id FROM ledger ORDER BY 1\"\nformats = { total = \"money\" }\n", "formats", `has no column "total"`},
		{"unknown format", "[[check]]\nname = \"x\"\nsql = \"SELECT doc_id FROM ledger ORDER BY 1\"\nformats = { doc_id = \"currency\" }\n", "formats", `unknown column format "currency"`},
		{"parameter of an odd type", "[[check]]\nname = \"x\"\nsql = \"SELECT doc_id FROM ledger WHERE amount > $a ORDER BY 1\"\n[check.params]\na = [1, 2]\n", "a = [1, 2]", "a array cannot be bound"},
		{"check SQL with a missing column", "[[check]]\nname = \"x\"\nsql = \"SELECT vendor FROM ledger ORDER BY 1\"\n", "sql =", `Referenced column "vendor" not found`},
		{"two statements", "[[check]]\nname = \"x\"\nsql = \"SELECT 1; SELECT 2\"\n", "sql =", "exactly one SELECT"},
		{"attach", "[[check]]\nname = \"x\"\nsql = \"ATTACH 'other.duckdb'\"\n", "sql =", "refused"},
		{"bad check name", "[[check]]\nname = \"weekend postings\"\nsql = \"SELECT 1 ORDER BY 1\"\n", "name = \"weekend", "check name"},
		{"unknown battery test", "[battery]\ntests = [\"first_to\"]\n", "tests", `did you mean "first_two"?`},
		{"segment column missing", "[battery]\nsegments = [\"vendor\"]\n", "segments", `no column "vendor"`},
		{"extract from a step not run", "[[extract]]\nname = \"e\"\nfrom = \"limits\"\n", "from =", "the pack does not run [limits]"},
		{"extract group_by missing", "[limits]\n[[extract]]\nname = \"e\"\nfrom = \"limits\"\ngroup_by = \"vendor\"\n", "group_by", `no column "vendor"`},
		{"extract of a digit test not run", "[battery]\ntests = [\"first\"]\n[[extract]]\nname = \"e\"\nfrom = \"battery\"\ntest = \"first_two\"\n", "test = \"first_two\"", "not among [battery] tests"},
		{"extract of the second-order test", "[battery]\n[[extract]]\nname = \"e\"\nfrom = \"battery\"\ntest = \"second_order\"\n", "test = \"second_order\"", "not records"},
		{"signs", "[population]\nsigns = \"positives\"\n", "signs", `signs "positives": give positive, negative or both`},
		{"negative minimum", "[population]\nmin_amount = -5\n", "min_amount", "the minimum is on absolute amounts"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			text := base + c.add
			path := packDir(t, text)
			p, err := Read(path)
			var probs *Problems
			if err != nil {
				var ok bool
				probs, ok = err.(*Problems)
				if !ok {
					t.Fatal(err)
				}
			} else {
				_, probs = Check(context.Background(), p)
			}
			line := lineOf(t, text, c.marker)
			if c.name == "toml syntax" {
				line = 0 // the parser names the line it stopped at; check the message only
			}
			for _, pr := range probs.Errors() {
				if strings.Contains(pr.Message, c.want) && (line == 0 || pr.Line == line) && pr.Line > 0 {
					return
				}
			}
			t.Errorf("want a problem at line %d with %q; got:\n%s", line, c.want, probs.Error())
		})
	}
}

// The base pack of TestValidationCases is valid: the cases above fail for
// their own reason only.
func TestValidationBaseIsValid(t *testing.T) {
	path := packDir(t, `[pack]
name = "one"
client = "Client A"
period = "2025"
[[source]]
files = ["skerrimoor_ledger_2025.parquet"]
[[check]]
name = "unordered"
sql = "SELECT user_id, count(*) AS n FROM ledger GROUP BY user_id"
`)
	pl, probs := Check(context.Background(), mustRead(t, path))
	if len(probs.Errors()) > 0 {
		t.Fatal(probs.Error())
	}
	if len(probs.Warnings()) != 1 || !strings.Contains(probs.Warnings()[0].Message, "no ORDER BY") {
		t.Errorf("want one warning about ORDER BY: %+v", probs.List)
	}
	if pl.Workspace != filepath.Join(filepath.Dir(path), "pack.duckdb") || pl.AmountType != "DECIMAL(18,2)" {
		t.Errorf("plan: workspace %s, amount type %s", pl.Workspace, pl.AmountType)
	}
	if got := pl.Sources[0].Files; len(got) != 1 || got[0] != filepath.Join(filepath.Dir(path), genParquet) {
		t.Errorf("files %v", got)
	}
}

// Every key of the example pack is known, and the example is valid as
// shipped.
func TestExamplePackIsValid(t *testing.T) {
	path := packDir(t, examplePack(true))
	pl, probs := Check(context.Background(), mustRead(t, path))
	if len(probs.List) > 0 {
		t.Fatal(probs.Error())
	}
	if pl.Battery == nil || pl.Limits == nil || pl.Ranges == nil || pl.Duplicates == nil || len(pl.Checks) != 3 || len(pl.Extracts) != 3 {
		t.Errorf("plan: %+v", pl)
	}
}
