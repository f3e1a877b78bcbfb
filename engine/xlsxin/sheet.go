package xlsxin

import (
	"encoding/xml"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// cellKind is what a cell holds.
type cellKind uint8

const (
	kText    cellKind = iota + 1 // a text cell (shared, inline or a formula's text)
	kNumber                      // a number, converted as the sheet shows it
	kDate                        // a number in a date or time format, as an ISO date
	kBool                        // TRUE or FALSE
	kError                       // an error value such as #DIV/0!
	kNoValue                     // a formula without a cached value
)

type cell struct {
	col     int
	kind    cellKind
	text    string // the value as the CSV gets it
	formula bool
	fText   string // the formula, for a formula without a cached value
}

type row struct {
	num   int64
	cells []cell
}

// nonEmpty counts the cells holding a value (a formula without one counts:
// it is not a blank).
func (r *row) nonEmpty() int {
	n := 0
	for _, c := range r.cells {
		if c.text != "" || c.kind == kNoValue {
			n++
		}
	}
	return n
}

// texts counts the non-blank text cells.
func (r *row) texts() int {
	n := 0
	for _, c := range r.cells {
		if c.kind == kText && strings.TrimSpace(c.text) != "" {
			n++
		}
	}
	return n
}

// rowReader streams the rows of one sheet.
type rowReader struct {
	w      *Workbook
	rc     io.ReadCloser
	d      *xml.Decoder
	sst    []string
	last   int64
	inData bool
	done   bool
	Merges []string // merged ranges, known once the rows are all read
}

func (w *Workbook) openRows(s Sheet) (*rowReader, error) {
	sst, err := w.sharedStrings()
	if err != nil {
		return nil, fmt.Errorf("%s: %v", w.Path, err)
	}
	rc, err := w.part(s.part)
	if err != nil {
		return nil, fmt.Errorf("%s: sheet %q: %v", w.Path, s.Name, err)
	}
	return &rowReader{w: w, rc: rc, d: xml.NewDecoder(rc), sst: sst}, nil
}

func (r *rowReader) close() { r.rc.Close() }

// next returns the next row element (rows the sheet leaves out are not
// returned: the caller sees the gap in the numbers), or nil at the end.
func (r *rowReader) next() (*row, error) {
	if r.done {
		return nil, nil
	}
	for {
		tok, err := r.d.RawToken()
		if err == io.EOF {
			r.done = true
			return nil, nil
		}
		if err != nil {
			return nil, fmt.Errorf("reading the sheet: %v", err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			switch t.Name.Local {
			case "sheetData":
				r.inData = true
			case "row":
				if r.inData {
					return r.readRow(t)
				}
			case "mergeCell":
				r.Merges = append(r.Merges, attr(t, "ref"))
			}
		case xml.EndElement:
			if t.Name.Local == "sheetData" {
				r.inData = false
				// Read on for the merged cells, which follow the rows.
				if err := r.readTail(); err != nil {
					return nil, err
				}
				r.done = true
				return nil, nil
			}
		}
	}
}

func (r *rowReader) readTail() error {
	for {
		tok, err := r.d.RawToken()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return fmt.Errorf("reading the sheet: %v", err)
		}
		if t, ok := tok.(xml.StartElement); ok && t.Name.Local == "mergeCell" {
			r.Merges = append(r.Merges, attr(t, "ref"))
		}
	}
}

func (r *rowReader) readRow(start xml.StartElement) (*row, error) {
	out := &row{}
	if v := attr(start, "r"); v != "" {
		n, err := strconv.ParseInt(v, 10, 64)
		if err != nil || n <= r.last {
			return nil, fmt.Errorf("reading the sheet: row number %q after row %d", v, r.last)
		}
		out.num = n
	} else {
		out.num = r.last + 1
	}
	r.last = out.num
	col := -1
	for {
		tok, err := r.d.RawToken()
		if err != nil {
			return nil, fmt.Errorf("reading the sheet at row %d: %v", out.num, err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			if t.Name.Local == "c" {
				c, err := r.readCell(t, col, out.num)
				if err != nil {
					return nil, err
				}
				col = c.col
				if c.text != "" || c.kind == kNoValue {
					out.cells = append(out.cells, c)
				}
			}
		case xml.EndElement:
			if t.Name.Local == "row" {
				return out, nil
			}
		}
	}
}

func (r *rowReader) readCell(start xml.StartElement, prev int, rowNum int64) (cell, error) {
	c := cell{col: prev + 1}
	var typ, style string
	for _, a := range start.Attr {
		switch a.Name.Local {
		case "r":
			col, rn, err := splitRef(a.Value)
			if err != nil || rn != rowNum {
				return c, fmt.Errorf("reading the sheet at row %d: cell reference %q", rowNum, a.Value)
			}
			c.col = col
		case "t":
			typ = a.Value
		case "s":
			style = a.Value
		}
	}
	var v, inline, f strings.Builder
	hasV := false
	where := ""
	depth := 1
	for depth > 0 {
		tok, err := r.d.RawToken()
		if err != nil {
			return c, fmt.Errorf("reading the sheet at %s%d: %v", Letter(c.col), rowNum, err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			depth++
			switch t.Name.Local {
			case "v":
				hasV, where = true, "v"
			case "f":
				c.formula, where = true, "f"
			case "t":
				if where != "rPh" {
					where = "t"
				}
			case "rPh":
				where = "rPh"
			}
		case xml.EndElement:
			depth--
			if t.Name.Local != "c" && (where != "rPh" || t.Name.Local == "rPh") {
				where = ""
			}
		case xml.CharData:
			switch where {
			case "v":
				v.Write(t)
			case "f":
				f.Write(t)
			case "t":
				inline.Write(t)
			}
		}
	}
	val := v.String()
	switch typ {
	case "s":
		c.kind = kText
		i, err := strconv.Atoi(strings.TrimSpace(val))
		if hasV && (err != nil || i < 0 || i >= len(r.sst)) {
			return c, fmt.Errorf("reading the sheet at %s%d: shared string %q is not in the workbook's string table", Letter(c.col), rowNum, val)
		}
		if hasV {
			c.text = r.sst[i]
		}
	case "inlineStr":
		c.kind, c.text = kText, inline.String()
	case "str":
		c.kind, c.text = kText, val
	case "b":
		c.kind = kBool
		switch strings.TrimSpace(val) {
		case "1":
			c.text = "TRUE"
		case "0":
			c.text = "FALSE"
		}
	case "e":
		c.kind, c.text = kError, val
	case "d":
		c.kind, c.text = kDate, isoCellDate(val)
	default:
		c.kind = kNumber
		if strings.TrimSpace(val) == "" {
			break
		}
		k := plainNumber
		if n, err := strconv.Atoi(style); err == nil && n >= 0 && n < len(r.w.xfKind) {
			k = r.w.xfKind[n]
		}
		var ok bool
		if k != plainNumber {
			c.kind = kDate
			c.text, ok = Serial(val, r.w.Date1904, k)
		} else {
			c.text, ok = Number(val)
		}
		if !ok {
			return c, fmt.Errorf("reading the sheet at %s%d: the number cell holds %q", Letter(c.col), rowNum, val)
		}
	}
	if c.formula && !hasV && typ != "inlineStr" {
		c.kind, c.fText = kNoValue, "="+f.String()
	}
	return c, nil
}

// isoCellDate turns an ISO 8601 date cell (t="d", rare) into the date, or
// date and time, the loader reads.
func isoCellDate(v string) string {
	v = strings.TrimSpace(v)
	d, t, ok := strings.Cut(v, "T")
	if !ok {
		return v
	}
	t = strings.TrimSuffix(t, "Z")
	if i := strings.IndexByte(t, '.'); i >= 0 {
		t = t[:i]
	}
	if t == "" || t == "00:00:00" || t == "00:00" {
		return d
	}
	return d + " " + t
}
