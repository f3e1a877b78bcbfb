package load

import (
	"context"
	"fmt"
	"math/big"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/amount"
)

// The expectations here are computed by the tests from the values they
// write, in exact rational arithmetic (math/big), never taken from a load.

type ratTotals struct {
	rows          int64
	pos, neg, net *big.Rat
	dn, cn        int64
	debit, credit *big.Rat
	both          int64
}

func newTotals() *ratTotals {
	return &ratTotals{pos: new(big.Rat), neg: new(big.Rat), net: new(big.Rat), debit: new(big.Rat), credit: new(big.Rat)}
}

func (r *ratTotals) add(v *big.Rat) {
	r.rows++
	r.net.Add(r.net, v)
	switch v.Sign() {
	case 1:
		r.pos.Add(r.pos, v)
	case -1:
		r.neg.Add(r.neg, v)
	}
}

func rat(t *testing.T, s string) *big.Rat {
	t.Helper()
	v, ok := new(big.Rat).SetString(s)
	if !ok {
		t.Fatalf("%q is not a decimal", s)
	}
	return v
}

// money writes cents as the test's own text: thousands grouped by commas
// when group is set, two decimals, a leading minus.
func money(cents int64, group bool) string {
	neg := cents < 0
	if neg {
		cents = -cents
	}
	whole := fmt.Sprint(cents / 100)
	if group {
		var b strings.Builder
		for i, r := range whole {
			if i > 0 && (len(whole)-i)%3 == 0 {
				b.WriteByte(',')
			}
			b.WriteRune(r)
		}
		whole = b.String()
	}
	s := fmt.Sprintf("%s.%02d", whole, cents%100)
	if neg {
		s = "-" + s
	}
	return s
}

func centsRat(c int64) *big.Rat { return big.NewRat(c, 100) }

func checkCurrencyTotals(t *testing.T, got []CurrencyTotal, want map[string]*ratTotals) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%d currencies in the report, %d written: %+v", len(got), len(want), got)
	}
	for _, c := range got {
		w := want[c.Currency]
		if w == nil {
			t.Fatalf("currency %q in the report was never written", c.Currency)
		}
		if c.Rows != w.rows || rat(t, c.Positive).Cmp(w.pos) != 0 || rat(t, c.Negative).Cmp(w.neg) != 0 || rat(t, c.Net).Cmp(w.net) != 0 {
			t.Errorf("%s: rows %d, +%s %s net %s; written: rows %d, +%s %s net %s", c.Currency, c.Rows, c.Positive, c.Negative, c.Net,
				w.rows, w.pos.FloatString(2), w.neg.FloatString(2), w.net.FloatString(2))
		}
	}
}

