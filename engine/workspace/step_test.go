package workspace

import "testing"

// TestStepNames: a step's name holds until the next is named, and the
// function returned restores the name before it.
func TestStepNames(t *testing.T) {
	ws := &Workspace{}
	if ws.StepName() != "" {
		t.Fatalf("a new workspace names step %q", ws.StepName())
	}
	done := ws.Step("scan")
	ws.Step("scan: counting digits")
	if got := ws.StepName(); got != "scan: counting digits" {
		t.Errorf("step %q, want the last named", got)
	}
	inner := ws.Step("scan: number duplication")
	inner()
	if got := ws.StepName(); got != "scan: counting digits" {
		t.Errorf("after the inner step: %q", got)
	}
	done()
	if got := ws.StepName(); got != "" {
		t.Errorf("after the step: %q, want none", got)
	}
}
