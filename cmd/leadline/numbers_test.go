package main

import (
	"bytes"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/benford"
)

// TestTerminalStatisticsFormat: the terminal writes a test's statistics
// as the report does (numfmt: four significant figures, "< 1e-300" for a
// p-value that underflowed), not with fixed decimals that turn a p-value
// of 0 into "p 0" and a small MAD into "0.00000".
func TestTerminalStatisticsFormat(t *testing.T) {
	r := benford.Result{
		Test: benford.FirstTwo, N: 141242, MAD: 0.0002134, ExpectedMAD: 0.000009876, ExcessMAD: 0.0002035,
		Conformity: "close", Chi2: 4293.93, DF: 89, PValue: 0, KSD: 0.0195234, KSCritical: 0.00361894,
		Runs: &benford.Runs{Runs: 16, Expected: 45.7, SD: 4.8213, Z: -6.1637, P: 0.0005},
	}
	var b bytes.Buffer
	if err := printTestText(&b, r, false); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{
		"MAD 0.0002134: close; expected MAD at this N 9.876e-06, excess 0.0002035",
		"Chi-square 4,294, 89 df, p < 1e-300; Kolmogorov-Smirnov D 0.01952 (5% critical value 0.003619)",
		"Runs test: 16 runs (expected 45.70, sd 4.821, z -6.164, one-sided p 0.0005000)",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
}
