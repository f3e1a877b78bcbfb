package load

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"unicode/utf8"

	"golang.org/x/text/encoding"
	"golang.org/x/text/encoding/charmap"
	"golang.org/x/text/encoding/unicode"
	"golang.org/x/text/transform"

	"github.com/leadline/leadline/engine/field"
)

// DuckDB's CSV reader takes UTF-8 (and, natively, only UTF-16 and
// Latin-1 besides). Every other text encoding is transcoded to UTF-8 by
// leadline itself, streaming into a temporary file that the reader reads
// in the original's place; the file's name, SHA-256 and line numbers stay
// those of the original (transcoding keeps every line break, so line N of
// the copy is line N of the original).

// Encodings are the names --encoding accepts, canonical first, each with
// its other spellings.
var Encodings = []struct {
	Name    string
	Aliases []string
	About   string
}{
	{"utf-8", []string{"utf8"}, "Unicode, 1 to 4 bytes a character (the default)"},
	{"utf-16", []string{"utf16"}, "Unicode in 2-byte units: the byte-order mark decides the byte order, else little-endian"},
	{"utf-16le", []string{"utf16le", "utf-16-le"}, "UTF-16 little-endian"},
	{"utf-16be", []string{"utf16be", "utf-16-be"}, "UTF-16 big-endian"},
	{"windows-1252", []string{"cp1252", "windows1252", "win1252", "cp-1252"}, "Western European Windows code page (euro sign 0x80)"},
	{"iso-8859-1", []string{"latin-1", "latin1", "iso8859-1", "iso88591", "iso-8859-1"}, "Latin-1 (bytes 0x80-0x9F are control codes)"},
	{"iso-8859-15", []string{"latin-9", "latin9", "iso8859-15", "iso885915"}, "Latin-9 (euro sign 0xA4)"},
}

// EncodingNames lists the accepted names for messages and help.
func EncodingNames() string {
	var parts []string
	for _, e := range Encodings {
		n := e.Name
		if len(e.Aliases) > 0 && e.Name != "utf-8" && !strings.HasPrefix(e.Name, "utf-16") {
			n += " (" + e.Aliases[0] + ")"
		}
		parts = append(parts, n)
	}
	return strings.Join(parts, ", ")
}

// NormalizeEncoding returns the canonical name of an --encoding value
// ("" stays ""), or a *field.Error listing the accepted names.
func NormalizeEncoding(s string) (string, error) {
	t := strings.ToLower(strings.TrimSpace(s))
	if t == "" {
		return "", nil
	}
	for _, e := range Encodings {
		if t == e.Name {
			return e.Name, nil
		}
		for _, a := range e.Aliases {
			if t == a {
				return e.Name, nil
			}
		}
	}
	return "", &field.Error{Field: "encoding", Value: strconv.Quote(s), Reason: "unknown encoding; give one of " + EncodingNames()}
}

// eightBit is the decoder of a one-byte encoding, nil for others.
func eightBit(enc string) *charmap.Charmap {
	switch enc {
	case "windows-1252":
		return charmap.Windows1252
	case "iso-8859-1":
		return charmap.ISO8859_1
	case "iso-8859-15":
		return charmap.ISO8859_15
	}
	return nil
}

// decoder turns the file's bytes into UTF-8; nil for UTF-8 itself.
func decoder(enc string) *encoding.Decoder {
	switch enc {
	case "utf-16le":
		return unicode.UTF16(unicode.LittleEndian, unicode.UseBOM).NewDecoder()
	case "utf-16be":
		return unicode.UTF16(unicode.BigEndian, unicode.UseBOM).NewDecoder()
	}
	if cm := eightBit(enc); cm != nil {
		return cm.NewDecoder()
	}
	return nil
}

