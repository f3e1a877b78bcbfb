package reconcile

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"io"
	"strconv"

	"github.com/leadline/leadline/engine/xlsxin"
)

// sheetSource reads a control file in XLSX: the first sheet holding a
// table, read by the same reader as a ledger workbook (numbers as the
// sheet shows them, exact decimal text; date cells as ISO dates), each row
// with its sheet row number as its line.
type sheetSource struct {
	rows   [][]string // the line column first, then the cells
	header int64      // the header's sheet row number
	next   int
}

func openXLSX(path string, _ []byte) (rowSource, error) {
	var buf bytes.Buffer
	t, err := xlsxin.Convert(path, xlsxin.Options{}, &buf)
	if err != nil {
		return nil, err
	}
	if len(t.Rejects) > 0 {
		r := t.Rejects[0]
		return nil, fmt.Errorf("%s: sheet %q row %d: %s; correct the control file", path, t.Sheet, r.Line, r.Reason)
	}
	r := csv.NewReader(&buf)
	r.FieldsPerRecord = -1
	rows, err := r.ReadAll()
	if err != nil {
		return nil, fmt.Errorf("%s: reading the sheet %q: %v", path, t.Sheet, err)
	}
	return &sheetSource{rows: rows, header: t.HeaderRow}, nil
}

func (s *sheetSource) Next() ([]string, int, error) {
	if s.next >= len(s.rows) {
		return nil, 0, io.EOF
	}
	rec := s.rows[s.next]
	s.next++
	if s.next == 1 {
		return rec[1:], int(s.header), nil
	}
	line, err := strconv.Atoi(rec[0])
	if err != nil {
		return nil, 0, fmt.Errorf("sheet row number %q: %v", rec[0], err)
	}
	return rec[1:], line, nil
}
