package pack

import (
	"context"
	"math/big"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/fixtures"
)

// TestControlSectionChecked: [control] problems and an unreadable period
// are reported with their lines before anything runs; text that is no
// period is a warning, since the out-of-period check is then not possible.
func TestControlSectionChecked(t *testing.T) {
	text := `[pack]
name = "c"
client = "C"
period = "2025-01-01..2025-13-31"

[[source]]
files = ["skerrimoor_ledger_2025.csv"]

[control]
file = "tb.csv"
accept = false
[control.columns]
entty = "Company"
`
	path := packDir(t, text)
	os.WriteFile(filepath.Join(filepath.Dir(path), "tb.csv"), []byte("Company,net\nFARM,1.00\n"), 0o644)
	p, err := Read(path)
	if err != nil {
		t.Fatal(err)
	}
	_, probs := Check(context.Background(), p)
	want := map[int]string{
		lineOf(t, text, "period ="): "2025-01-01..2025-12-31",
		lineOf(t, text, "entty"):    "not a role of a control file",
	}
	for line, msg := range want {
		found := false
		for _, pr := range probs.Errors() {
			if pr.Line == line && strings.Contains(pr.Message, msg) {
				found = true
			}
		}
		if !found {
			t.Errorf("no error at line %d saying %q; got %v", line, msg, probs.List)
		}
	}
	// A control file that does not read is an error at control.file.
	text2 := strings.Replace(strings.Replace(text, "entty", "entity", 1), `period = "2025-01-01..2025-13-31"`, `period = "FY2025"`, 1)
	path = packDir(t, text2)
	os.WriteFile(filepath.Join(filepath.Dir(path), "tb.csv"), []byte("Company,net\nFARM,12x\n"), 0o644)
	p, _ = Read(path)
	_, probs = Check(context.Background(), p)
	var fileErr, periodWarn bool
	for _, pr := range probs.List {
		if !pr.Warning && pr.Line == lineOf(t, text2, "file = \"tb.csv\"") && strings.Contains(pr.Message, "line 2") && strings.Contains(pr.Message, "not a number") {
			fileErr = true
		}
		if pr.Warning && pr.Line == lineOf(t, text2, "period =") && strings.Contains(pr.Message, "not checked") {
			periodWarn = true
		}
	}
	if !fileErr || !periodWarn {
		t.Errorf("control file error %v, period warning %v: %v", fileErr, periodWarn, probs.List)
	}
}

// TestPackReconcilesTrialBalance: the generator's trial balance ties;
// one cent off in one closing balance fails the run's reconciliation
// unless accept = true, and the reconciliation table, the summary and the
// manifest say so.
func TestPackReconcilesTrialBalance(t *testing.T) {
	sum, err := fixtures.WriteCSV(filepath.Join(t.TempDir(), "x.csv"), genCfg)
	if err != nil {
		t.Fatal(err)
	}
	text := `[pack]
name = "tb"
client = "C"
period = "1 January to 31 December 2025"

[[source]]
files = ["skerrimoor_ledger_2025.csv"]

[control]
file = "tb.csv"
`
	path := packDir(t, text)
	tb := filepath.Join(filepath.Dir(path), "tb.csv")
	if err := fixtures.WriteTrialBalance(tb, genCfg.Seed, sum); err != nil {
		t.Fatal(err)
	}
	p, err := Read(path)
	if err != nil {
		t.Fatal(err)
	}
	res, err := Run(context.Background(), p, RunOptions{Out: filepath.Join(filepath.Dir(path), "out")})
	if err != nil {
		t.Fatal(err)
	}
	rc := res.Run.Summary.Completeness.Reconciliation
	if res.Reconciliation == nil || !res.Reconciliation.Ties || rc == nil || !rc.Ties || res.Run.Manifest.Reconciliation == nil {
		t.Fatalf("the generator's trial balance does not tie: %+v", rc)
	}
	if res.Reconciliation.KeysBoth != len(sum.NetPerAccount) {
		t.Errorf("%d keys compared, the trial balance has %d", res.Reconciliation.KeysBoth, len(sum.NetPerAccount))
	}
	// One closing balance a cent higher: the difference is -0.01 there.
	b, _ := os.ReadFile(tb)
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	f := strings.Split(lines[3], ",")
	f[3] = bumpCent(t, f[3])
	lines[3] = strings.Join(f, ",")
	os.WriteFile(tb, []byte(strings.Join(lines, "\n")+"\n"), 0o644)
	p, _ = Read(path)
	res, err = Run(context.Background(), p, RunOptions{Out: filepath.Join(filepath.Dir(path), "out")})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Reconciliation.Failed() || res.Reconciliation.KeysDiffering != 1 {
		t.Fatalf("a cent off: %s", res.Reconciliation.Verdict)
	}
	for _, l := range res.Reconciliation.DifferingLines() {
		if l.Key[0] != f[0] || l.Key[1] != f[1] || l.Difference != "-0.01" {
			t.Errorf("differing line %+v; want %s/%s at -0.01", l, f[0], f[1])
		}
	}
	var table bool
	for _, tt := range res.Run.Tables {
		if tt.Name == "reconciliation" && strings.HasPrefix(tt.Note, "does not tie") {
			table = true
		}
	}
	if !table {
		t.Error("no reconciliation table with the verdict")
	}
}

// bumpCent adds 0.01 to a decimal text (math/big, exact).
func bumpCent(t *testing.T, s string) string {
	t.Helper()
	r, ok := new(big.Rat).SetString(s)
	if !ok {
		t.Fatalf("%q is not a decimal", s)
	}
	return r.Add(r, big.NewRat(1, 100)).FloatString(2)
}
