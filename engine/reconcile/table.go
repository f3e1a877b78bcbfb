package reconcile

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"unicode/utf8"
)

// rowSource yields a control file's rows as text cells, the header first,
// each with the line (or sheet row) that a message should name. Control
// files are small (one row per entity, account or currency), so a source
// may hold them all in memory.
type rowSource interface {
	// Next returns the next row; io.EOF after the last.
	Next() (cells []string, line int, err error)
}

// openers reads a control file by its extension. Each returns the rows
// as text cells (an XLSX sheet's numbers as their exact decimal text,
// never a float's), with the line, or sheet row number, of each.
var openers = map[string]func(path string, data []byte) (rowSource, error){
	".csv":  openCSV,
	".txt":  openCSV,
	".tsv":  openCSV,
	".xlsx": openXLSX,
	".xlsm": openXLSX,
}

func openTable(path string, data []byte) (rowSource, error) {
	ext := strings.ToLower(filepath.Ext(path))
	open, ok := openers[ext]
	if !ok {
		return nil, fmt.Errorf("%s: a control file must be CSV (.csv, .tsv or .txt) or XLSX (.xlsx), not %q", path, ext)
	}
	return open(path, data)
}

// csvSource reads a CSV control file: UTF-8 (a byte-order mark is
// dropped), the delimiter guessed from the header among , ; tab and |.
type csvSource struct {
	r    *csv.Reader
	path string
}

func openCSV(path string, data []byte) (rowSource, error) {
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	if len(bytes.TrimSpace(data)) == 0 {
		return nil, fmt.Errorf("%s: the control file is empty", path)
	}
	if !utf8.Valid(data) {
		line := 1 + bytes.Count(data[:firstInvalid(data)], []byte("\n"))
		return nil, fmt.Errorf("%s: line %d: not valid UTF-8; save the control file as CSV UTF-8 (or convert it, e.g. iconv -f WINDOWS-1252 -t UTF-8)", path, line)
	}
	header := data
	if i := bytes.IndexByte(data, '\n'); i >= 0 {
		header = data[:i]
	}
	r := csv.NewReader(bytes.NewReader(data))
	r.Comma = guessDelimiter(string(header))
	r.FieldsPerRecord = -1
	r.ReuseRecord = false
	return &csvSource{r: r, path: path}, nil
}

func firstInvalid(b []byte) int {
	for i := 0; i < len(b); {
		r, n := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && n <= 1 {
			return i
		}
		i += n
	}
	return len(b)
}

// guessDelimiter takes the most frequent of , ; tab | in the header line.
func guessDelimiter(header string) rune {
	best, n := ',', 0
	for _, d := range []rune{',', ';', '\t', '|'} {
		if c := strings.Count(header, string(d)); c > n {
			best, n = d, c
		}
	}
	return best
}

func (s *csvSource) Next() ([]string, int, error) {
	for {
		rec, err := s.r.Read()
		line, _ := s.r.FieldPos(0)
		if err != nil {
			if errors.Is(err, io.EOF) {
				return nil, 0, io.EOF
			}
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, pe.StartLine, fmt.Errorf("%s: line %d: %v", s.path, pe.StartLine, pe.Err)
			}
			return nil, line, fmt.Errorf("%s: %w", s.path, err)
		}
		blank := true
		for _, c := range rec {
			if strings.TrimSpace(c) != "" {
				blank = false
				break
			}
		}
		if blank {
			continue
		}
		return rec, line, nil
	}
}

// readFile reads the whole control file (it is small) for its SHA-256 and
// rows.
func readFile(path string) ([]byte, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("control file: %w", err)
	}
	if st.IsDir() {
		return nil, fmt.Errorf("control file %s is a folder; give the file", path)
	}
	if st.Size() > 256<<20 {
		return nil, fmt.Errorf("control file %s: %d bytes; a control file holds totals per key, not ledger lines (give the ledger to leadline load)", path, st.Size())
	}
	return os.ReadFile(path)
}
