// Package xlsxin reads one sheet of an Excel workbook (.xlsx) as a table:
// it finds the header row, converts each cell to the text a CSV export of
// the sheet should have held (numbers as the sheet shows them, date cells
// as ISO dates, formulas as their cached values) and writes the rows, each
// with its sheet row number, as UTF-8 CSV for the CSV loader.
//
// The sheet is read as a stream straight from the ZIP archive: the rows
// are never held in memory together, and nothing is unpacked to disk.
// excelize's row reader is not used for the cells because it hands back
// text only, without the cell's type, number format or formula, which the
// rules for numbers, dates and formulas need.
//
// It owns reading one sheet of an .xlsx workbook as rows of text for the
// loader.
package xlsxin

import (
	"archive/zip"
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"strconv"
	"strings"
)

// Sheet is one sheet of a workbook, in workbook order.
type Sheet struct {
	Name  string `json:"name"`
	Index int    `json:"index"` // 1-based
	// Rows is the sheet's last row: the one its dimension names or, without
	// one, the last row element's number; 0 for a chart sheet.
	Rows  int64  `json:"rows"`
	Kind  string `json:"kind"` // worksheet or chartsheet
	part  string
	state string
}

// Workbook is an open .xlsx file.
type Workbook struct {
	Path     string
	Sheets   []Sheet
	Date1904 bool
	zr       *zip.ReadCloser
	files    map[string]*zip.File
	xfKind   []dateKind // per cell format (the cell's s attribute)
	sstPart  string
	sst      []string
	sstRead  bool
}

// Open opens a workbook and reads its sheet list, date system and number
// formats. A file that is not an .xlsx says what it is instead.
func Open(p string) (*Workbook, error) {
	if err := sniff(p); err != nil {
		return nil, err
	}
	zr, err := zip.OpenReader(p)
	if err != nil {
		return nil, fmt.Errorf("%s: not a readable Excel workbook (.xlsx is a ZIP archive): %v; save it again from the spreadsheet program as .xlsx, or as CSV UTF-8", p, err)
	}
	w := &Workbook{Path: p, zr: zr, files: map[string]*zip.File{}}
	for _, f := range zr.File {
		w.files[strings.TrimPrefix(f.Name, "/")] = f
	}
	if err := w.readWorkbook(); err != nil {
		zr.Close()
		return nil, fmt.Errorf("%s: %w", p, err)
	}
	return w, nil
}

// Close releases the file.
func (w *Workbook) Close() error { return w.zr.Close() }

// sniff refuses, by its first bytes, a file that is no ZIP archive.
func sniff(p string) error {
	f, err := os.Open(p)
	if err != nil {
		return err
	}
	defer f.Close()
	head := make([]byte, 8)
	n, _ := io.ReadFull(f, head)
	head = head[:n]
	switch {
	case n == 0:
		return fmt.Errorf("%s: the file is empty", p)
	case bytes.HasPrefix(head, []byte{0xD0, 0xCF, 0x11, 0xE0}):
		return fmt.Errorf("%s: the file is an old binary Excel workbook (.xls) or a password-protected one, which leadline does not read; open it in the spreadsheet program, remove any password and save it as .xlsx (or as CSV UTF-8)", p)
	case !bytes.HasPrefix(head, []byte("PK\x03\x04")) && !bytes.HasPrefix(head, []byte("PK\x05\x06")):
		return fmt.Errorf("%s: not an Excel workbook: an .xlsx file is a ZIP archive, and this one does not start like one (is it a CSV or text file renamed .xlsx? then give it its own name, e.g. .csv)", p)
	}
	return nil
}

// part opens a file inside the archive.
func (w *Workbook) part(name string) (io.ReadCloser, error) {
	f, ok := w.files[name]
	if !ok {
		return nil, fmt.Errorf("the workbook has no part %s: is it a complete .xlsx file?", name)
	}
	return f.Open()
}

type rel struct {
	ID     string `xml:"Id,attr"`
	Type   string `xml:"Type,attr"`
	Target string `xml:"Target,attr"`
	Mode   string `xml:"TargetMode,attr"`
}

// rels reads the relationships of part (e.g. xl/workbook.xml), with targets
// made paths inside the archive.
func (w *Workbook) rels(part string) ([]rel, error) {
	dir, file := path.Split(part)
	name := dir + "_rels/" + file + ".rels"
	if _, ok := w.files[name]; !ok {
		return nil, nil
	}
	var doc struct {
		Rels []rel `xml:"Relationship"`
	}
	if err := w.decode(name, &doc); err != nil {
		return nil, err
	}
	for i, r := range doc.Rels {
		if strings.HasPrefix(r.Target, "/") {
			doc.Rels[i].Target = strings.TrimPrefix(r.Target, "/")
		} else {
			doc.Rels[i].Target = path.Clean(dir + r.Target)
		}
	}
	return doc.Rels, nil
}

