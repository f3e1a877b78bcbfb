package output

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"math/big"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	duckdb "github.com/duckdb/duckdb-go/v2"
)

func sampleTable() *Table {
	d := func(s string) Decimal { x, _ := NewDecimal(s); return x }
	rows := [][]any{
		{"Pellin Hull & Deck", int64(12), d("4999.99"), 0.25, time.Date(2025, 3, 14, 0, 0, 0, 0, time.UTC), true},
		{"Søndervik \"Anchors\", Ltd", int64(-3), d("-0.05"), 1.0 / 3, nil, false},
		{nil, int64(0), d("1000000.00"), 1e-12, time.Date(2025, 12, 31, 0, 0, 0, 0, time.UTC), nil},
	}
	return NewTable("Sample Table!", "A sample", "test", []string{"name", "n", "amount", "share", "posted", "flag"}, rows,
		map[string]Kind{"share": Proportion})
}

func TestNewTableKindsAndNames(t *testing.T) {
	tb := sampleTable()
	if tb.Name != "sample_table" {
		t.Errorf("name %q", tb.Name)
	}
	want := []Kind{Text, Count, Money, Proportion, Date, Bool}
	for i, c := range tb.Columns {
		if c.Kind != want[i] {
			t.Errorf("column %s: kind %s, want %s", c.Name, c.Kind, want[i])
		}
	}
	dup := NewTable("x", "", "", []string{"a", "A", "a"}, nil, nil)
	if dup.Columns[1].Name != "A_2" || dup.Columns[2].Name != "a_3" {
		t.Errorf("duplicate names: %+v", dup.Columns)
	}
}

func TestNormalize(t *testing.T) {
	tenth, fifth := 0.1, 0.2
	cases := []struct {
		in   any
		want string
	}{
		{duckdb.Decimal{Width: 18, Scale: 2, Value: big.NewInt(500)}, "5.00"},
		{duckdb.Decimal{Width: 18, Scale: 2, Value: big.NewInt(-5)}, "-0.05"},
		{duckdb.Decimal{Width: 18, Scale: 0, Value: big.NewInt(42)}, "42"},
		{int32(7), "7"},
		{float32(0.5), "0.5"},
		{tenth + fifth, "0.30000000000000004"},
		{[]byte("raw"), "raw"},
		{new(big.Int).Lsh(big.NewInt(1), 70), "1180591620717411303424"},
		{time.Date(2025, 1, 2, 3, 4, 5, 0, time.UTC), "2025-01-02 03:04:05"},
	}
	for _, c := range cases {
		if got := FormatValue(Normalize(c.in)); got != c.want {
			t.Errorf("%#v: %q, want %q", c.in, got, c.want)
		}
	}
}

func TestCSV(t *testing.T) {
	var b bytes.Buffer
	if err := WriteCSV(&b, sampleTable()); err != nil {
		t.Fatal(err)
	}
	want := "name,n,amount,share,posted,flag\n" +
		"Pellin Hull & Deck,12,4999.99,0.25,2025-03-14,true\n" +
		"\"Søndervik \"\"Anchors\"\", Ltd\",-3,-0.05,0.3333333333333333,,false\n" +
		",0,1000000.00,1e-12,2025-12-31,\n"
	if b.String() != want {
		t.Errorf("CSV:\n%s\nwant:\n%s", b.String(), want)
	}
}

// Parquet keeps the types and the exact values, and the same table gives
// the same bytes.
func TestParquet(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	pw, err := NewParquetWriter(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer pw.Close()
	a, b := filepath.Join(dir, "a.parquet"), filepath.Join(dir, "b.parquet")
	for _, p := range []string{a, b} {
		if err := pw.Write(ctx, p, sampleTable()); err != nil {
			t.Fatal(err)
		}
	}
	ba, _ := os.ReadFile(a)
	bb, _ := os.ReadFile(b)
	if !bytes.Equal(ba, bb) {
		t.Error("two writes of the same table differ")
	}
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	rows, err := db.Query("SELECT column_name, column_type FROM (DESCRIBE SELECT * FROM read_parquet(?))", a)
	if err != nil {
		t.Fatal(err)
	}
	var types []string
	for rows.Next() {
		var n, ty string
		rows.Scan(&n, &ty)
		types = append(types, n+" "+ty)
	}
	rows.Close()
	want := "name VARCHAR,n BIGINT,amount DECIMAL(18,2),share DOUBLE,posted DATE,flag BOOLEAN"
	if strings.Join(types, ",") != want {
		t.Errorf("types %v, want %s", types, want)
	}
	var sum, share string
	var n int64
	if err := db.QueryRow("SELECT CAST(sum(amount) AS VARCHAR), count(*), CAST(max(share) AS VARCHAR) FROM read_parquet(?)", a).Scan(&sum, &n, &share); err != nil {
		t.Fatal(err)
	}
	if sum != "1004999.94" || n != 3 || share != "0.3333333333333333" {
		t.Errorf("read back: sum %s, rows %d, max share %s", sum, n, share)
	}
}

// Sheet names are the tables' full names where they fit Excel's 31
// characters; where they do not (or clash), the cut name ends with the
// table's position, which the summary's sheet list shows.
func TestSheetNames(t *testing.T) {
	long := strings.Repeat("a", 40)
	full := strings.Repeat("b", 31)
	names := SheetNames([]*Table{{Name: long}, {Name: long + "b"}, {Name: "summary"}, {Name: "x"}, {Name: full}})
	want := map[string]string{long: strings.Repeat("a", 29) + "~1", long + "b": strings.Repeat("a", 29) + "~2",
		"summary": "summary~3", "x": "x", full: full}
	for k, v := range want {
		if names[k] != v {
			t.Errorf("sheet of %s: %q, want %q", k, names[k], v)
		}
	}
}

// An extra writer runs after the built-in ones and its files are listed in
// the manifest.
func TestExtraWriter(t *testing.T) {
	out := t.TempDir()
	run := &Run{Manifest: &Manifest{}, Tables: []*Table{sampleTable()}}
	w := WriterFunc{Label: "note", Fn: func(ctx context.Context, dir string, r *Run) ([]string, error) {
		if _, err := os.Stat(filepath.Join(dir, ResultsFile)); err != nil {
			return nil, err
		}
		return []string{"note.txt"}, os.WriteFile(filepath.Join(dir, "note.txt"), []byte(r.Tables[0].Title), 0o644)
	}}
	outs, err := WriteAll(context.Background(), out, run, Options{Extra: []Writer{w}, NoRegistered: true})
	if err != nil {
		t.Fatal(err)
	}
	var m Manifest
	b, _ := os.ReadFile(filepath.Join(out, ManifestFile))
	json.Unmarshal(b, &m)
	found := false
	for _, o := range m.Outputs {
		found = found || o.Path == "note.txt"
	}
	if !found || len(outs) != len(m.Outputs) {
		t.Errorf("note.txt not listed: %+v", m.Outputs)
	}
}
