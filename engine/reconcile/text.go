package reconcile

import (
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/tabular"
)

// Table is the reconciliation per key and measure: the key columns, then
// measure, expected, loaded, difference (loaded - expected) and status. A
// trial balance adds its opening and closing balances to the net lines.
func (r *Result) Table() *tabular.Table {
	cols := append([]string{}, r.Keys...)
	cols = append(cols, "measure")
	if r.Control.Shape == "trial_balance" {
		cols = append(cols, "opening", "closing")
	}
	cols = append(cols, "expected", "loaded", "difference", "status", "control_line")
	t := &tabular.Table{Name: "reconciliation", Columns: cols}
	for _, l := range r.Lines {
		row := []any{}
		for _, k := range l.Key {
			row = append(row, k)
		}
		row = append(row, l.Measure)
		if r.Control.Shape == "trial_balance" {
			row = append(row, orNil(l.Opening), orNil(l.Closing))
		}
		var exp any
		if l.Expected != nil {
			exp = *l.Expected
		}
		var line any
		if l.ControlLine > 0 {
			line = int64(l.ControlLine)
		}
		row = append(row, exp, l.Loaded, l.Difference, l.Status, line)
		t.Rows = append(t.Rows, row)
	}
	return t
}

func orNil(s string) any {
	if s == "" {
		return nil
	}
	return s
}

// WriteText prints the reconciliation for the terminal: the control file,
// the lines that do not tie (all lines when every one ties and there are
// few), and the verdict.
func (r *Result) WriteText(w io.Writer) error {
	fmt.Fprintf(w, "Reconciliation %d against %s (%s, SHA-256 %s)\n", r.ID, r.Control.Name, shapeText(r.Control.Shape), r.Control.SHA256)
	t := r.Table()
	if !r.Ties {
		all := t.Rows
		t.Rows = nil
		for i, l := range r.Lines {
			if l.Difference != zeroText(l.Difference) {
				t.Rows = append(t.Rows, all[i])
			}
		}
		fmt.Fprintf(w, "Lines that do not tie (%d of %d):\n", len(t.Rows), len(all))
	}
	if len(t.Rows) > 0 && (len(t.Rows) <= 200 || !r.Ties) {
		if err := t.WriteText(w, 60); err != nil {
			return err
		}
	}
	for _, n := range r.Notes {
		fmt.Fprintf(w, "  note: %s\n", n)
	}
	fmt.Fprintf(w, "Verdict: %s\n", r.Verdict)
	fmt.Fprintf(w, "Every line: leadline sql --db %s \"SELECT * FROM ll_reconciliation_rows WHERE reconciliation_id = %d ORDER BY seq\"\n", r.workspace, r.ID)
	return nil
}

func shapeText(s string) string {
	if s == "trial_balance" {
		return "trial balance: expected activity = closing - opening"
	}
	return "expected totals"
}

// zeroText is the text of zero at the scale of s ("0", "0.00").
func zeroText(s string) string {
	if i := strings.IndexByte(s, '.'); i >= 0 {
		return "0." + strings.Repeat("0", len(s)-i-1)
	}
	return "0"
}

// DifferingLines are the lines whose difference is not zero.
func (r *Result) DifferingLines() []Line {
	var out []Line
	for _, l := range r.Lines {
		if l.Difference != zeroText(l.Difference) {
			out = append(out, l)
		}
	}
	return out
}

// ExpectedText is the expected total, or "" when the key is only in the
// ledger.
func (l Line) ExpectedText() string {
	if l.Expected == nil {
		return ""
	}
	return *l.Expected
}
