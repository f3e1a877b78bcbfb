package reconcile_test

import (
	"context"
	"fmt"
	"math/big"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/reconcile"
	"github.com/leadline/leadline/engine/workspace"
)

// ledger is a small ledger written by the test byte by byte, with its
// totals per (entity, account) computed as it is written, in math/big:
// the expectation does not come from leadline.
type ledger struct {
	text   string
	totals map[[2]string]*keyTotals
	keys   [][2]string // sorted
}

type keyTotals struct {
	rows               int64
	debit, credit, net *big.Rat
}

func cents(c int64) *big.Rat { return new(big.Rat).SetFrac64(c, 100) }

// text writes cents as plain decimal text with two places (-1234 -> -12.34).
func text(c int64) string {
	sign := ""
	if c < 0 {
		sign, c = "-", -c
	}
	return fmt.Sprintf("%s%d.%02d", sign, c/100, c%100)
}

func newLedger() *ledger {
	l := &ledger{totals: map[[2]string]*keyTotals{}}
	var b strings.Builder
	b.WriteString("entity,account,doc_id,line_id,posted,amount\n")
	x := uint64(7)
	next := func() int64 { // a plain LCG: amounts of the test's own
		x = x*6364136223846793005 + 1442695040888963407
		return int64(x>>33) % 5_000_000
	}
	entities := []string{"NORD", "SUED"}
	accounts := []string{"1000", "2000", "4000"}
	for d := 1; d <= 60; d++ {
		e := entities[d%2]
		a := next() + 1
		debitAcct, creditAcct := accounts[d%3], accounts[(d+1)%3]
		for i, line := range []struct {
			acct string
			c    int64
		}{{debitAcct, a}, {creditAcct, -a}} {
			fmt.Fprintf(&b, "%s,%s,D%03d,%d,2025-%02d-%02d,%s\n", e, line.acct, d, i+1, 1+d%12, 1+d%28, text(line.c))
			k := [2]string{e, line.acct}
			t := l.totals[k]
			if t == nil {
				t = &keyTotals{debit: new(big.Rat), credit: new(big.Rat), net: new(big.Rat)}
				l.totals[k] = t
			}
			t.rows++
			v := cents(line.c)
			t.net.Add(t.net, v)
			if line.c > 0 {
				t.debit.Add(t.debit, v)
			} else {
				t.credit.Sub(t.credit, v)
			}
		}
	}
	l.text = b.String()
	for k := range l.totals {
		l.keys = append(l.keys, k)
	}
	sort.Slice(l.keys, func(i, j int) bool { return l.keys[i][0]+l.keys[i][1] < l.keys[j][0]+l.keys[j][1] })
	return l
}

func loadLedger(t *testing.T, l *ledger) (*workspace.Workspace, string) {
	t.Helper()
	dir := t.TempDir()
	gl := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(gl, []byte(l.text), 0o644); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	ws, err := workspace.Open(ctx, filepath.Join(dir, "w.duckdb"), workspace.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ws.Close() })
	if _, err := load.Load(ctx, ws, []string{gl}, load.Options{}); err != nil {
		t.Fatal(err)
	}
	return ws, dir
}

