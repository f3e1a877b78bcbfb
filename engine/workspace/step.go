package workspace

// Step names what the workspace is about to do, in the words the progress
// display shows ("loading ledger.csv", "scan: counting digits"), so that
// a bar says what it measures. The returned function restores the name
// before it: defer ws.Step("...")().
func (ws *Workspace) Step(name string) (done func()) {
	prev := ws.step.Swap(&name)
	return func() { ws.step.Store(prev) }
}

// StepName is the name of the step now running, "" when none is named.
func (ws *Workspace) StepName() string {
	if p := ws.step.Load(); p != nil {
		return *p
	}
	return ""
}
