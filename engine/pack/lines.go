package pack

import (
	"strconv"
	"strings"
)

// lineIndex knows the line of every key in a pack file, by path:
// "pack.name", "source[0].columns.amount", "check[2].params.min",
// "limits.values". The TOML decoder keeps key positions to itself, so the
// index comes from a small scan of its own over a file that has already
// parsed: table headers, array-of-tables headers (counted per path) and
// key = value lines, skipping strings, multi-line strings, arrays and
// inline tables. Array elements that sit on lines of their own get a path
// with their index ("limits.values[1]").
type lineIndex struct {
	lines map[string]int
	order []string
}

func (ix *lineIndex) set(path string, line int) {
	if _, ok := ix.lines[path]; !ok {
		ix.order = append(ix.order, path)
		ix.lines[path] = line
	}
}

// Line returns the line of path, or of its longest prefix that has one
// (0 when none has).
func (ix *lineIndex) Line(path string) int {
	if ix == nil {
		return 0
	}
	for p := path; p != ""; p = parentPath(p) {
		if n, ok := ix.lines[p]; ok {
			return n
		}
	}
	return 0
}

// Match returns the paths that equal path once array indices are removed
// ("check.sqll" matches "check[0].sqll" and "check[3].sqll"), in file order.
func (ix *lineIndex) Match(path string) []string {
	var out []string
	for _, p := range ix.order {
		// A path ending in an index is an array element, never a key.
		if !strings.HasSuffix(p, "]") && stripIndices(p) == path {
			out = append(out, p)
		}
	}
	return out
}

func parentPath(p string) string {
	if strings.HasSuffix(p, "]") {
		if i := strings.LastIndexByte(p, '['); i > 0 {
			return p[:i]
		}
	}
	if i := strings.LastIndexByte(p, '.'); i > 0 {
		return p[:i]
	}
	return ""
}

func stripIndices(p string) string {
	var b strings.Builder
	depth := 0
	for _, c := range p {
		switch {
		case c == '[':
			depth++
		case c == ']':
			depth--
		case depth == 0:
			b.WriteRune(c)
		}
	}
	return b.String()
}

func joinPath(parts []string) string {
	var b strings.Builder
	for i, p := range parts {
		if i > 0 && !strings.HasPrefix(p, "[") {
			b.WriteByte('.')
		}
		b.WriteString(p)
	}
	return b.String()
}

// indexLines scans the TOML text.
func indexLines(text string) *lineIndex {
	ix := &lineIndex{lines: map[string]int{}}
	s := &scanner{src: text, line: 1}
	var table []string             // current table path parts (with [i] parts)
	arrays := map[string]int{}     // array-of-tables path (resolved) -> next index
	current := map[string]string{} // array-of-tables path without indices -> resolved path of its current element
	resolve := func(keys []string) []string {
		// Each prefix that names an array of tables refers to its latest element.
		var out []string
		for _, k := range keys {
			out = append(out, k)
			if r, ok := current[stripIndices(joinPath(out))]; ok {
				out = []string{r}
			}
		}
		return out
	}
	for !s.eof() {
		s.skipSpaceAndNewlines()
		if s.eof() {
			break
		}
		switch s.peek() {
		case '#':
			s.skipComment()
		case '[':
			line := s.line
			double := strings.HasPrefix(s.src[s.pos:], "[[")
			if double {
				s.pos += 2
			} else {
				s.pos++
			}
			keys := s.keys()
			s.skipTo("]")
			if double {
				s.skipTo("]")
			}
			if double {
				parent := resolve(keys[:len(keys)-1])
				base := joinPath(append(parent, keys[len(keys)-1]))
				i := arrays[base]
				arrays[base] = i + 1
				el := base + "[" + strconv.Itoa(i) + "]"
				current[stripIndices(base)] = el
				ix.set(base, line)
				ix.set(el, line)
				table = []string{el}
			} else {
				table = resolve(keys)
				ix.set(joinPath(table), line)
			}
			s.skipLine()
		default:
			line := s.line
			keys := s.keys()
			if len(keys) == 0 {
				s.skipLine()
				continue
			}
			path := joinPath(append(append([]string{}, table...), keys...))
			ix.set(path, line)
			s.skipSpaces()
			if s.peek() == '=' {
				s.pos++
			}
			s.skipSpaces()
			s.value(ix, path)
		}
	}
	return ix
}

type scanner struct {
	src  string
	pos  int
	line int
}