// TestCurrencyFromMarkers: a file without a currency column whose every
// amount names its currency, in the shapes exports write (EUR 1,234.50,
// 1,234.50 USD, € 12.00, $12.00, £, CHF), loads with each row's currency
// taken from its marker and control totals per currency, never summed.
func TestCurrencyFromMarkers(t *testing.T) {
	dir := t.TempDir()
	shapes := []struct{ cur, format string }{
		{"EUR", "EUR %s"}, {"USD", "%s USD"}, {"EUR", "€ %s"}, {"USD", "$%s"}, {"GBP", "£%s"}, {"CHF", "CHF %s"}, {"EUR", "%s EUR"},
	}
	rng := rand.New(rand.NewPCG(7, 11))
	want := map[string]*ratTotals{}
	wantCur := map[int64]string{}
	var b strings.Builder
	b.WriteString("entity,amount\n")
	for i := 0; i < 400; i++ {
		s := shapes[i%len(shapes)]
		cents := rng.Int64N(50_000_000) - 5_000_000
		fmt.Fprintf(&b, "E%d,\"%s\"\n", i%3, fmt.Sprintf(s.format, money(cents, i%2 == 0)))
		if want[s.cur] == nil {
			want[s.cur] = newTotals()
		}
		want[s.cur].add(centsRat(cents))
		wantCur[int64(i+2)] = s.cur
	}
	p := writeFile(t, dir, "marked.csv", b.String())
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	ctx := context.Background()
	rep, err := Load(ctx, ws, []string{p}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	fr := rep.Files[0]
	if fr.RowsLoaded != 400 || !fr.Mapping.CurrencyFromMarkers {
		t.Fatalf("loaded %d, currency from markers %v", fr.RowsLoaded, fr.Mapping.CurrencyFromMarkers)
	}
	checkCurrencyTotals(t, fr.Currencies, want)
	if fr.Net != "" || fr.Positive != "" {
		t.Errorf("a total over four currencies was reported: net %q, positive %q", fr.Net, fr.Positive)
	}
	rows, err := ws.Conn.QueryContext(ctx, "SELECT line, currency FROM ledger")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	n := 0
	for rows.Next() {
		var line int64
		var cur string
		if err := rows.Scan(&line, &cur); err != nil {
			t.Fatal(err)
		}
		if wantCur[line] != cur {
			t.Fatalf("line %d: currency %q, written %q", line, cur, wantCur[line])
		}
		n++
	}
	if n != 400 {
		t.Fatalf("%d rows", n)
	}
	// Entity totals are per entity and currency: no entity row sums two.
	ents, err := EntityTotals(ctx, ws)
	if err != nil {
		t.Fatal(err)
	}
	if len(ents) != 3*4 {
		t.Fatalf("%d entity rows, want 3 entities x 4 currencies: %+v", len(ents), ents)
	}
	perCur := map[string]*big.Rat{}
	for _, e := range ents {
		if e.Currency == "" {
			t.Fatalf("entity %s without currency", e.Entity)
		}
		if perCur[e.Currency] == nil {
			perCur[e.Currency] = new(big.Rat)
		}
		perCur[e.Currency].Add(perCur[e.Currency], rat(t, e.Net))
	}
	for c, w := range want {
		if perCur[c].Cmp(w.net) != 0 {
			t.Errorf("%s: entity nets add to %s, written %s", c, perCur[c].FloatString(2), w.net.FloatString(2))
		}
	}
}

// TestMixedCurrencyMarkersRefused: some amounts with a marker and others
// without, and no currency column: the file is refused, naming the file,
// the first line of each kind and both fixes; nothing is loaded. Mapping
// the currency column settles it.
func TestMixedCurrencyMarkersRefused(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "mixed.csv", "amount,cur\n\"EUR 10.00\",EUR\n7.50,EUR\n\"USD 12.00\",USD\n3.00,USD\n")
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	ctx := context.Background()
	_, err := Load(ctx, ws, []string{p}, Options{})
	if err == nil {
		t.Fatal("a file mixing marked and unmarked amounts loaded")
	}
	for _, s := range []string{p, "line 2", `"EUR 10.00"`, "line 3", `"7.50"`, "--map currency=COLUMN", "split the file", "EUR, USD", "nothing was loaded"} {
		if !strings.Contains(err.Error(), s) {
			t.Errorf("message lacks %q: %v", s, err)
		}
	}
	var files int64
	if err := ws.Conn.QueryRowContext(ctx, "SELECT count(*) FROM files").Scan(&files); err != nil || files != 0 {
		t.Fatalf("something was loaded: %d files (%v)", files, err)
	}
	rep, err := Load(ctx, ws, []string{p}, Options{Map: map[string]string{"currency": "cur"}})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]*ratTotals{"EUR": newTotals(), "USD": newTotals()}
	want["EUR"].add(rat(t, "10")) // the marker is stripped from the amount
	want["EUR"].add(rat(t, "7.5"))
	want["USD"].add(rat(t, "12"))
	want["USD"].add(rat(t, "3"))
	checkCurrencyTotals(t, rep.Files[0].Currencies, want)
}

