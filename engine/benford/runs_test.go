package benford

import (
	"math"
	"strings"
	"testing"
)

// TestRunsExpectation checks E[R] and Var[R] (Wald and Wolfowitz 1940) for
// 45 overs and 45 unders: E[R] = 1 + 2·45·45/90 = 46 exactly (common
// practice, no source, gives "about 46" for balanced first-two bins), and
// Var[R] = 2·2025·(4050 - 90)/(8100·89) = 22.2472...
func TestRunsExpectation(t *testing.T) {
	actual := make([]float64, 90)
	expected := make([]float64, 90)
	for i := range actual {
		expected[i] = 1.0 / 90
		if i%2 == 0 { // alternating: 90 runs
			actual[i] = expected[i] + 1e-4
		} else {
			actual[i] = expected[i] - 1e-4
		}
	}
	r := RunsTest(actual, expected, 10)
	if r.Overs != 45 || r.Unders != 45 || r.Runs != 90 || r.Expected != 46 {
		t.Fatalf("overs %d unders %d runs %d E %v", r.Overs, r.Unders, r.Runs, r.Expected)
	}
	if v := 2.0 * 2025 * (4050 - 90) / (8100 * 89); math.Abs(r.SD*r.SD-v) > 1e-12 || math.Abs(v-22.2472) > 1e-4 {
		t.Errorf("Var %v, want %v", r.SD*r.SD, v)
	}
	if r.P < 0.99 {
		t.Errorf("alternating marks: P = %v, want near 1 (many runs)", r.P)
	}
}

// TestRunsLongStretch constructs first-two proportions with a surplus over
// bins 20..49 and a shortfall elsewhere: three runs, a tiny P, and the
// surplus stretch first.
func TestRunsLongStretch(t *testing.T) {
	exp := Expected(FirstTwo)
	act := make([]float64, 90)
	var s float64
	for i, p := range exp {
		act[i] = p
		if b := 10 + i; b >= 20 && b <= 49 {
			act[i] += 0.002
		}
		s += act[i]
	}
	for i := range act {
		act[i] /= s
	}
	r := RunsTest(act, exp, 10)
	if r.Runs != 3 || r.P > 1e-6 {
		t.Errorf("runs %d, P %v", r.Runs, r.P)
	}
	st, ok := r.LargestSurplus()
	if !ok || st.From != 20 || st.To != 49 || st.Bins != 30 || st.Kind != Surplus {
		t.Errorf("largest surplus %+v", st)
	}
	if math.Abs(st.Excess+r.Stretches[1].Excess+r.Stretches[2].Excess) > 1e-12 {
		t.Error("excesses do not cancel")
	}
	if r.Stretches[1].Kind != Shortfall || math.Abs(r.Stretches[1].Excess) < math.Abs(r.Stretches[2].Excess) {
		t.Errorf("shortfalls not by |excess|: %+v", r.Stretches)
	}
}

// TestRunsTies checks that a bin exactly at expectation counts as under,
// and that uniform marks give P = 1 without NaN.
func TestRunsTies(t *testing.T) {
	r := RunsTest([]float64{0.2, 0.3, 0.5}, []float64{0.2, 0.3, 0.5}, 1)
	if r.Overs != 0 || r.Unders != 3 || r.Runs != 1 || r.P != 1 || r.Z != 0 || r.SD != 0 {
		t.Errorf("%+v", r)
	}
}

// TestRunsScenario runs the first-two runs test on the simulated scenario:
// 500,000 amounts log-uniform over [10, 10^6) plus 50,000 uniform in
// [2000, 5000). The injection puts every bin 20..49 over expectation and
// every other bin under, so there are exactly 3 runs (below 35, the common
// practice threshold, no source) and the surplus stretch is 20..49. Without
// injection (100 seeds) the rate of runs below 35 and of P < 0.05 is
// reported and bounded loosely.
func TestRunsScenario(t *testing.T) {
	inj := injectedPopulation()
	res, err := Analyze(FirstTwo, inj.firstTwo)
	if err != nil {
		t.Fatal(err)
	}
	r := res.Runs
	st, _ := r.LargestSurplus()
	t.Logf("injected: %d runs (E %.1f, SD %.2f, z %.2f, P %.2g), largest surplus bins %d..%d excess %.4f",
		r.Runs, r.Expected, r.SD, r.Z, r.P, st.From, st.To, st.Excess)
	if r.Runs >= FewRunsFirstTwo || st.From != 20 || st.To != 49 {
		t.Errorf("injected: runs %d, largest surplus %d..%d", r.Runs, st.From, st.To)
	}
	hasNote := false
	for _, n := range res.Notes {
		if len(n) > 0 && n[0] >= '0' && n[0] <= '9' && strings.Contains(n, "threshold") {
			hasNote = true
		}
	}
	if !hasNote {
		t.Errorf("no runs note: %q", res.Notes)
	}

	var few, sig int
	var sum float64
	for _, pop := range nullPopulations() {
		res, _ := Analyze(FirstTwo, pop.firstTwo)
		if res.Runs.Runs < FewRunsFirstTwo {
			few++
		}
		if res.Runs.P < 0.05 {
			sig++
		}
		sum += float64(res.Runs.Runs)
	}
	n := float64(len(nullPopulations()))
	t.Logf("conforming (%d seeds): mean runs %.1f, runs < 35 in %.2f, P < 0.05 in %.2f", int(n), sum/n, float64(few)/n, float64(sig)/n)
	if float64(few)/n > 0.06 || float64(sig)/n > 0.12 {
		t.Errorf("false alarms: runs < 35 %.2f, P < 0.05 %.2f", float64(few)/n, float64(sig)/n)
	}
}