// utf16Pattern tells UTF-16 without a byte-order mark from the NUL bytes of
// its ASCII characters: little-endian puts them in odd positions, big-endian
// in even ones. "" when the head shows neither.
func utf16Pattern(head []byte) string {
	n := min(len(head), 4096) &^ 1
	if n < 4 {
		return ""
	}
	var even, odd int
	for i := 0; i < n; i += 2 {
		if head[i] == 0 {
			even++
		}
		if head[i+1] == 0 {
			odd++
		}
	}
	pairs := n / 2
	switch {
	case odd*4 >= pairs && even*20 < odd:
		return "utf-16le"
	case even*4 >= pairs && odd*20 < even:
		return "utf-16be"
	}
	return ""
}

// utf16Label names utf-16le or utf-16be in words.
func utf16Label(enc string) string {
	if enc == "utf-16be" {
		return "UTF-16 big-endian"
	}
	return "UTF-16 little-endian"
}

// settleEncoding settles the encoding of a CSV file from its first bytes and
// the declared name (already normalized, "" when none), and returns the
// head as UTF-8. A byte-order mark that contradicts the declared encoding
// is a wrong choice, and refused.
func settleEncoding(head []byte, declared string) (enc string, text []byte, warn string, err error) {
	pattern := utf16Pattern(head)
	switch {
	case bytes.HasPrefix(head, []byte{0xEF, 0xBB, 0xBF}):
		if declared != "" && declared != "utf-8" {
			return "", nil, "", fmt.Errorf("line 1: the file starts with a UTF-8 byte-order mark (EF BB BF), but --encoding %s was given; give --encoding utf-8 or none", declared)
		}
		return "utf-8", head[3:], "", nil
	case bytes.HasPrefix(head, []byte{0xFF, 0xFE}), bytes.HasPrefix(head, []byte{0xFE, 0xFF}):
		enc, mark := "utf-16le", "FF FE"
		if head[0] == 0xFE {
			enc, mark = "utf-16be", "FE FF"
		}
		if declared != "" && declared != "utf-16" && declared != enc {
			return "", nil, "", fmt.Errorf("line 1: the file starts with the byte-order mark %s of %s, but --encoding %s was given; give --encoding %s or none", mark, utf16Label(enc), declared, enc)
		}
		declared = enc
	case declared == "utf-16":
		switch pattern {
		case "utf-16be":
			return "", nil, "", fmt.Errorf("line 1: no byte-order mark, and the NUL bytes of the first characters sit where UTF-16 big-endian puts them, while --encoding utf-16 reads little-endian without a mark; give --encoding utf-16be")
		case "":
			warn = "no byte-order mark: read as UTF-16 little-endian (--encoding utf-16be for big-endian)"
		}
		declared = "utf-16le"
	case declared == "utf-16le" || declared == "utf-16be":
		if pattern != "" && pattern != declared {
			return "", nil, "", fmt.Errorf("line 1: --encoding %s was given, but the NUL bytes of the first characters sit where %s puts them; give --encoding %s", declared, pattern, pattern)
		}
	case declared == "":
		declared = "utf-8"
	}
	if d := decoder(declared); d != nil {
		h := head
		if strings.HasPrefix(declared, "utf-16") {
			h = h[:len(h)&^1]
		}
		text, _, _ = transform.Bytes(d, h)
		return declared, text, warn, nil
	}
	return declared, head, warn, nil
}

// decodeHead settles the source's encoding and returns its head as UTF-8.
func (s *Source) decodeHead(head []byte) (text []byte, warn string, err error) {
	s.Encoding, text, warn, err = settleEncoding(head, s.declared)
	return text, warn, err
}

// nulHint says what NUL bytes in a header mean.
func nulHint(head []byte) string {
	if p := utf16Pattern(head); p != "" {
		return fmt.Sprintf("the file is most likely UTF-16 without a byte-order mark (its NUL bytes sit where %s puts them): give --encoding %s", p, p)
	}
	return "not a text file, or UTF-16 without a byte-order mark (then give --encoding utf-16le or utf-16be)"
}