// TestCurrencyColumnTotals: a mapped currency column; the file's totals,
// the stored file_totals and the entity totals are per currency and match
// sums computed from the values written.
func TestCurrencyColumnTotals(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(3, 5))
	curs := []string{"EUR", "USD", "SEK"}
	want := map[string]*ratTotals{}
	byEnt := map[[2]string]*ratTotals{}
	var b strings.Builder
	b.WriteString("Company;Betrag;Währung\n")
	for i := 0; i < 500; i++ {
		c := curs[rng.IntN(len(curs))]
		e := fmt.Sprintf("C%d", rng.IntN(4))
		cents := rng.Int64N(1_000_000_000) - 200_000_000
		// decimal comma, dots grouping thousands, as a German export
		txt := strings.NewReplacer(",", ".", ".", ",").Replace(money(cents, true))
		fmt.Fprintf(&b, "%s;%s;%s\n", e, txt, c)
		if want[c] == nil {
			want[c] = newTotals()
		}
		want[c].add(centsRat(cents))
		k := [2]string{e, c}
		if byEnt[k] == nil {
			byEnt[k] = newTotals()
		}
		byEnt[k].add(centsRat(cents))
	}
	p := writeFile(t, dir, "de.csv", b.String())
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	ctx := context.Background()
	// inspect proposes the column by its German name
	if sug, _ := Suggest([]string{"Company", "Betrag", "Währung"}); sug.Columns["currency"] != "Währung" {
		t.Fatalf("Währung not proposed as the currency: %+v", sug)
	}
	rep, err := Load(ctx, ws, []string{p}, Options{DecimalComma: true, Map: map[string]string{"amount": "Betrag", "entity": "Company", "currency": "Währung"}})
	if err != nil {
		t.Fatal(err)
	}
	fr := rep.Files[0]
	if fr.Mapping.Columns["currency"] != "Währung" {
		t.Fatalf("currency column not recognised: %s", fr.Mapping.Describe())
	}
	checkCurrencyTotals(t, fr.Currencies, want)
	var stored []CurrencyTotal
	rows, err := ws.Conn.QueryContext(ctx, "SELECT currency, rows, positive, negative, net FROM file_totals WHERE file_id = ?", fr.FileID)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var c CurrencyTotal
		if err := rows.Scan(&c.Currency, &c.Rows, &c.Positive, &c.Negative, &c.Net); err != nil {
			t.Fatal(err)
		}
		stored = append(stored, c)
	}
	rows.Close()
	checkCurrencyTotals(t, stored, want)
	ents, err := EntityTotals(ctx, ws)
	if err != nil {
		t.Fatal(err)
	}
	if len(ents) != len(byEnt) {
		t.Fatalf("%d entity/currency rows, %d written", len(ents), len(byEnt))
	}
	for _, e := range ents {
		w := byEnt[[2]string{e.Entity, e.Currency}]
		if w == nil || e.Rows != w.rows || rat(t, e.Net).Cmp(w.net) != 0 || rat(t, e.Positive).Cmp(w.pos) != 0 {
			t.Errorf("%s/%s: %+v", e.Entity, e.Currency, e)
		}
	}
}