func write(t *testing.T, dir, name, body string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func ratText(r *big.Rat) string { return r.FloatString(2) }

// totalsFile writes the control file of expected totals per key from the
// test's own sums; adjust may change a key's net before it is written.
func totalsFile(l *ledger, skip [2]string, extra string, adjust map[[2]string]*big.Rat) string {
	var b strings.Builder
	b.WriteString("entity,account,rows,debit,credit,net\n")
	for _, k := range l.keys {
		if k == skip {
			continue
		}
		t := l.totals[k]
		net := new(big.Rat).Set(t.net)
		if d, ok := adjust[k]; ok {
			net.Add(net, d)
		}
		fmt.Fprintf(&b, "%s,%s,%d,%s,%s,%s\n", k[0], k[1], t.rows, ratText(t.debit), ratText(t.credit), ratText(net))
	}
	b.WriteString(extra)
	return b.String()
}

func run(t *testing.T, ws *workspace.Workspace, path string, accept bool) *reconcile.Result {
	t.Helper()
	res, err := reconcile.Run(context.Background(), ws, path, reconcile.Options{}, accept)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

func TestTotalsTie(t *testing.T) {
	l := newLedger()
	ws, dir := loadLedger(t, l)
	res := run(t, ws, write(t, dir, "totals.csv", totalsFile(l, [2]string{}, "", nil)), false)
	if !res.Ties || res.Failed() || !strings.HasPrefix(res.Verdict, "ties") {
		t.Fatalf("verdict %q", res.Verdict)
	}
	if res.KeysBoth != len(l.keys) || res.KeysControl != len(l.keys) || res.KeysLedger != len(l.keys) {
		t.Errorf("keys: %d both, %d control, %d ledger; the test wrote %d", res.KeysBoth, res.KeysControl, res.KeysLedger, len(l.keys))
	}
	if len(res.Lines) != 4*len(l.keys) {
		t.Errorf("%d lines, want %d (4 measures per key)", len(res.Lines), 4*len(l.keys))
	}
}

func TestOneCentDifference(t *testing.T) {
	l := newLedger()
	ws, dir := loadLedger(t, l)
	k := l.keys[1]
	res := run(t, ws, write(t, dir, "totals.csv", totalsFile(l, [2]string{}, "", map[[2]string]*big.Rat{k: cents(1)})), false)
	if res.Ties || !res.Failed() || res.KeysDiffering != 1 || !strings.HasPrefix(res.Verdict, "does not tie") {
		t.Fatalf("verdict %q, %d differing", res.Verdict, res.KeysDiffering)
	}
	// The difference is loaded - expected = net - (net + 0.01) = -0.01.
	want := new(big.Rat).Sub(l.totals[k].net, new(big.Rat).Add(l.totals[k].net, cents(1)))
	found := false
	for _, line := range res.Lines {
		if line.Key[0] == k[0] && line.Key[1] == k[1] && line.Measure == "net" {
			found = true
			if line.Difference != ratText(want) || line.Status != reconcile.Differs || line.Loaded != ratText(l.totals[k].net) {
				t.Errorf("line %+v; want difference %s", line, ratText(want))
			}
		} else if line.Status != reconcile.Ties {
			t.Errorf("line %+v should tie", line)
		}
	}
	if !found {
		t.Fatal("no net line for the key")
	}
	// Accepted: the verdict says so and nothing fails.
	acc := run(t, ws, write(t, dir, "totals2.csv", totalsFile(l, [2]string{}, "", map[[2]string]*big.Rat{k: cents(1)})), true)
	if acc.Failed() || !strings.HasPrefix(acc.Verdict, "accepted") || acc.Ties {
		t.Errorf("accepted: verdict %q", acc.Verdict)
	}
}

func TestKeysOnOneSide(t *testing.T) {
	l := newLedger()
	ws, dir := loadLedger(t, l)
	skip := l.keys[0]
	res := run(t, ws, write(t, dir, "totals.csv", totalsFile(l, skip, "WEST,9999,3,100.00,0.00,100.00\n", nil)), false)
	if res.OnlyInControl != 1 || res.OnlyInLedger != 1 || res.KeysDiffering != 2 || res.Ties {
		t.Fatalf("only in control %d, only in ledger %d, differing %d; verdict %q", res.OnlyInControl, res.OnlyInLedger, res.KeysDiffering, res.Verdict)
	}
	for _, line := range res.Lines {
		switch {
		case line.Key[0] == "WEST":
			if line.Status != reconcile.OnlyInControl {
				t.Errorf("WEST: %+v", line)
			}
			if line.Measure == "net" && line.Difference != "-100.00" {
				t.Errorf("WEST net difference %s, want -100.00", line.Difference)
			}
			if line.Measure == "rows" && line.Difference != "-3" {
				t.Errorf("WEST rows difference %s, want -3", line.Difference)
			}
		case line.Key[0] == skip[0] && line.Key[1] == skip[1]:
			if line.Status != reconcile.OnlyInLedger || line.Expected != nil {
				t.Errorf("skipped key: %+v", line)
			}
			if line.Measure == "net" && line.Difference != ratText(l.totals[skip].net) {
				t.Errorf("skipped key net difference %s, want %s", line.Difference, ratText(l.totals[skip].net))
			}
		}
	}
	// Stored: the rows table holds every line, and Latest reads it back.
	var n int
	if err := ws.Conn.QueryRowContext(context.Background(), "SELECT count(*) FROM ll_reconciliation_rows WHERE reconciliation_id = ?", res.ID).Scan(&n); err != nil || n != len(res.Lines) {
		t.Errorf("stored rows %d (%v), want %d", n, err, len(res.Lines))
	}
	latest, err := reconcile.Latest(context.Background(), ws)
	if err != nil || latest == nil || latest.ID != res.ID || latest.Verdict != res.Verdict || latest.Control.SHA256 != res.Control.SHA256 {
		t.Errorf("latest: %+v, %v", latest, err)
	}
}

// TestTrialBalance: opening and closing balances per key, amounts written
// with a decimal comma and thousands dots; expected activity = closing -
// opening.
func TestTrialBalance(t *testing.T) {
	l := newLedger()
	ws, dir := loadLedger(t, l)
	comma := func(r *big.Rat) string { // 1234567.8 -> 1.234.567,80
		s := r.FloatString(2)
		sign := ""
		if strings.HasPrefix(s, "-") {
			sign, s = "-", s[1:]
		}
		whole, frac, _ := strings.Cut(s, ".")
		var g []string
		for len(whole) > 3 {
			g = append([]string{whole[len(whole)-3:]}, g...)
			whole = whole[:len(whole)-3]
		}
		g = append([]string{whole}, g...)
		return sign + strings.Join(g, ".") + "," + frac
	}
	tb := func(off [2]string) string {
		var b strings.Builder
		b.WriteString("Entity;Account;Opening balance;Closing balance\n")
		for i, k := range l.keys {
			open := cents(int64(i+1) * 123_456_78)
			if i%2 == 1 {
				open.Neg(open)
			}
			closing := new(big.Rat).Add(open, l.totals[k].net)
			if k == off {
				closing.Add(closing, cents(-1))
			}
			fmt.Fprintf(&b, "%s;%s;%s;%s\n", k[0], k[1], comma(open), comma(closing))
		}
		return b.String()
	}
	res := run(t, ws, write(t, dir, "tb.csv", tb([2]string{})), false)
	if !res.Ties || res.Control.Shape != "trial_balance" || res.Control.DecimalMark != "comma" || strings.Join(res.Measures, ",") != "net" {
		t.Fatalf("verdict %q, shape %s, mark %s, measures %v", res.Verdict, res.Control.Shape, res.Control.DecimalMark, res.Measures)
	}
	off := l.keys[2]
	res = run(t, ws, write(t, dir, "tb2.csv", tb(off)), false)
	if res.Ties || res.KeysDiffering != 1 {
		t.Fatalf("off by a cent: verdict %q", res.Verdict)
	}
	for _, line := range res.Lines {
		if line.Status == reconcile.Differs && (line.Key[1] != off[1] || line.Difference != "0.01") {
			t.Errorf("differing line %+v; want key %v, difference 0.01 (the closing balance is one cent short)", line, off)
		}
	}
}

func TestControlFileErrors(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct{ name, body, want string }{
		{"amb.csv", "entity,net\nA,1.234\nB,5\n", "--control-decimal-comma"},
		{"dup.csv", "entity,net\nA,1.00\nB,2.00\nA,3.00\n", "line 4: the key entity=A appears again (first at line 2)"},
		{"places.csv", "entity,net\nA,1.005\nB,2.50\n", "more decimal places than the ledger's 2"},
		{"bad.csv", "entity,net\nA,12x\n", "line 2: net \"12x\": not a number"},
		{"half.csv", "entity,opening\nA,1.00\n", "no closing column"},
		{"none.csv", "entity,Betrag\nA,1.00\n", "--control-map net=Betrag"},
		{"rows.csv", "entity,rows\nA,1.5\n", "a row count is a whole number"},
		{"x.xlsx", "not a sheet", "x.xlsx"},
		{"x.ods", "not a sheet", "or XLSX (.xlsx)"},
	} {
		p := write(t, dir, c.name, c.body)
		_, err := reconcile.Read(p, reconcile.Options{Scale: 2})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v; want %q", c.name, err, c.want)
		}
	}
	// A mapped column and credits written negative.
	p := write(t, dir, "map.csv", "Company,Credits total\nA,-10.00\nB,-2.50\n")
	c, err := reconcile.Read(p, reconcile.Options{Scale: 2, Map: map[string]string{"entity": "Company", "credit": "Credits total"}})
	if err != nil {
		t.Fatal(err)
	}
	if got := c.Lines[0].Values["credit"].FloatString(2); got != "10.00" || len(c.Notes) == 0 {
		t.Errorf("credit %s, notes %v: negative credits are compared as positive sums", got, c.Notes)
	}
}

// TestPerCurrency: a ledger with a currency column is reconciled per
// currency; a control file without one is refused, since its totals would
// add euros to dollars.
func TestPerCurrency(t *testing.T) {
	l := &ledger{text: "entity,currency,amount\n" +
		"A,EUR,100.00\nA,EUR,-40.00\nA,USD,70.00\nA,USD,-0.50\nB,EUR,5.00\n"}
	ws, dir := loadLedger(t, l)
	// Written from the lines above: A/EUR 60.00, A/USD 69.50, B/EUR 5.00.
	res := run(t, ws, write(t, dir, "cur.csv", "entity,currency,net,rows\nA,EUR,60.00,2\nA,USD,69.50,2\nB,EUR,5.00,1\n"), false)
	if !res.Ties || res.KeysBoth != 3 || strings.Join(res.Keys, ",") != "entity,currency" {
		t.Fatalf("per currency: %s (keys %v)", res.Verdict, res.Keys)
	}
	_, err := reconcile.Run(context.Background(), ws, write(t, dir, "nocur.csv", "entity,net\nA,129.50\nB,5.00\n"), reconcile.Options{}, false)
	if err == nil || !strings.Contains(err.Error(), "2 currencies (EUR, USD)") {
		t.Errorf("no currency column: %v", err)
	}
}