// evidence gathers, in one pass over a file's bytes, what tells its
// encoding: invalid UTF-8, bytes 0x80-0x9F (letters and signs in
// Windows-1252, control codes in ISO-8859-1 and -15), the bytes where
// ISO-8859-15 differs from ISO-8859-1 (0xA4 is the euro sign in the
// first and ¤ in the second), each with the line it was first seen on.
type evidence struct {
	line  int64 // current physical line, from 1
	carry []byte

	invalidLine int64 // first line holding invalid UTF-8, 0 if none
	invalidByte byte
	invalid     int64 // bytes that are not part of valid UTF-8
	multi       int64 // valid UTF-8 sequences of two or more bytes
	multiLine   int64
	multiText   string

	c1          int64 // bytes 0x80-0x9F
	c1Line      int64
	c1Byte      byte
	undefLine   int64 // first byte undefined in Windows-1252 (0x81 0x8D 0x8F 0x90 0x9D)
	undefByte   byte
	latin9      int64 // bytes where ISO-8859-15 differs from ISO-8859-1
	latin9Line  int64
	latin9Byte  byte
	euro15      int64 // 0xA4: € in ISO-8859-15
	euroLine    int64
	highLetters int64 // bytes 0xA0-0xFF
}

func newEvidence() *evidence { return &evidence{line: 1} }

func (e *evidence) Write(p []byte) (int, error) {
	e.feed(p, false)
	return len(p), nil
}

func (e *evidence) high(b byte) {
	switch {
	case b >= 0x80 && b <= 0x9F:
		e.c1++
		if e.c1Line == 0 {
			e.c1Line, e.c1Byte = e.line, b
		}
		if (b == 0x81 || b == 0x8D || b == 0x8F || b == 0x90 || b == 0x9D) && e.undefLine == 0 {
			e.undefLine, e.undefByte = e.line, b
		}
	default:
		e.highLetters++
		switch b {
		case 0xA4, 0xA6, 0xA8, 0xB4, 0xB8, 0xBC, 0xBD, 0xBE:
			e.latin9++
			if e.latin9Line == 0 {
				e.latin9Line, e.latin9Byte = e.line, b
			}
			if b == 0xA4 {
				e.euro15++
				if e.euroLine == 0 {
					e.euroLine = e.line
				}
			}
		}
	}
}

// feed takes the next bytes; final marks the end of the file, when an
// incomplete UTF-8 sequence left over is invalid.
func (e *evidence) feed(p []byte, final bool) {
	buf := p
	if len(e.carry) > 0 {
		buf = append(e.carry, p...)
		e.carry = nil
	}
	for i := 0; i < len(buf); {
		b := buf[i]
		if b < 0x80 {
			if b == '\n' {
				e.line++
			}
			i++
			continue
		}
		if !final && !utf8.FullRune(buf[i:]) {
			e.carry = append([]byte(nil), buf[i:]...)
			return
		}
		r, size := utf8.DecodeRune(buf[i:])
		if r == utf8.RuneError && size <= 1 {
			if e.invalidLine == 0 {
				e.invalidLine, e.invalidByte = e.line, b
			}
			e.invalid++
			e.high(b)
			i++
			continue
		}
		e.multi++
		if e.multiLine == 0 {
			e.multiLine, e.multiText = e.line, string(buf[i:i+size])
		}
		for _, c := range buf[i : i+size] {
			e.high(c)
		}
		i += size
	}
}

func (e *evidence) finish() { e.feed(nil, true) }

