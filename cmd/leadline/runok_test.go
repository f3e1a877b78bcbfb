package main

import (
	"bytes"
	"context"
	"strings"
	"testing"
)

// runOK runs leadline with args as a user would and returns its standard
// output; a non-zero exit fails the test with the command's error output.
func runOK(t *testing.T, args ...string) string {
	t.Helper()
	var out, errs bytes.Buffer
	if code := run(context.Background(), args, &env{stdout: &out, stderr: &errs}); code != 0 {
		t.Fatalf("leadline %s exited %d: %s", strings.Join(args, " "), code, errs.String())
	}
	return out.String()
}