func (s *scanner) eof() bool { return s.pos >= len(s.src) }

func (s *scanner) peek() byte {
	if s.eof() {
		return 0
	}
	return s.src[s.pos]
}

func (s *scanner) advance() {
	if s.src[s.pos] == '\n' {
		s.line++
	}
	s.pos++
}

func (s *scanner) skipSpaces() {
	for !s.eof() && (s.peek() == ' ' || s.peek() == '\t') {
		s.pos++
	}
}

func (s *scanner) skipSpaceAndNewlines() {
	for !s.eof() && strings.IndexByte(" \t\r\n", s.peek()) >= 0 {
		s.advance()
	}
}

func (s *scanner) skipComment() {
	for !s.eof() && s.peek() != '\n' {
		s.pos++
	}
}

func (s *scanner) skipLine() {
	for !s.eof() && s.peek() != '\n' {
		if s.peek() == '"' || s.peek() == '\'' {
			s.str()
			continue
		}
		s.pos++
	}
}

func (s *scanner) skipTo(c string) {
	s.skipSpaces()
	if strings.HasPrefix(s.src[s.pos:], c) {
		s.pos += len(c)
	}
}

// keys reads a dotted key: bare or quoted parts.
func (s *scanner) keys() []string {
	var out []string
	for {
		s.skipSpaces()
		switch c := s.peek(); {
		case c == '"' || c == '\'':
			start := s.pos
			s.str()
			raw := s.src[start:s.pos]
			if c == '"' {
				if u, err := strconv.Unquote(raw); err == nil {
					out = append(out, u)
				} else {
					out = append(out, strings.Trim(raw, `"`))
				}
			} else {
				out = append(out, strings.Trim(raw, "'"))
			}
		case isBare(c):
			start := s.pos
			for !s.eof() && isBare(s.peek()) {
				s.pos++
			}
			out = append(out, s.src[start:s.pos])
		default:
			return out
		}
		s.skipSpaces()
		if s.peek() != '.' {
			return out
		}
		s.pos++
	}
}

func isBare(c byte) bool {
	return c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_' || c == '-'
}

// str skips one string of any of TOML's four kinds.
func (s *scanner) str() {
	q := s.peek()
	if strings.HasPrefix(s.src[s.pos:], strings.Repeat(string(q), 3)) {
		s.pos += 3
		end := strings.Repeat(string(q), 3)
		for !s.eof() {
			if q == '"' && s.peek() == '\\' {
				s.advance()
				if !s.eof() {
					s.advance()
				}
				continue
			}
			if strings.HasPrefix(s.src[s.pos:], end) {
				s.pos += 3
				for !s.eof() && s.peek() == q { // up to two more quotes belong to the content
					s.pos++
				}
				return
			}
			s.advance()
		}
		return
	}
	s.pos++
	for !s.eof() && s.peek() != '\n' {
		c := s.peek()
		if q == '"' && c == '\\' {
			s.pos += 2
			continue
		}
		s.pos++
		if c == q {
			return
		}
	}
}

// value skips one value, indexing array elements that start a line and
// the keys of inline tables.
func (s *scanner) value(ix *lineIndex, path string) {
	switch s.peek() {
	case '"', '\'':
		s.str()
	case '[':
		s.pos++
		i := 0
		for !s.eof() {
			s.skipSpaceAndNewlines()
			switch s.peek() {
			case '#':
				s.skipComment()
				continue
			case ']':
				s.pos++
				return
			case ',':
				s.pos++
				i++
				continue
			}
			ix.set(path+"["+strconv.Itoa(i)+"]", s.line)
			s.value(ix, path+"["+strconv.Itoa(i)+"]")
		}
	case '{':
		s.pos++
		for !s.eof() {
			s.skipSpaces()
			switch s.peek() {
			case '}':
				s.pos++
				return
			case ',':
				s.pos++
				continue
			case '\n':
				s.advance()
				continue
			}
			line := s.line
			keys := s.keys()
			if len(keys) == 0 {
				s.pos++
				continue
			}
			p := path + "." + strings.Join(keys, ".")
			ix.set(p, line)
			s.skipSpaces()
			if s.peek() == '=' {
				s.pos++
			}
			s.skipSpaces()
			s.value(ix, p)
		}
	default:
		for !s.eof() && strings.IndexByte(",]}\n#", s.peek()) < 0 {
			s.pos++
		}
	}
}