// verdict names the likely encoding of a file without a byte-order mark
// or UTF-16 pattern, and why.
func (e *evidence) verdict() (enc, why string) {
	switch {
	case e.invalidLine == 0 && e.multi == 0:
		return "utf-8", "every byte is ASCII, which UTF-8 and the Western one-byte encodings read alike"
	case e.invalidLine != 0 && e.multi > e.invalid:
		// One-byte text rarely forms valid UTF-8 by chance: more valid
		// characters than stray bytes is UTF-8 with a few bytes damaged.
		return "utf-8", fmt.Sprintf("%d characters of two or more bytes form valid UTF-8 (the first, %q, on line %d), against %d bytes that do not (the first, 0x%02X, on line %d): UTF-8 with damaged bytes, whose records are rejected",
			e.multi, e.multiText, e.multiLine, e.invalid, e.invalidByte, e.invalidLine)
	case e.invalidLine == 0:
		return "utf-8", fmt.Sprintf("all bytes form valid UTF-8, with %d characters of two or more bytes (the first, %q, on line %d)", e.multi, e.multiText, e.multiLine)
	case e.c1 > 0 && e.undefLine == 0:
		return "windows-1252", fmt.Sprintf("not valid UTF-8 (line %d, byte 0x%02X); %d byte(s) in 0x80-0x9F (the first, 0x%02X on line %d, is %s in Windows-1252 and a control code in ISO-8859-1 and -15)",
			e.invalidLine, e.invalidByte, e.c1, e.c1Byte, e.c1Line, cp1252Name(e.c1Byte))
	case e.c1 > 0:
		return "iso-8859-1", fmt.Sprintf("not valid UTF-8 (line %d, byte 0x%02X); byte 0x%02X on line %d is undefined in Windows-1252, and ISO-8859-1 keeps it as a control code",
			e.invalidLine, e.invalidByte, e.undefByte, e.undefLine)
	case e.euro15 > 0:
		return "iso-8859-15", fmt.Sprintf("not valid UTF-8 (line %d, byte 0x%02X); no bytes in 0x80-0x9F, where Windows-1252 has its euro sign, but %d bytes 0xA4 (the first on line %d), the euro sign in ISO-8859-15 and ¤ in Windows-1252 and ISO-8859-1",
			e.invalidLine, e.invalidByte, e.euro15, e.euroLine)
	}
	why = fmt.Sprintf("not valid UTF-8 (line %d, byte 0x%02X); no bytes in 0x80-0x9F, so Windows-1252 and ISO-8859-1 read this file alike", e.invalidLine, e.invalidByte)
	if e.latin9 > 0 {
		why += fmt.Sprintf(" (ISO-8859-15 would read byte 0x%02X on line %d otherwise)", e.latin9Byte, e.latin9Line)
	}
	return "windows-1252", why
}

// cp1252Name says what a byte 0x80-0x9F is in Windows-1252.
func cp1252Name(b byte) string {
	s, err := charmap.Windows1252.NewDecoder().Bytes([]byte{b})
	if err != nil || string(s) == "\uFFFD" {
		return "undefined"
	}
	return fmt.Sprintf("%q", string(s))
}

// Detection is the likely encoding of a file and the evidence for it.
type Detection struct {
	Encoding string `json:"encoding"`
	Why      string `json:"why"`
}

// DetectEncoding reads the whole file (through gzip when it is compressed)
// and names its likely encoding with the evidence.
func DetectEncoding(path string) (Detection, error) {
	rc, err := openText(path)
	if err != nil {
		return Detection{}, err
	}
	defer rc.Close()
	br := bufio.NewReaderSize(rc, 1<<20)
	head, _ := br.Peek(4096)
	switch {
	case bytes.HasPrefix(head, []byte{0xEF, 0xBB, 0xBF}):
		return Detection{"utf-8", "the file starts with the UTF-8 byte-order mark EF BB BF"}, nil
	case bytes.HasPrefix(head, []byte{0xFF, 0xFE}):
		return Detection{"utf-16le", "the file starts with the UTF-16 little-endian byte-order mark FF FE"}, nil
	case bytes.HasPrefix(head, []byte{0xFE, 0xFF}):
		return Detection{"utf-16be", "the file starts with the UTF-16 big-endian byte-order mark FE FF"}, nil
	}
	if p := utf16Pattern(head); p != "" {
		where := "odd"
		if p == "utf-16be" {
			where = "even"
		}
		return Detection{p, fmt.Sprintf("no byte-order mark, but NUL bytes in %s positions of the first %d bytes, as ASCII characters have in %s", where, len(head)&^1, utf16Label(p))}, nil
	}
	ev := newEvidence()
	if _, err := io.Copy(ev, br); err != nil {
		return Detection{}, fmt.Errorf("%s: reading: %v", path, err)
	}
	ev.finish()
	enc, why := ev.verdict()
	return Detection{enc, why}, nil
}

