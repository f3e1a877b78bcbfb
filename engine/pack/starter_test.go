package pack

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load"
)

// A starter pack from the generated ledger: the suggested mapping, every
// option present, and valid as written.
func TestStarterFromGeneratedLedger(t *testing.T) {
	src := generated(t)
	dir := t.TempDir()
	packPath := filepath.Join(dir, "client.toml")
	text, err := Starter(context.Background(), filepath.Join(src, genCSV), packPath, StarterOptions{Client: "Skerrimoor Kelp Group", Period: "1 January to 31 December 2025"})
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(packPath, text, 0o644)
	p := mustRead(t, packPath)
	pl, probs := Check(context.Background(), p)
	if len(probs.List) > 0 {
		t.Fatalf("starter pack:\n%s\n%s", probs.Error(), text)
	}
	for _, c := range load.Canonical {
		if c == "currency" {
			continue // the generated ledger is in one currency, with no currency column
		}
		if p.Sources[0].Columns[c] != c {
			t.Errorf("mapping of %s: %q", c, p.Sources[0].Columns[c])
		}
	}
	if pl.Battery == nil || pl.Limits == nil || pl.Ranges == nil || pl.Duplicates == nil || len(pl.Checks) != 2 || len(pl.Extracts) != 2 {
		t.Errorf("starter plan lacks a step: %+v", pl)
	}
	// Every key a pack knows appears in the starter, set or commented.
	for _, path := range [][]string{{"pack"}, {"source"}, {"population"}, {"battery"}, {"limits"}, {"ranges"}, {"duplicates"}, {"extract"}, {"check"}} {
		keys, _ := keysAt(path)
		for _, k := range keys {
			if !strings.Contains(string(text), k+" =") && !strings.Contains(string(text), "["+path[0]+"."+k+"]") {
				t.Errorf("starter lacks [%s] %s", path[0], k)
			}
		}
	}
}

// A starter from a semicolon-delimited file with a decimal comma, day-first
// dates and non-English column names.
func TestStarterFromAnotherShape(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "buchungen.csv")
	var b strings.Builder
	b.WriteString("Buchungsdatum;Betrag;Konto;Firma;Belegnummer\n")
	for i := 0; i < 40; i++ {
		b.WriteString(strings.Join([]string{"2" + string(rune('0'+i%8)) + "/03/2025", "1.234,5" + string(rune('0'+i%10)), "4000", "A1", "B" + string(rune('0'+i%10))}, ";") + "\n")
	}
	os.WriteFile(csv, []byte(b.String()), 0o644)
	packPath := filepath.Join(dir, "buchungen.toml")
	text, err := Starter(context.Background(), csv, packPath, StarterOptions{})
	if err != nil {
		t.Fatal(err)
	}
	s := string(text)
	for _, want := range []string{`delimiter = ";"`, `decimal_comma = true`, `date_format = "%d/%m/%Y"`, `amount = "Betrag"`, `posted = "Buchungsdatum"`,
		`entity = "Firma"`, `account = "Konto"`, `files = ["buchungen.csv"]`, `# counterparty = ""`, `doc_id = "Belegnummer"`} {
		if !strings.Contains(s, want) {
			t.Errorf("starter lacks %s:\n%s", want, s)
		}
	}
	os.WriteFile(packPath, text, 0o644)
	_, probs := Check(context.Background(), mustRead(t, packPath))
	if len(probs.Errors()) > 0 {
		t.Fatalf("%s\n%s", probs.Error(), s)
	}
	// It runs: the amounts parse with the decimal comma, the dates day first.
	res, err := Run(context.Background(), mustRead(t, packPath), RunOptions{Out: filepath.Join(dir, "out")})
	if err != nil {
		t.Fatal(err)
	}
	c := res.Run.Summary.Completeness
	if c.RowsLoaded != 40 || c.RowsRejected != 0 || c.SumPositive != "49381.80" {
		t.Errorf("completeness %+v", c)
	}
}

// A starter from a Windows-1252 export with German headers, Soll and Haben
// columns, day-first dates with points and a euro sign in the text: the
// pack names the encoding, the date format and the debit and credit
// columns, and runs with nothing rejected. The totals are worked out from
// the values written (cents).
func TestStarterWindows1252DebitCredit(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "journal.csv")
	var b strings.Builder
	b.WriteString("Buchungsdatum;Belegnummer;Sachkonto;Buchungstext;Soll;Haben\r\n")
	var debit, credit int64
	for i := 0; i < 30; i++ {
		cents := int64(100000 + i*1234)
		soll, haben := "", ""
		if i%3 == 0 {
			haben = fmt.Sprintf("%d,%02d", cents/100, cents%100)
			credit += cents
		} else {
			soll = fmt.Sprintf("%d,%02d", cents/100, cents%100)
			debit += cents
		}
		fmt.Fprintf(&b, "%02d.%02d.2025;B%d;4000;Gr\xfc\xdfe \x80 %d;%s;%s\r\n", i%28+1, i%12+1, i, i, soll, haben)
	}
	os.WriteFile(csv, []byte(b.String()), 0o644)
	packPath := filepath.Join(dir, "journal.toml")
	text, err := Starter(context.Background(), csv, packPath, StarterOptions{})
	if err != nil {
		t.Fatal(err)
	}
	s := string(text)
	for _, want := range []string{`encoding = "windows-1252"`, `date_format = "%d.%m.%Y"`, `decimal_comma = true`, `debit = "Soll"`, `credit = "Haben"`, `descr = "Buchungstext"`} {
		if !strings.Contains(s, want) {
			t.Errorf("starter lacks %s:\n%s", want, s)
		}
	}
	os.WriteFile(packPath, text, 0o644)
	res, err := Run(context.Background(), mustRead(t, packPath), RunOptions{Out: filepath.Join(dir, "out")})
	if err != nil {
		t.Fatal(err)
	}
	c := res.Run.Summary.Completeness
	net := debit - credit
	if c.RowsLoaded != 30 || c.RowsRejected != 0 || c.Net != fmt.Sprintf("%d.%02d", net/100, net%100) {
		t.Errorf("completeness %+v; want 30 rows, net %d cents", c, net)
	}
}