func (w *Workbook) decode(name string, v any) error {
	rc, err := w.part(name)
	if err != nil {
		return err
	}
	defer rc.Close()
	if err := xml.NewDecoder(rc).Decode(v); err != nil {
		return fmt.Errorf("reading %s: %v", name, err)
	}
	return nil
}

func relType(t, suffix string) bool { return strings.HasSuffix(t, "/"+suffix) }

func (w *Workbook) readWorkbook() error {
	main := "xl/workbook.xml"
	top, err := w.rels("")
	if err != nil {
		return err
	}
	for _, r := range top {
		if relType(r.Type, "officeDocument") {
			main = r.Target
		}
	}
	var doc struct {
		Pr struct {
			Date1904 string `xml:"date1904,attr"`
		} `xml:"workbookPr"`
		Sheets []struct {
			Name  string `xml:"name,attr"`
			State string `xml:"state,attr"`
			RID   string `xml:"http://schemas.openxmlformats.org/officeDocument/2006/relationships id,attr"`
		} `xml:"sheets>sheet"`
	}
	if err := w.decode(main, &doc); err != nil {
		return err
	}
	w.Date1904 = doc.Pr.Date1904 == "1" || strings.EqualFold(doc.Pr.Date1904, "true")
	rs, err := w.rels(main)
	if err != nil {
		return err
	}
	byID := map[string]rel{}
	for _, r := range rs {
		byID[r.ID] = r
		switch {
		case relType(r.Type, "styles"):
			if err := w.readStyles(r.Target); err != nil {
				return err
			}
		case relType(r.Type, "sharedStrings"):
			w.sstPart = r.Target
		}
	}
	for i, s := range doc.Sheets {
		r := byID[s.RID]
		kind := "worksheet"
		if !relType(r.Type, "worksheet") {
			kind = "chartsheet"
		}
		w.Sheets = append(w.Sheets, Sheet{Name: s.Name, Index: i + 1, Kind: kind, part: r.Target, state: s.State})
	}
	if len(w.Sheets) == 0 {
		return errors.New("the workbook lists no sheets")
	}
	return nil
}

// readStyles notes which cell formats show a number as a date or time.
func (w *Workbook) readStyles(name string) error {
	var doc struct {
		NumFmts []struct {
			ID   int    `xml:"numFmtId,attr"`
			Code string `xml:"formatCode,attr"`
		} `xml:"numFmts>numFmt"`
		Xfs []struct {
			NumFmt int `xml:"numFmtId,attr"`
		} `xml:"cellXfs>xf"`
	}
	if err := w.decode(name, &doc); err != nil {
		return err
	}
	custom := map[int]string{}
	for _, n := range doc.NumFmts {
		custom[n.ID] = n.Code
	}
	for _, x := range doc.Xfs {
		if code, ok := custom[x.NumFmt]; ok {
			w.xfKind = append(w.xfKind, kindOfCode(code))
		} else {
			w.xfKind = append(w.xfKind, kindOfBuiltin(x.NumFmt))
		}
	}
	return nil
}

// sharedStrings reads the shared string table once, when a sheet needs it.
// It is held in memory: one text per distinct string of the workbook.
func (w *Workbook) sharedStrings() ([]string, error) {
	if w.sstRead || w.sstPart == "" {
		return w.sst, nil
	}
	w.sstRead = true
	rc, err := w.part(w.sstPart)
	if err != nil {
		return nil, err
	}
	defer rc.Close()
	d := xml.NewDecoder(rc)
	var cur strings.Builder
	inSI, inT, skip := false, false, 0
	for {
		tok, err := d.RawToken()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("reading %s: %v", w.sstPart, err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			switch t.Name.Local {
			case "si":
				inSI = true
				cur.Reset()
			case "t":
				inT = true
			case "rPh", "phoneticPr":
				skip++ // phonetic guides are not part of the text
			}
		case xml.EndElement:
			switch t.Name.Local {
			case "si":
				inSI = false
				w.sst = append(w.sst, cur.String())
			case "t":
				inT = false
			case "rPh", "phoneticPr":
				skip--
			}
		case xml.CharData:
			if inSI && inT && skip == 0 {
				cur.Write(t)
			}
		}
	}
	return w.sst, nil
}