// openText opens a file, through gzip when its name ends in .gz.
func openText(path string) (io.ReadCloser, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	if !strings.HasSuffix(strings.ToLower(path), ".gz") {
		return f, nil
	}
	gz, err := gzip.NewReader(bufio.NewReaderSize(f, 1<<20))
	if err != nil {
		f.Close()
		return nil, fmt.Errorf("%s: not a readable gzip file: %v", path, err)
	}
	return struct {
		io.Reader
		io.Closer
	}{gz, f}, nil
}

// The reader's view of a CSV source: the UTF-8 copy when there is one.
func (s *Source) csvPath() string {
	if s.utf8Copy != "" {
		return s.utf8Copy
	}
	return s.Path
}

func (s *Source) csvEncoding() string { return "utf-8" }

func (s *Source) csvGzip() bool { return s.Gzip && s.utf8Copy == "" }

// prepareText makes a CSV source readable by DuckDB's reader: a file in
// another encoding is transcoded to a temporary UTF-8 copy (limit > 0
// stops after about that many bytes of output, at a line end, for a
// sample); a file declared UTF-8 is checked to be so. A file that the
// declared encoding does not fit is refused, naming the first line that
// shows it and the likely encoding; nothing is loaded.
func (s *Source) prepareText(limit int64) error {
	if s.Format != "csv" {
		return nil
	}
	dec := decoder(s.Encoding)
	if dec == nil {
		if s.declared != "utf-8" || limit > 0 {
			return nil
		}
		return s.checkUTF8()
	}
	rc, err := openText(s.Path)
	if err != nil {
		return err
	}
	defer rc.Close()
	out, err := os.CreateTemp("", "leadline-utf8-*.csv")
	if err != nil {
		return fmt.Errorf("%s: creating the UTF-8 copy: %v", s.Path, err)
	}
	s.utf8Copy = out.Name()
	var src io.Reader = bufio.NewReaderSize(rc, 1<<20)
	var ev *evidence
	if eightBit(s.Encoding) != nil {
		ev = newEvidence()
		src = io.TeeReader(src, ev)
	}
	bw := bufio.NewWriterSize(out, 1<<20)
	var w io.Writer = bw
	var cut *cutWriter
	if limit > 0 {
		cut = &cutWriter{w: bw, limit: limit}
		w = cut
	}
	_, err = io.Copy(w, transform.NewReader(src, dec))
	if errors.Is(err, errCut) {
		err = nil
	}
	if err == nil {
		err = bw.Flush()
	}
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		s.removeText()
		return fmt.Errorf("%s: transcoding from %s to UTF-8: %v; nothing was loaded", s.Path, s.Encoding, err)
	}
	if ev != nil && cut == nil {
		ev.finish()
		if msg := wrongEightBit(s.Encoding, ev); msg != "" {
			s.removeText()
			return fmt.Errorf("%s: %s; nothing was loaded", s.Path, msg)
		}
	}
	return nil
}

