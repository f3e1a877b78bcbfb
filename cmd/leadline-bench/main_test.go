package main

import (
	"bytes"
	"context"
	"strings"
	"testing"
)

func TestOverview(t *testing.T) {
	var out, errs bytes.Buffer
	if code := run(context.Background(), nil, &env{stdout: &out, stderr: &errs}); code != 0 {
		t.Fatalf("exit %d: %s", code, errs.String())
	}
	for _, name := range []string{"bench ", "bench-battery ", "bench-dups ", "bench-step ", "bench-year "} {
		if !strings.Contains(out.String(), "  "+name) {
			t.Errorf("overview lacks %q:\n%s", name, out.String())
		}
	}
}

func TestBadFlags(t *testing.T) {
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"bench-battery", "--rows", "100"}, 1, "give --rows 10000 or more"},
		{[]string{"bench-dups", "--format", "xml"}, 1, `--format "xml"`},
		{[]string{"bench", "--bogus"}, 2, "unknown flag: --bogus"},
		{[]string{"bench-year", "--rows-per-file", "0"}, 1, "--rows-per-file"},
		{[]string{"bench-year", "extra"}, 1, `unexpected argument "extra"`},
		{[]string{"bench-year", "--checks-limit", "-1m"}, 1, "--checks-limit -1m0s"},
		{[]string{"scan"}, 2, `unknown command "scan"`},
	} {
		var out, errs bytes.Buffer
		code := run(context.Background(), c.args, &env{stdout: &out, stderr: &errs})
		if code != c.code || !strings.Contains(errs.String(), c.want) {
			t.Errorf("%q: exit %d, %q; want exit %d and %q", c.args, code, errs.String(), c.code, c.want)
		}
	}
}

func TestFindLeadline(t *testing.T) {
	t.Setenv("PATH", t.TempDir())
	_, err := findLeadline("", "/nowhere/leadline-bench")
	if err == nil || !strings.Contains(err.Error(), "--leadline") {
		t.Errorf("error %v, want one naming --leadline", err)
	}
	if _, err := findLeadline("/nowhere/leadline", "/nowhere/leadline-bench"); err == nil {
		t.Error("a --leadline that does not exist was accepted")
	}
}
