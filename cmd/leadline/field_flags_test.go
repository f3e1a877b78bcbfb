package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// TestSettingRefusalsNameFlags: a setting the engine refuses (a
// *field.Error) is printed with the command line's flag and the value,
// whichever command and engine package refused it.
func TestSettingRefusalsNameFlags(t *testing.T) {
	gl := filepath.Join(t.TempDir(), "gl.csv")
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"load", "--db", ":memory:", "--scale", "9", gl}, "--scale 9: give 1 to 6 decimal places"},
		{[]string{"load", "--db", ":memory:", "--time-zone", "Mars/Olympus", gl}, `--time-zone "Mars/Olympus": not a time zone name`},
		{[]string{"load", "--db", ":memory:", "--date-format", "dd.mm.yyyy", gl}, `--date-format "dd.mm.yyyy": write a strptime format`},
		{[]string{"load", "--map", "amout=Betrag", gl}, `--map amout=Betrag: "amout" is not a canonical column`},
		{[]string{"limits", "--limits", "1e3"}, `--limits "1e3": not a number; give plain numbers separated by commas, e.g. --limits 1000,5000,10000`},
		{[]string{"ranges", "--per-decade", "-2"}, "--per-decade -2: give a positive number of bands to a decade"},
		{[]string{"ranges", "--from", "5", "--to", "3"}, "--from 5 --to 3: the bands need FROM < TO"},
		{[]string{"ranges", "--width", "5", "--per-decade", "3"}, "give either --width (fixed-width bands) or --per-decade (logarithmic bands), not both"},
		{[]string{"reconcile", "--control", "tb.csv", "--control-map", "nett=M"}, `--control-map nett=M: "nett" is not a role of a control file`},
		{[]string{"inspect", "--debit", "D", gl}, "--debit and --credit go together"},
	} {
		code, _, stderr := runCmd(c.args...)
		if code == 0 || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, %q; want %q", c.args, code, stderr, c.want)
		}
	}
}
