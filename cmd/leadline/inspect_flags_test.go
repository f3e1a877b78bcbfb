package main

import (
	"reflect"
	"testing"

	"github.com/leadline/leadline/engine/load"
)

func TestInspectFlags(t *testing.T) {
	got, err := parseFlags(inspectFlags, "--encoding", "CP1252", "--delimiter", ";", "--map", "amount=Betrag", "--rows", "3", "--format", "json", "gl.csv")
	if err != nil {
		t.Fatal(err)
	}
	want := inspectOptions{file: "gl.csv", format: "json", rows: 3,
		load: load.Options{Encoding: "windows-1252", Delimiter: ";", Map: map[string]string{"amount": "Betrag"}}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("inspect options\n got %+v\nwant %+v", got, want)
	}
	got, err = parseFlags(inspectFlags, "--debit", "Soll", "--credit", "Haben", "x.csv")
	if err != nil || got.load.Debit != "Soll" || got.load.Credit != "Haben" || got.rows != 5 || got.format != "text" || got.load.Encoding != "" {
		t.Errorf("--debit --credit: %+v, %v", got, err)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{}, "exactly one file"},
		{[]string{"a.csv", "b.csv"}, "exactly one file"},
		{[]string{"--encoding", "ebcdic", "a.csv"}, "windows-1252 (cp1252), iso-8859-1 (latin-1), iso-8859-15 (latin-9)"},
		{[]string{"--debit", "Soll", "a.csv"}, "--debit and --credit go together"},
		{[]string{"--map", "betrag", "a.csv"}, "CANONICAL=COLUMN"},
		{[]string{"--map", "amout=Betrag", "a.csv"}, "not a canonical column"},
		{[]string{"--format", "xml", "a.csv"}, "xml"},
		{[]string{"--rows", "-1", "a.csv"}, "--rows -1"},
	} {
		_, err := parseFlags(inspectFlags, c.args...)
		wantErr(t, c.args, err, c.want)
	}
}
