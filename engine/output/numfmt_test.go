package output

import "testing"

// TestNumFmtIdentifiers: whole numbers that name a record (a line of the
// client's file, a row, file or run id, a digit bin) are written without
// thousands separators, so that the workbook shows line 22129 as the
// client's file numbers it; counts keep theirs.
func TestNumFmtIdentifiers(t *testing.T) {
	for _, c := range []struct {
		name, want string
	}{
		{"line", "0"}, {"row_id", "0"}, {"file_id", "0"}, {"run_id", "0"}, {"returned_line", "0"}, {"bin", "0"},
		{"records", "#,##0"}, {"rows_read", "#,##0"}, {"count", "#,##0"}, {"n", "#,##0"},
	} {
		if got := numFmt(Count, 0, c.name); got != c.want {
			t.Errorf("%s: format %q, want %q", c.name, got, c.want)
		}
	}
}