// TestDebitCreditTotals: a debit/credit extract in two currencies. Each
// side's own count and total, the rows with both sides filled (counted,
// their first lines listed, all of them stored) and debits - credits =
// net, per currency, against the values written.
func TestDebitCreditTotals(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(9, 1))
	want := map[string]*ratTotals{}
	var bothLines []int64
	var b strings.Builder
	b.WriteString("Doc,Debit,Credit,Currency\n")
	for i := 0; i < 300; i++ {
		cur := "EUR"
		if i%3 == 0 {
			cur = "USD"
		}
		if want[cur] == nil {
			want[cur] = newTotals()
		}
		w := want[cur]
		d, c := rng.Int64N(10_000_000)+1, rng.Int64N(10_000_000)+1
		var dt, ct string
		switch rng.IntN(6) {
		case 0: // both sides filled
			dt, ct = money(d, true), money(c, false)
			w.dn++
			w.cn++
			w.both++
			bothLines = append(bothLines, int64(i+2))
		case 1: // the other side written as zero
			dt, ct, c = money(d, false), "0.00", 0
			w.dn++
		case 2:
			dt, ct, d = "0", money(c, true), 0
			w.cn++
		case 3, 4:
			dt, ct, c = money(d, false), "", 0
			w.dn++
		default:
			dt, ct, d = " ", money(c, false), 0
			w.cn++
		}
		w.debit.Add(w.debit, centsRat(d))
		w.credit.Add(w.credit, centsRat(c))
		w.add(centsRat(d - c))
		fmt.Fprintf(&b, "D%d,\"%s\",\"%s\",%s\n", i, dt, ct, cur)
	}
	p := writeFile(t, dir, "dc.csv", b.String())
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	ctx := context.Background()
	rep, err := Load(ctx, ws, []string{p}, Options{Debit: "Debit", Credit: "Credit"})
	if err != nil {
		t.Fatal(err)
	}
	fr := rep.Files[0]
	checkCurrencyTotals(t, fr.Currencies, want)
	for _, c := range fr.Currencies {
		w := want[c.Currency]
		if c.DebitRows == nil || *c.DebitRows != w.dn || *c.CreditRows != w.cn || *c.BothSides != w.both ||
			rat(t, *c.Debit).Cmp(w.debit) != 0 || rat(t, *c.Credit).Cmp(w.credit) != 0 || c.Ties == nil || !*c.Ties {
			t.Errorf("%s: debit %v rows %v, credit %v rows %v, both %v, ties %v; written debit %s in %d, credit %s in %d, both %d",
				c.Currency, *c.Debit, *c.DebitRows, *c.Credit, *c.CreditRows, *c.BothSides, c.Ties, w.debit.FloatString(2), w.dn, w.credit.FloatString(2), w.cn, w.both)
		}
		// debits - credits = net, from the written values alone
		if new(big.Rat).Sub(w.debit, w.credit).Cmp(w.net) != 0 {
			t.Fatal("the test's own arithmetic does not tie")
		}
	}
	if len(bothLines) <= BothSidesShown {
		t.Fatalf("the test wrote only %d rows with both sides", len(bothLines))
	}
	if fr.BothSides == nil || fr.BothSides.Rows != int64(len(bothLines)) || !reflect.DeepEqual(fr.BothSides.FirstLines, bothLines[:BothSidesShown]) {
		t.Fatalf("both sides: %+v; written %d at lines %v", fr.BothSides, len(bothLines), bothLines[:BothSidesShown])
	}
	var stored []int64
	rows, err := ws.Conn.QueryContext(ctx, "SELECT line FROM both_sides WHERE file_id = ? ORDER BY line", fr.FileID)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var l int64
		rows.Scan(&l)
		stored = append(stored, l)
	}
	rows.Close()
	sort.Slice(bothLines, func(i, j int) bool { return bothLines[i] < bothLines[j] })
	if !reflect.DeepEqual(stored, bothLines) {
		t.Fatalf("both_sides holds %v, written %v", stored, bothLines)
	}
	// --replace takes the file's totals and both-sides rows out with it.
	if _, err := Load(ctx, ws, []string{p}, Options{Debit: "Debit", Credit: "Credit", Replace: true}); err != nil {
		t.Fatal(err)
	}
	var nt, nb int64
	ws.Conn.QueryRowContext(ctx, "SELECT (SELECT count(*) FROM file_totals), (SELECT count(*) FROM both_sides)").Scan(&nt, &nb)
	if nt != 2 || nb != int64(len(bothLines)) {
		t.Fatalf("after --replace: %d file_totals rows, %d both_sides rows", nt, nb)
	}
}

