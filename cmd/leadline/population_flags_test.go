package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestPopulationFlagsRefusedAlike checks that every command taking the
// population's flags refuses the same values with the same words, naming
// the flag: a minimum in another base or with an exponent (scan once ran
// --min 0x10 with a minimum of 16 while drill refused it), a negative
// minimum and an unknown sign.
func TestPopulationFlagsRefusedAlike(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "ws.duckdb")
	var b strings.Builder
	b.WriteString("amount,entity,counterparty,doc_id\n")
	for i := 0; i < 200; i++ {
		fmt.Fprintf(&b, "%d.%02d,E%d,V%d,D%d\n", 10+i*37, i%100, i%3, i%7, i)
	}
	csvPath := filepath.Join(dir, "gl.csv")
	if err := os.WriteFile(csvPath, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	exec := func(args ...string) (int, string) {
		var out, errs bytes.Buffer
		code := run(context.Background(), args, &env{stdout: &out, stderr: &errs})
		return code, errs.String()
	}
	if code, errs := exec("load", "--db", db, csvPath); code != 0 {
		t.Fatalf("load: %s", errs)
	}
	commands := []string{"scan", "drill", "ranges", "limits", "dups"}
	for _, c := range []struct {
		flag, value, want string
	}{
		{"--min", "0x10", `--min "0x10": not a plain decimal number`},
		{"--min", "0b1010", `--min "0b1010": not a plain decimal number`},
		{"--min", "1e1", `--min "1e1": not a plain decimal number`},
		{"--min", "-5", `--min "-5": the minimum is on absolute amounts; give 0 or more (choose the sign with --signs)`},
		{"--signs", "all", `--signs "all": give positive, negative or both`},
	} {
		for _, cmd := range commands {
			code, errs := exec(cmd, "--db", db, c.flag, c.value)
			if code == 0 || !strings.Contains(errs, "leadline "+cmd+": "+c.want) {
				t.Errorf("leadline %s %s %s: exit %d, %q; want it refused with %q", cmd, c.flag, c.value, code, errs, c.want)
			}
		}
	}
	// The same minimum in plain decimal runs everywhere.
	for _, cmd := range commands {
		if code, errs := exec(cmd, "--db", db, "--min", "16"); code != 0 {
			t.Errorf("leadline %s --min 16: exit %d, %s", cmd, code, errs)
		}
	}
}
