package load

import (
	"bytes"
	"compress/gzip"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestNormalizeEncoding(t *testing.T) {
	for in, want := range map[string]string{
		"": "", "UTF-8": "utf-8", "utf8": "utf-8", "utf-16": "utf-16", "UTF-16LE": "utf-16le", "utf16be": "utf-16be",
		"cp1252": "windows-1252", "Windows-1252": "windows-1252", "latin-1": "iso-8859-1", "ISO-8859-1": "iso-8859-1",
		"latin1": "iso-8859-1", "latin-9": "iso-8859-15", "iso-8859-15": "iso-8859-15",
	} {
		got, err := NormalizeEncoding(in)
		if err != nil || got != want {
			t.Errorf("NormalizeEncoding(%q) = %q, %v; want %q", in, got, err, want)
		}
	}
	_, err := NormalizeEncoding("ebcdic")
	if err == nil {
		t.Fatal("ebcdic accepted")
	}
	for _, name := range []string{"utf-8", "utf-16le", "utf-16be", "windows-1252", "iso-8859-1", "iso-8859-15", "ebcdic"} {
		if !strings.Contains(err.Error(), name) {
			t.Errorf("the refusal does not list %s: %v", name, err)
		}
	}
}

// TestEncodingEvidence feeds byte strings, whole and one byte at a time
// (a UTF-8 character split between reads must stay one character), and
// checks the encoding named and the line of the evidence.
func TestEncodingEvidence(t *testing.T) {
	cases := []struct {
		name, data, enc, why string
	}{
		{"ascii", "a,b\n1,2\n", "utf-8", "ASCII"},
		{"utf-8", "a,b\n1,Caf\u00e9 \u20ac\n", "utf-8", `"é", on line 2`},
		{"cp1252 euro", "a,b\n1,caf\xe9\n2,\x80 5\n", "windows-1252", "0x80 on line 3"},
		{"cp1252 quote", "a,b\n1,it\x92s\n", "windows-1252", `"’"`},
		{"latin-9 euro", "a,b\n1,\xa4 5\n2,caf\xe9\n", "iso-8859-15", "first on line 2"},
		{"latin-1 alike", "a,b\n1,x\n2,Stra\xdfe\n", "windows-1252", "read this file alike"},
		{"undefined in cp1252", "a,b\n1,\x81\xe9\n", "iso-8859-1", "undefined in Windows-1252"},
		{"utf-8, one damaged byte", "a,b\n1,\u00fc\u00e4\n2,\xfc\n3,\u20ac\n", "utf-8", "against 1 bytes that do not (the first, 0xFC, on line 3)"},
	}
	for _, c := range cases {
		for _, piecewise := range []bool{false, true} {
			ev := newEvidence()
			if piecewise {
				for i := 0; i < len(c.data); i++ {
					ev.Write([]byte{c.data[i]})
				}
			} else {
				ev.Write([]byte(c.data))
			}
			ev.finish()
			enc, why := ev.verdict()
			if enc != c.enc || !strings.Contains(why, c.why) {
				t.Errorf("%s (piecewise %v): %s, %q; want %s with %q", c.name, piecewise, enc, why, c.enc, c.why)
			}
		}
	}
}

func TestDetectEncoding(t *testing.T) {
	dir := t.TempDir()
	le := []byte{}
	be := []byte{}
	for _, r := range "a,b\n1,\u00e9\n" {
		le = append(le, byte(r), byte(r>>8))
		be = append(be, byte(r>>8), byte(r))
	}
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	zw.Write([]byte("a,b\n1,\x80\n"))
	zw.Close()
	for name, c := range map[string]struct {
		data []byte
		enc  string
		why  string
	}{
		"bom8.csv":    {append([]byte{0xEF, 0xBB, 0xBF}, "a,b\n"...), "utf-8", "EF BB BF"},
		"bomle.csv":   {append([]byte{0xFF, 0xFE}, le...), "utf-16le", "FF FE"},
		"bombe.csv":   {append([]byte{0xFE, 0xFF}, be...), "utf-16be", "FE FF"},
		"le.csv":      {le, "utf-16le", "odd positions of the first 16 bytes, as ASCII characters have in UTF-16 little-endian"},
		"be.csv":      {be, "utf-16be", "even positions of the first 16 bytes, as ASCII characters have in UTF-16 big-endian"},
		"cp.csv.gz":   {gz.Bytes(), "windows-1252", "0x80"},
		"plain.csv":   {[]byte("a,b\n1,2\n"), "utf-8", "ASCII"},
		"latin9.csv":  {[]byte("a,b\n1,\xa4\n"), "iso-8859-15", "0xA4"},
		"utf8ok.csv":  {[]byte("a,b\n1,\u00fc\n"), "utf-8", "valid UTF-8"},
		"latin1x.csv": {[]byte("a,b\n1,\xfc\n"), "windows-1252", "alike"},
	} {
		p := filepath.Join(dir, name)
		os.WriteFile(p, c.data, 0o644)
		d, err := DetectEncoding(p)
		if err != nil || d.Encoding != c.enc || !strings.Contains(d.Why, c.why) {
			t.Errorf("%s: %+v, %v; want %s with %q", name, d, err, c.enc, c.why)
		}
	}
}

// TestTranscodedLoad loads Windows-1252 (plain and gzip) and UTF-16BE
// files: text exact, the reject on the line it is on in the original, the
// original's SHA-256 recorded, and no temporary copy left behind.
func TestTranscodedLoad(t *testing.T) {
	tmp := t.TempDir()
	t.Setenv("TMPDIR", tmp)
	dir := t.TempDir()
	cp := []byte("entity;amount;descr\r\nE1;1,00;M\xfcller \x80\r\nE2;2,00;ok\r\nE3;zwei;\x84Zitat\x93\r\nE4;4,00;Stra\xdfe\r\n")
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	zw.Write(cp)
	zw.Close()
	var be []byte
	for _, r := range "entity;amount;descr\nE1;1,00;M\u00fcller \u20ac\nE2;2,00;ok\nE3;zwei;\u201eZitat\u201c\nE4;4,00;Stra\u00dfe\n" {
		be = append(be, byte(r>>8), byte(r))
	}
	for _, c := range []struct {
		name string
		data []byte
		enc  string
	}{
		{"cp.csv", cp, "windows-1252"},
		{"cp.csv.gz", gz.Bytes(), "cp1252"},
		{"be.csv", be, "utf-16be"},
	} {
		p := filepath.Join(dir, c.name)
		if err := os.WriteFile(p, c.data, 0o644); err != nil {
			t.Fatal(err)
		}
		_, sum, _ := Hash(p)
		ws := openWS(t, ":memory:")
		rep, err := Load(context.Background(), ws, []string{p}, Options{Encoding: c.enc, DecimalComma: true, MaxRejects: "100%"})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		f := rep.Files[0]
		if f.RowsRead != 4 || f.RowsLoaded != 3 || f.RowsRejected != 1 || f.SHA256 != sum || f.Name != c.name {
			t.Errorf("%s: %+v", c.name, f)
		}
		var descr, rejLine, rejRaw, stored string
		if err := ws.Conn.QueryRowContext(context.Background(), "SELECT string_agg(descr, '|' ORDER BY line) FROM ledger").Scan(&descr); err != nil {
			t.Fatal(err)
		}
		if err := ws.Conn.QueryRowContext(context.Background(), "SELECT CAST(line AS VARCHAR), raw_value FROM rejects").Scan(&rejLine, &rejRaw); err != nil {
			t.Fatal(err)
		}
		if err := ws.Conn.QueryRowContext(context.Background(), "SELECT sha256 || ' ' || name FROM files").Scan(&stored); err != nil {
			t.Fatal(err)
		}
		if descr != "Müller €|ok|Straße" || rejLine != "4" || rejRaw != "zwei" || stored != sum+" "+c.name {
			t.Errorf("%s: descr %q, reject at line %s (%q), files %q", c.name, descr, rejLine, rejRaw, stored)
		}
		left, _ := filepath.Glob(filepath.Join(tmp, "leadline-utf8-*"))
		if len(left) != 0 {
			t.Errorf("%s: temporary copies left behind: %v", c.name, left)
		}
	}
}

// TestOneByteOnDamagedUTF8: a UTF-8 file with one damaged byte under a
// one-byte encoding is refused: its valid characters would change.
func TestOneByteOnDamagedUTF8(t *testing.T) {
	p := filepath.Join(t.TempDir(), "x.csv")
	os.WriteFile(p, []byte("entity,amount,descr\nE1,1.00,M\u00fcller\nE2,2.00,\xfc\nE3,3.00,\u20ac 5\n"), 0o644)
	ws := openWS(t, ":memory:")
	_, err := Load(context.Background(), ws, []string{p}, Options{Encoding: "windows-1252"})
	if err == nil || !strings.Contains(err.Error(), "line 2") || !strings.Contains(err.Error(), "UTF-8 with damaged bytes") {
		t.Fatalf("error %v", err)
	}
}

// TestWrongEncodingLeavesNothing: a refused encoding leaves no temporary
// copy and no rows.
func TestWrongEncodingLeavesNothing(t *testing.T) {
	tmp := t.TempDir()
	t.Setenv("TMPDIR", tmp)
	p := filepath.Join(t.TempDir(), "x.csv")
	os.WriteFile(p, []byte("entity,amount,descr\nE1,1.00,ok\nE2,2.00,\x80 5\n"), 0o644)
	ws := openWS(t, ":memory:")
	_, err := Load(context.Background(), ws, []string{p}, Options{Encoding: "latin-1"})
	if err == nil || !strings.Contains(err.Error(), "line 3") || !strings.Contains(err.Error(), "--encoding windows-1252") || !strings.Contains(err.Error(), "x.csv") {
		t.Fatalf("error %v; want line 3 and --encoding windows-1252", err)
	}
	if left, _ := filepath.Glob(filepath.Join(tmp, "leadline-utf8-*")); len(left) != 0 {
		t.Errorf("temporary copies left behind: %v", left)
	}
	if has, _ := ws.HasLedger(context.Background()); has {
		t.Error("a refused load left a ledger")
	}
}