// Choose picks the sheet sel names (its name, or its 1-based position when
// no sheet has that name), or, for "", the first worksheet holding a table
// (a header row with data below it): a cover or notes sheet in front of
// the data is passed over.
func (w *Workbook) Choose(sel string) (Sheet, string, error) {
	if sel != "" {
		for _, s := range w.Sheets {
			if s.Name == sel {
				return w.checkKind(s, "named")
			}
		}
		for _, s := range w.Sheets {
			if strings.EqualFold(s.Name, sel) {
				return w.checkKind(s, "named")
			}
		}
		if n, err := strconv.Atoi(strings.TrimSpace(sel)); err == nil {
			if n < 1 || n > len(w.Sheets) {
				return Sheet{}, "", fmt.Errorf("%s: --sheet %s: the workbook has %d sheets (%s); give a name or a number from 1 to %d", w.Path, sel, len(w.Sheets), w.names(), len(w.Sheets))
			}
			return w.checkKind(w.Sheets[n-1], "by position")
		}
		return Sheet{}, "", fmt.Errorf("%s: --sheet %q: no sheet of that name; the workbook has %s", w.Path, sel, w.names())
	}
	for _, s := range w.Sheets {
		if s.Kind != "worksheet" {
			continue
		}
		has, err := w.hasTable(s)
		if err != nil {
			return Sheet{}, "", err
		}
		if has {
			return s, "the first sheet holding a table", nil
		}
	}
	return Sheet{}, "", fmt.Errorf("%s: no sheet holds a table (a header row of at least two text cells with data below it) among %s; give the sheet with --sheet", w.Path, w.names())
}

func (w *Workbook) checkKind(s Sheet, how string) (Sheet, string, error) {
	if s.Kind != "worksheet" {
		return Sheet{}, "", fmt.Errorf("%s: sheet %q is a chart, not a table; give another --sheet (%s)", w.Path, s.Name, w.names())
	}
	return s, how, nil
}

func (w *Workbook) names() string {
	var n []string
	for _, s := range w.Sheets {
		n = append(n, fmt.Sprintf("%d %q", s.Index, s.Name))
	}
	return strings.Join(n, ", ")
}

// hasTable reads a sheet's first rows holding a value and tells whether
// a header row is among them.
func (w *Workbook) hasTable(s Sheet) (bool, error) {
	r, err := w.openRows(s)
	if err != nil {
		return false, err
	}
	defer r.close()
	head, err := r.head()
	if err != nil {
		return false, fmt.Errorf("%s: sheet %q: %v", w.Path, s.Name, err)
	}
	return pickHeader(head) >= 0, nil
}

// CountRows fills in each worksheet's Rows: the last row of its dimension,
// or of its row elements when it has none.
func (w *Workbook) CountRows() error {
	for i, s := range w.Sheets {
		if s.Kind != "worksheet" {
			continue
		}
		rc, err := w.part(s.part)
		if err != nil {
			return err
		}
		n, err := countRows(rc)
		rc.Close()
		if err != nil {
			return fmt.Errorf("%s: sheet %q: %v", w.Path, s.Name, err)
		}
		w.Sheets[i].Rows = n
	}
	return nil
}

func countRows(r io.Reader) (int64, error) {
	d := xml.NewDecoder(r)
	for {
		tok, err := d.RawToken()
		if err != nil {
			return 0, err
		}
		if t, ok := tok.(xml.StartElement); ok {
			if t.Name.Local == "dimension" {
				ref := attr(t, "ref")
				if _, last, ok := strings.Cut(ref, ":"); ok {
					if _, row, err := splitRef(last); err == nil {
						return row, nil
					}
				}
			}
			if t.Name.Local == "sheetData" {
				break
			}
		}
	}
	// No dimension with a range: the last row element's number.
	var n int64
	for {
		tok, err := d.RawToken()
		if err == io.EOF {
			return n, nil
		}
		if err != nil {
			return n, err
		}
		if t, ok := tok.(xml.StartElement); ok && t.Name.Local == "row" {
			if r, err := strconv.ParseInt(attr(t, "r"), 10, 64); err == nil && r > n {
				n = r
			} else {
				n++
			}
		}
	}
}

func attr(t xml.StartElement, name string) string {
	for _, a := range t.Attr {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

// splitRef splits a cell reference such as BC12 into its 0-based column
// and its row number.
func splitRef(ref string) (col int, row int64, err error) {
	i := 0
	for i < len(ref) && (ref[i] >= 'A' && ref[i] <= 'Z' || ref[i] >= 'a' && ref[i] <= 'z') {
		c := ref[i]
		if c >= 'a' {
			c -= 'a' - 'A'
		}
		col = col*26 + int(c-'A'+1)
		i++
	}
	if i == 0 || i == len(ref) || col > 16384 {
		return 0, 0, fmt.Errorf("bad cell reference %q", ref)
	}
	row, err = strconv.ParseInt(ref[i:], 10, 64)
	if err != nil || row < 1 {
		return 0, 0, fmt.Errorf("bad cell reference %q", ref)
	}
	return col - 1, row, nil
}

// Letter is the column letter of a 0-based column: 0 is A, 26 is AA.
func Letter(col int) string {
	var b []byte
	for col++; col > 0; col = (col - 1) / 26 {
		b = append([]byte{byte('A' + (col-1)%26)}, b...)
	}
	return string(b)
}
