package output

import (
	"encoding/csv"
	"io"
)

// WriteCSV writes the table with a header row. Values are written as
// FormatValue writes them, so the same table gives the same bytes.
func WriteCSV(w io.Writer, t *Table) error {
	cw := csv.NewWriter(w)
	head := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		head[i] = c.Name
	}
	if err := cw.Write(head); err != nil {
		return err
	}
	rec := make([]string, len(t.Columns))
	for _, r := range t.Rows {
		for i := range rec {
			rec[i] = ""
			if i < len(r) {
				rec[i] = FormatValue(r[i])
			}
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
