package load

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"unicode/utf8"

	"github.com/leadline/leadline/engine/xlsxin"
)

// Source is one input file, examined before loading.
type Source struct {
	Path      string   // absolute path
	Name      string   // base name
	Format    string   // "csv" or "parquet"
	Size      int64    // bytes
	SHA256    string   // hex digest of the file's bytes
	Delimiter string   // CSV: the field delimiter
	Encoding  string   // CSV: the canonical name of its encoding (Encodings)
	Gzip      bool     // CSV: gzip-compressed
	Columns   []string // column names as stored (duplicates made unique)
	Warnings  []string

	types         []string // Parquet: DuckDB type of each column
	mapping       Mapping  // resolved before the load's transaction starts
	oneColumnHint string   // CSV: the header is one column holding another delimiter

	stage      string // CSV: the temporary table its records were read into
	stageFirst int64  // the first rowid of stage
	rejects    string // CSV: the temporary table of records the reader could not take

	sheet    *xlsxin.Table // XLSX: the sheet read (see xlsx.go)
	sheetCSV string        // XLSX: the temporary CSV of its rows, while staged
	declared string        // CSV: the encoding the options named, "" when none
	utf8Copy string        // CSV: the temporary UTF-8 copy the reader reads, if any
}

// ExpandPaths turns the command-line arguments (files and glob patterns)
// into a sorted list of distinct files. A pattern that matches nothing is an
// error: an analyst who typed a glob expects files behind it.
func ExpandPaths(args []string) ([]string, error) {
	seen := map[string]bool{}
	var out []string
	for _, a := range args {
		var matches []string
		// A name that is a file is that file, whatever characters it
		// holds: data[1].csv is not a pattern for data1.csv.
		if st, err := os.Stat(a); err == nil && !st.IsDir() {
			matches = []string{a}
		} else if strings.ContainsAny(a, "*?[") {
			m, err := filepath.Glob(a)
			if err != nil {
				return nil, fmt.Errorf("pattern %q: %w", a, err)
			}
			if len(m) == 0 {
				return nil, fmt.Errorf("pattern %q matches no file", a)
			}
			sort.Strings(m)
			matches = m
		} else {
			matches = []string{a}
		}
		for _, m := range matches {
			abs, err := filepath.Abs(m)
			if err != nil {
				return nil, err
			}
			st, err := os.Stat(abs)
			if err != nil {
				return nil, fmt.Errorf("%s: %w", m, unwrapPathError(err))
			}
			if st.IsDir() {
				return nil, fmt.Errorf("%s: is a folder; give files or a pattern such as %s", m, filepath.Join(m, "*.csv"))
			}
			if !seen[abs] {
				seen[abs] = true
				out = append(out, abs)
			}
		}
	}
	if len(out) == 0 {
		return nil, errors.New("no input files given")
	}
	return out, nil
}

