package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/big"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestTwoCurrencyLedger: load, scan, limits, dups and the report on a file
// in two currencies. The load's totals are per currency and match sums the
// test computes from the values it wrote (math/big); scan pools the
// currencies and says so, and --by currency splits them; limits and dups
// refuse to mix currencies and run on one with --currency; the report
// shows one line per currency.
func TestTwoCurrencyLedger(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "gl.csv")
	rng := rand.New(rand.NewPCG(4, 2))
	want := map[string]*big.Rat{"EUR": new(big.Rat), "USD": new(big.Rat)}
	rows := map[string]int64{}
	var b strings.Builder
	b.WriteString("doc_id,counterparty,amount,currency\n")
	for i := 0; i < 3000; i++ {
		cur := "EUR"
		if i%4 == 0 {
			cur = "USD"
		}
		// log-uniform cents from 10.00 to 100,000.00
		cents := int64(1000 * math.Pow(10, rng.Float64()*4))
		fmt.Fprintf(&b, "D%d,V%d,%d.%02d,%s\n", i, i%37, cents/100, cents%100, cur)
		want[cur].Add(want[cur], big.NewRat(cents, 100))
		rows[cur]++
	}
	if err := os.WriteFile(csv, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	db := filepath.Join(dir, "w.duckdb")
	cmd := func(wantCode int, args ...string) (string, string) {
		t.Helper()
		var out, errOut bytes.Buffer
		if code := run(context.Background(), args, &env{stdout: &out, stderr: &errOut}); code != wantCode {
			t.Fatalf("%v: exit %d (want %d): %s %s", args, code, wantCode, errOut.String(), out.String())
		}
		return out.String(), errOut.String()
	}
	out, _ := cmd(0, "load", "--db", db, "--format", "json", csv)
	var rep struct {
		Files []struct {
			Net        string `json:"net"`
			Currencies []struct {
				Currency string `json:"currency"`
				Rows     int64  `json:"rows"`
				Net      string `json:"net"`
			} `json:"currencies"`
		} `json:"files"`
	}
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	if len(rep.Files) != 1 || rep.Files[0].Net != "" || len(rep.Files[0].Currencies) != 2 {
		t.Fatalf("load JSON: %+v", rep)
	}
	for _, c := range rep.Files[0].Currencies {
		got, ok := new(big.Rat).SetString(c.Net)
		if !ok || want[c.Currency] == nil || got.Cmp(want[c.Currency]) != 0 || c.Rows != rows[c.Currency] {
			t.Errorf("%s: %d rows, net %s; written %d rows, net %s", c.Currency, c.Rows, c.Net, rows[c.Currency], want[c.Currency].FloatString(2))
		}
	}
	text, _ := cmd(0, "scan", "--db", db, "--tests", "first")
	if !strings.Contains(text, "amounts in 2 currencies pooled") || !strings.Contains(text, "--by currency") {
		t.Errorf("scan does not say it pools currencies:\n%s", text)
	}
	text, _ = cmd(0, "scan", "--db", db, "--tests", "first", "--by", "currency")
	if strings.Contains(text, "pooled") || !strings.Contains(text, "EUR") || !strings.Contains(text, "USD") {
		t.Errorf("scan --by currency:\n%s", text)
	}
	_, msg := cmd(1, "limits", "--db", db)
	for _, s := range []string{"2 currencies", fmt.Sprintf("EUR: %d rows", rows["EUR"]), fmt.Sprintf("USD: %d rows", rows["USD"]), "--currency EUR"} {
		if !strings.Contains(msg, s) {
			t.Errorf("limits message lacks %q: %s", s, msg)
		}
	}
	out, _ = cmd(0, "limits", "--db", db, "--currency", "USD", "--format", "json")
	var lim struct {
		Currency string `json:"currency"`
		Counts   struct {
			Tested int64 `json:"tested"`
		} `json:"counts"`
	}
	if err := json.Unmarshal([]byte(out), &lim); err != nil {
		t.Fatal(err)
	}
	if lim.Currency != "USD" || lim.Counts.Tested != rows["USD"] {
		t.Errorf("limits --currency USD: currency %q, %d tested, want %d", lim.Currency, lim.Counts.Tested, rows["USD"])
	}
	cmd(1, "dups", "--db", db)
	cmd(0, "dups", "--db", db, "--currency", "EUR")
	cmd(1, "ranges", "--db", db)
	html := filepath.Join(dir, "r.html")
	cmd(0, "report", "--db", db, "--out", html)
	page, err := os.ReadFile(html)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(page), "Control totals per file and currency") || !strings.Contains(string(page), "several currencies: per currency below, never summed") {
		t.Error("the report's completeness section does not give the totals per currency")
	}
	for c, v := range want {
		if !strings.Contains(string(page), `data-value="`+v.FloatString(2)+`"`) {
			t.Errorf("the report does not show %s net %s", c, v.FloatString(2))
		}
	}
}