// TestCurrencyMarkerReference holds the Go reference of the marker rule
// against cases worked by hand.
func TestCurrencyMarkerReference(t *testing.T) {
	for _, c := range []struct {
		text, cur string
		ok        bool
	}{
		{"EUR 1.234,50", "EUR", true}, {"1,234.50 USD", "USD", true}, {"€ 12,00", "EUR", true}, {"$12.00", "USD", true},
		{"£7", "GBP", true}, {"CHF 1'234.50", "CHF", true}, {"12.00", "", true}, {"(12.00 GBP)", "GBP", true},
		{"12 CR", "", true}, {"abc", "", false}, {"", "", false}, {"-$5", "USD", true}, {"¥500", "JPY", true},
	} {
		cur, ok := amount.Currency(c.text)
		if cur != c.cur || ok != c.ok {
			t.Errorf("%q: %q %v, want %q %v", c.text, cur, ok, c.cur, c.ok)
		}
	}
}

// TestDebitCreditMarkers: a debit/credit extract without a currency
// column whose filled sides all name their currency, the empty side
// written blank or as an unmarked 0.00: each row takes its filled side's
// currency, and the sides' totals are per currency.
func TestDebitCreditMarkers(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "dcm.csv", "Debit,Credit\n\"EUR 100.00\",0.00\n0.00,\"EUR 40.00\"\n\"USD 7.50\",\n,\"USD 2.25\"\n\"EUR 1,000.00\",\"EUR 1.00\"\n")
	ws := openWS(t, filepath.Join(dir, "w.duckdb"))
	rep, err := Load(context.Background(), ws, []string{p}, Options{Debit: "Debit", Credit: "Credit"})
	if err != nil {
		t.Fatal(err)
	}
	fr := rep.Files[0]
	if !fr.Mapping.CurrencyFromMarkers || len(fr.Currencies) != 2 {
		t.Fatalf("mapping %s, currencies %+v", fr.Mapping.Describe(), fr.Currencies)
	}
	// worked by hand from the rows above
	want := map[string][5]string{"EUR": {"2", "1100", "2", "41", "1"}, "USD": {"1", "7.5", "1", "2.25", "0"}}
	for _, c := range fr.Currencies {
		w := want[c.Currency]
		got := [5]string{fmt.Sprint(*c.DebitRows), rat(t, *c.Debit).RatString(), fmt.Sprint(*c.CreditRows), rat(t, *c.Credit).RatString(), fmt.Sprint(*c.BothSides)}
		w[1], w[3] = rat(t, w[1]).RatString(), rat(t, w[3]).RatString()
		if got != w || !*c.Ties {
			t.Errorf("%s: %v, want %v (ties %v)", c.Currency, got, w, *c.Ties)
		}
	}
	if fr.BothSides == nil || !reflect.DeepEqual(fr.BothSides.FirstLines, []int64{6}) {
		t.Errorf("both sides: %+v", fr.BothSides)
	}
}

// TestInspectNamesCurrencyMarkers: inspect warns before the load refuses a
// file whose amounts name a currency only in part, and says where the
// currency comes from when every amount names one.
func TestInspectNamesCurrencyMarkers(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	for _, c := range []struct{ name, body, want string }{
		{"mixed.csv", "entity,amount\nA,EUR 12.00\nB,13.00\nC,USD 5.00\n", "CHECK the currency: of the sampled amounts 2 name a currency (EUR, USD) and 1 none"},
		{"marked.csv", "entity,amount\nA,EUR 12.00\nB,$13.00\n", "every sampled amount names its currency (EUR, USD)"},
		{"plain.csv", "entity,amount\nA,12.00\nB,13.00\n", ""},
	} {
		p := writeFile(t, dir, c.name, c.body)
		in, err := Inspect(ctx, openWS(t, ":memory:"), p, Options{}, 5)
		if err != nil {
			t.Fatal(err)
		}
		got := strings.Join(in.Warnings, "\n")
		if c.want == "" && strings.Contains(got, "currency") || c.want != "" && !strings.Contains(got, c.want) {
			t.Errorf("%s: warnings %q; want %q", c.name, got, c.want)
		}
	}
}