// wrongEightBit says why the evidence contradicts a declared one-byte
// encoding, "" when it does not.
func wrongEightBit(enc string, ev *evidence) string {
	switch {
	case enc != "windows-1252" && ev.c1 > 0:
		alt := "--encoding windows-1252"
		if ev.undefLine != 0 {
			alt = "leadline inspect to see which encoding fits"
		}
		return fmt.Sprintf("line %d: byte 0x%02X is a control code in %s, which --encoding %s reads; the file is most likely Windows-1252 (cp1252), where it is %s; give %s",
			ev.c1Line, ev.c1Byte, strings.ToUpper(enc), enc, cp1252Name(ev.c1Byte), alt)
	case enc == "windows-1252" && ev.undefLine != 0:
		return fmt.Sprintf("line %d: byte 0x%02X is undefined in Windows-1252, so the file is not Windows-1252 as --encoding windows-1252 says; it is more likely ISO-8859-1 (--encoding iso-8859-1; leadline inspect shows the evidence)",
			ev.undefLine, ev.undefByte)
	case ev.invalidLine == 0 && ev.multi > 0:
		return fmt.Sprintf("line %d: %q is a valid UTF-8 character, and the whole file is valid UTF-8 (%d such characters), which --encoding %s would turn into other letters; the file is most likely UTF-8: give --encoding utf-8 or none",
			ev.multiLine, ev.multiText, ev.multi, enc)
	case ev.multi > ev.invalid:
		return fmt.Sprintf("line %d: %q is a valid UTF-8 character, and the file holds %d such against %d bytes that are not UTF-8 (the first on line %d), which --encoding %s would turn into other letters; the file is most likely UTF-8 with damaged bytes: give --encoding utf-8 or none (those records are then rejected)",
			ev.multiLine, ev.multiText, ev.multi, ev.invalid, ev.invalidLine, enc)
	}
	return ""
}

// checkUTF8 reads a file declared UTF-8 whole and refuses it at its first
// invalid byte, naming the likely encoding.
func (s *Source) checkUTF8() error {
	rc, err := openText(s.Path)
	if err != nil {
		return err
	}
	defer rc.Close()
	ev := newEvidence()
	if _, err := io.Copy(ev, bufio.NewReaderSize(rc, 1<<20)); err != nil {
		return fmt.Errorf("%s: reading: %v", s.Path, err)
	}
	ev.finish()
	if ev.invalidLine == 0 {
		return nil
	}
	enc, why := ev.verdict()
	return fmt.Errorf("%s: line %d: byte 0x%02X is not valid UTF-8, which --encoding utf-8 says the file is; it is most likely %s (%s): give --encoding %s; nothing was loaded",
		s.Path, ev.invalidLine, ev.invalidByte, enc, why, enc)
}

// removeText deletes the temporary UTF-8 copy.
func (s *Source) removeText() {
	if s.utf8Copy != "" {
		os.Remove(s.utf8Copy)
		s.utf8Copy = ""
	}
}

var errCut = errors.New("sample complete")

// cutWriter passes bytes on until limit, then up to the next line end.
type cutWriter struct {
	w     io.Writer
	limit int64
	n     int64
}

func (c *cutWriter) Write(p []byte) (int, error) {
	if c.n < c.limit {
		k := min(int64(len(p)), c.limit-c.n)
		if _, err := c.w.Write(p[:k]); err != nil {
			return 0, err
		}
		c.n += k
		if k == int64(len(p)) {
			return len(p), nil
		}
		p = p[k:]
	}
	if i := bytes.IndexByte(p, '\n'); i >= 0 {
		if _, err := c.w.Write(p[:i+1]); err != nil {
			return 0, err
		}
		return 0, errCut
	}
	_, err := c.w.Write(p)
	return len(p), err
}

// likelyFromHead names the likely encoding from the head alone, for the
// refusal of a header that is not UTF-8.
func likelyFromHead(head []byte) (string, string) {
	ev := newEvidence()
	ev.feed(head, true)
	return ev.verdict()
}

// encodingAdvice names the likely encoding of a file whose records were
// rejected as not valid UTF-8 when no encoding was given, from the
// evidence of the whole file (DetectEncoding); "" otherwise.
func encodingAdvice(src *Source, fr *FileReport) string {
	if src == nil || src.Format != "csv" || src.declared != "" {
		return ""
	}
	bad := false
	for _, r := range fr.RejectReasons {
		bad = bad || strings.Contains(r.Reason, "not valid UTF-8")
	}
	if !bad {
		return ""
	}
	d, err := DetectEncoding(src.Path)
	if err != nil || d.Encoding == "utf-8" {
		return ""
	}
	return fmt.Sprintf(" The file is most likely %s (%s): give --encoding %s.", d.Encoding, d.Why, d.Encoding)
}