// ExactPath escapes the glob characters of a path, so that DuckDB's
// readers, which expand * ? [ in the names they are given, read that one
// file: leadline has expanded the patterns itself, once. Each of the
// three becomes a bracket class holding it alone ([[], [?], [*]), which
// DuckDB's glob reads as the character.
func ExactPath(p string) string {
	if !strings.ContainsAny(p, "*?[") {
		return p
	}
	var b strings.Builder
	for _, r := range p {
		switch r {
		case '*', '?', '[':
			b.WriteByte('[')
			b.WriteRune(r)
			b.WriteByte(']')
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

func unwrapPathError(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// FormatOf tells the format from the file name.
func FormatOf(path string) (format string, gz bool, err error) {
	lower := strings.ToLower(path)
	if strings.HasSuffix(lower, ".gz") {
		gz = true
		lower = strings.TrimSuffix(lower, ".gz")
	}
	switch filepath.Ext(lower) {
	case ".parquet", ".pq":
		if gz {
			return "", false, fmt.Errorf("%s: gzip around a Parquet file is not supported; Parquet compresses itself", path)
		}
		return "parquet", false, nil
	case ".csv", ".tsv", ".txt", ".tab", ".dsv", "":
		return "csv", gz, nil
	case ".xlsx", ".xlsm", ".xls":
		return xlsxFormat(path, lower, gz)
	}
	return "", false, fmt.Errorf("%s: unknown file type %q (leadline reads .csv, .tsv, .txt, their .gz, .parquet and .xlsx)", path, filepath.Ext(lower))
}

// Hash returns the file's size and SHA-256.
func Hash(path string) (int64, string, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, "", err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, bufio.NewReaderSize(f, 1<<20))
	if err != nil {
		return 0, "", fmt.Errorf("%s: reading: %w", path, err)
	}
	return n, hex.EncodeToString(h.Sum(nil)), nil
}

// ExamineCSV reads the head of a CSV file: encoding (from a byte-order mark
// or the option), the delimiter (the option, the extension, or the most
// frequent of , ; tab | in the header line) and the column names. It does
// not parse the body: DuckDB's reader does that.
func ExamineCSV(path string, delim, encoding string) (*Source, error) {
	s := &Source{Path: path, Name: filepath.Base(path), Format: "csv"}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var r io.Reader = f
	if strings.HasSuffix(strings.ToLower(path), ".gz") {
		gz, err := gzip.NewReader(f)
		if err != nil {
			return nil, fmt.Errorf("%s: not a readable gzip file: %v", path, err)
		}
		s.Gzip = true
		r = gz
	}
	head, err := readHead(r, 256<<10)
	n := len(head)
	if err != nil {
		if s.Gzip {
			return nil, fmt.Errorf("%s: not a readable gzip file: %v (is the file cut short?)", path, err)
		}
		return nil, fmt.Errorf("%s: reading: %v", path, err)
	}
	if len(bytes.TrimSpace(head)) == 0 {
		return nil, fmt.Errorf("%s: the file is empty", path)
	}
	// A header longer than the head read so far (thousands of long column
	// names) is read on to its end, never cut.
	if len(head) == 256<<10 && bytes.IndexAny(head, "\r\n") < 0 {
		more, err := readHead(r, maxHeader-len(head))
		if err != nil {
			return nil, fmt.Errorf("%s: reading: %v", path, err)
		}
		head = append(head, more...)
		if bytes.IndexAny(head, "\r\n") < 0 && len(head) == maxHeader {
			return nil, fmt.Errorf("%s: line 1: the header has no line end within its first %d MiB; is it a CSV file? (give --delimiter if the delimiter is not among , ; tab |)", path, maxHeader>>20)
		}
	}
	if what := notText(head); what != "" {
		return nil, fmt.Errorf("%s: %s", path, what)
	}
	// Encoding: a byte-order mark decides; otherwise the option; otherwise UTF-8.
	s.declared, err = NormalizeEncoding(encoding)
	if err != nil {
		return nil, fmt.Errorf("%s: %v", path, err)
	}
	text, warn, err := s.decodeHead(head)
	if err != nil {
		return nil, fmt.Errorf("%s: %v", path, err)
	}
	if warn != "" {
		s.Warnings = append(s.Warnings, warn)
	}
	firstLine := text
	if i := bytes.IndexAny(text, "\r\n"); i >= 0 {
		firstLine = text[:i]
	}
	// A spreadsheet's delimiter hint: the reader would take it for the
	// header, and the real header for data.
	if t := bytes.TrimSpace(firstLine); len(t) >= 4 && len(t) <= 6 && strings.EqualFold(string(t[:4]), "sep=") {
		d := string(t[4:])
		if d == "" || d == "\t" {
			d = `\t`
		}
		return nil, fmt.Errorf("%s: line 1: %q is a spreadsheet's delimiter hint, not a header; delete that line (e.g. tail -n +2 %s > %s) and load the copy with --delimiter %s",
			path, string(t), shellQuote(s.Name), shellQuote(strings.TrimSuffix(s.Name, filepath.Ext(s.Name))+"_nosep.csv"), shellQuote(d))
	}
	// A NUL byte in the header means a binary file or UTF-16 without a
	// byte-order mark. A NUL further down is data: the reader keeps it as
	// sent in text columns, and an amount holding one is rejected.
	if bytes.IndexByte(firstLine, 0) >= 0 || bytes.Count(text, []byte{0}) > len(text)/8 {
		return nil, fmt.Errorf("%s: line 1: NUL bytes in the header: %s", path, nulHint(head))
	}
	if i := bytes.IndexByte(text, 0); i >= 0 {
		s.Warnings = append(s.Warnings, fmt.Sprintf("physical line %d holds a NUL byte; kept as sent in text columns (an amount holding one is rejected)", bytes.Count(text[:i], []byte{'\n'})+1))
	}
	if s.Encoding == "utf-8" && !utf8.Valid(firstLine) {
		enc, why := likelyFromHead(firstLine)
		return nil, fmt.Errorf("%s: line 1: the header is not valid UTF-8; the file is most likely %s (%s): give --encoding %s", path, enc, why, enc)
	}
	s.Delimiter = delim
	if s.Delimiter == "" {
		s.Delimiter = guessDelimiter(path, firstLine)
	}
	if s.Delimiter == `\t` {
		s.Delimiter = "\t"
	}
	if len([]rune(s.Delimiter)) != 1 {
		return nil, fmt.Errorf("--delimiter %q: give a single character", s.Delimiter)
	}
	cr := csv.NewReader(bytes.NewReader(firstLine))
	cr.Comma = []rune(s.Delimiter)[0]
	cr.LazyQuotes = true
	cr.FieldsPerRecord = -1
	rec, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("%s: line 1: cannot read the header: %v", path, err)
	}
	var warns []string
	s.Columns, warns = cleanNames(rec)
	s.Warnings = append(s.Warnings, warns...)
	if len(s.Columns) < 1 {
		return nil, fmt.Errorf("%s: line 1: no columns in the header", path)
	}
	if len(s.Columns) == 1 {
		if d := otherDelimiter(firstLine, s.Delimiter); d != "" {
			s.oneColumnHint = fmt.Sprintf("the header reads as the single column %q with delimiter %s, but it holds %s: give --delimiter %s", s.Columns[0], showDelim(s.Delimiter), showDelim(d), shellQuote(flagDelim(d)))
			s.Warnings = append(s.Warnings, s.oneColumnHint)
		}
	}
	if n < len(head) && len(bytes.TrimSpace(text[len(firstLine):])) == 0 {
		return nil, fmt.Errorf("%s: has a header but no data rows", path)
	}
	return s, nil
}

// maxHeader is the longest header line read (the reader's max_line_size).
const maxHeader = 16 << 20

// notText recognises files of another kind under a CSV name by their first
// bytes, and says what they look like.
func notText(head []byte) string {
	t := bytes.TrimLeft(bytes.TrimPrefix(head, []byte{0xEF, 0xBB, 0xBF}), " \t\r\n")
	switch {
	case bytes.HasPrefix(head, []byte("PK\x03\x04")):
		return "line 1: the file is a ZIP archive, as an Excel workbook (.xlsx) is, not CSV text; if it is a workbook, give it its .xlsx name (leadline reads those), or save the sheet as CSV (UTF-8) and load that"
	case bytes.HasPrefix(head, []byte{0xD0, 0xCF, 0x11, 0xE0}):
		return "line 1: the file is an old Excel workbook (.xls), not CSV text; save the sheet as CSV (UTF-8) and load that"
	case bytes.HasPrefix(head, []byte("PAR1")):
		return "line 1: the file is Parquet, not CSV text; give it a .parquet name and load it again"
	case bytes.HasPrefix(head, []byte{0x1F, 0x8B}):
		return "line 1: the file is gzip-compressed; give it a .gz name (e.g. ledger.csv.gz) and load it again"
	case bytes.HasPrefix(head, []byte("%PDF")):
		return "line 1: the file is a PDF document, not CSV text; export the data as CSV"
	case len(t) > 0 && (t[0] == '{' || t[0] == '[' && len(t) > 1 && (t[1] == '{' || t[1] == '"' || t[1] == '\n' || t[1] == '\r' || t[1] == ' ')):
		return "line 1: the file looks like JSON, not CSV text (it starts with " + string(t[:1]) + "); export the data as CSV, or convert it first"
	}
	return ""
}

// readHead reads up to max bytes, telling a short file (no error) from a
// stream that breaks off (a truncated gzip member: the error).
func readHead(r io.Reader, max int) ([]byte, error) {
	buf := make([]byte, max)
	n := 0
	for n < max {
		k, err := r.Read(buf[n:])
		n += k
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return buf[:n], err
		}
	}
	return buf[:n], nil
}

// otherDelimiter returns a likely delimiter, other than the one in use,
// that the header line holds outside quotes.
func otherDelimiter(line []byte, used string) string {
	for _, d := range []string{",", ";", "\t", "|"} {
		if d != used && countOutsideQuotes(line, d[0]) > 0 {
			return d
		}
	}
	return ""
}

func showDelim(d string) string {
	if d == "\t" {
		return "tab"
	}
	return fmt.Sprintf("%q", d)
}

func flagDelim(d string) string {
	if d == "\t" {
		return `\t`
	}
	return d
}

func guessDelimiter(path string, line []byte) string {
	lower := strings.ToLower(strings.TrimSuffix(strings.ToLower(path), ".gz"))
	if strings.HasSuffix(lower, ".tsv") || strings.HasSuffix(lower, ".tab") {
		return "\t"
	}
	best, bestN := ",", 0
	for _, d := range []string{",", ";", "\t", "|"} {
		n := countOutsideQuotes(line, d[0])
		if n > bestN {
			best, bestN = d, n
		}
	}
	return best
}

func countOutsideQuotes(line []byte, d byte) int {
	in := false
	n := 0
	for _, b := range line {
		switch {
		case b == '"':
			in = !in
		case b == d && !in:
			n++
		}
	}
	return n
}

// cleanNames trims header names, names empty ones column_N and makes
// duplicates unique with a _2, _3 suffix, saying so in a warning.
func cleanNames(rec []string) ([]string, []string) {
	var warns []string
	seen := map[string]int{}
	out := make([]string, len(rec))
	for i, n := range rec {
		n = strings.TrimSpace(strings.TrimPrefix(n, "\uFEFF"))
		if n == "" {
			n = fmt.Sprintf("column_%d", i+1)
			warns = append(warns, fmt.Sprintf("column %d has no name in the header; called it %s", i+1, n))
		}
		key := strings.ToLower(n)
		if seen[key] > 0 {
			base := n
			for k := seen[key] + 1; ; k++ {
				n = fmt.Sprintf("%s_%d", base, k)
				if seen[strings.ToLower(n)] == 0 {
					break
				}
			}
			warns = append(warns, fmt.Sprintf("column %d repeats the name %q; kept as %s", i+1, base, n))
			seen[key]++
			key = strings.ToLower(n)
		}
		seen[key]++
		out[i] = n
	}
	return out, warns
}
