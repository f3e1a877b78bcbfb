// Package reconcile proves the loaded ledger against the client's own
// totals: a control file of expected totals per key (entity, account,
// currency: rows, debit, credit, net) or a trial balance (opening and
// closing balance per key, so that the expected activity is closing minus
// opening). The comparison is exact (math/big on decimal text, never a
// float), lists every key on one side only, and is stored in the workspace
// (ll_reconciliation, ll_reconciliation_rows) with the control file's name
// and SHA-256.
//
// It owns the reconciliation of the ledger against a control file: reading
// the control totals, comparing them exactly and storing the result.
package reconcile

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math/big"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/amount"
	"github.com/leadline/leadline/engine/field"
)

// KeyColumns are the columns a control file may total by, in the order
// keys are shown. Each is a ledger column of the same name.
var KeyColumns = []string{"entity", "account", "currency"}

// ValueColumns are the totals a control file may give.
var ValueColumns = []string{"rows", "debit", "credit", "net", "opening", "closing"}

// Measures are what is compared per key, in the order shown: rows
// loaded, the sum of positive amounts (debit), the sum of negative amounts
// as a positive number (credit), and the net. A trial balance gives the
// net as closing minus opening.
var Measures = []string{"rows", "debit", "credit", "net"}

// aliases are other common header names of a role (lower case, spaces and
// dashes as underscores). Anything else is mapped with --control-map.
var aliases = map[string]string{
	"row_count": "rows", "count": "rows", "lines": "rows",
	"opening_balance": "opening", "closing_balance": "closing",
	"debits": "debit", "credits": "credit", "net_amount": "net", "activity": "net", "movement": "net",
}

// Options say how to read a control file.
type Options struct {
	// Map names the file's column for a role (entity, account, currency,
	// rows, debit, credit, net, opening, closing) whose header differs.
	Map          map[string]string `json:"map,omitempty"`
	DecimalComma bool              `json:"decimal_comma,omitempty"`
	DecimalPoint bool              `json:"decimal_point,omitempty"`
	// Scale is the ledger's decimal places: an amount with more is refused
	// rather than rounded.
	Scale int `json:"scale"`
}

// IsRole reports whether name is a key or value role of a control file.
func IsRole(name string) bool { return contains(KeyColumns, name) || contains(ValueColumns, name) }

// Control is a control file as read.
type Control struct {
	Path        string            `json:"path"`
	Name        string            `json:"name"`
	SHA256      string            `json:"sha256"`
	SizeBytes   int64             `json:"size_bytes"`
	Shape       string            `json:"shape"` // "totals" or "trial_balance"
	Keys        []string          `json:"keys"`  // key roles present, in KeyColumns order
	Measures    []string          `json:"measures"`
	Columns     map[string]string `json:"columns"` // role -> the file's column
	DecimalMark string            `json:"decimal_mark"`
	Notes       []string          `json:"notes"`
	Lines       []ControlLine     `json:"-"`
}

// ControlLine is one key's expected totals.
type ControlLine struct {
	Line    int
	Key     []string
	Values  map[string]*big.Rat // per measure
	Opening *big.Rat            // trial balance only
	Closing *big.Rat
}

// Read reads and checks a control file. Every problem names the file, the
// line and the flag or column that fixes it.
func Read(path string, o Options) (*Control, error) {
	data, err := readFile(path)
	if err != nil {
		return nil, err
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	src, err := openTable(path, data)
	if err != nil {
		return nil, err
	}
	sum := sha256.Sum256(data)
	c := &Control{Path: abs, Name: filepath.Base(path), SHA256: hex.EncodeToString(sum[:]), SizeBytes: int64(len(data)), Columns: map[string]string{}, Notes: []string{}}
	header, _, err := src.Next()
	if errors.Is(err, io.EOF) {
		return nil, fmt.Errorf("%s: the control file is empty", path)
	}
	if err != nil {
		return nil, err
	}
	index, err := c.roles(path, header, o.Map)
	if err != nil {
		return nil, err
	}
	type rawLine struct {
		line  int
		cells []string
	}
	var raws []rawLine
	for {
		cells, line, err := src.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, err
		}
		raws = append(raws, rawLine{line, cells})
	}
	if len(raws) == 0 {
		return nil, fmt.Errorf("%s: the control file has a header but no rows", path)
	}
	cell := func(r rawLine, role string) string {
		i, ok := index[role]
		if !ok || i >= len(r.cells) {
			return ""
		}
		return strings.TrimSpace(r.cells[i])
	}
	// The decimal mark, from every amount text of the file (as the loader
	// decides a file's mark): never a guess between 1.234 and 1234.
	var texts []markText
	for _, r := range raws {
		for _, role := range []string{"rows", "debit", "credit", "net", "opening", "closing"} {
			if _, ok := index[role]; ok {
				if t := cell(r, role); t != "" {
					texts = append(texts, markText{r.line, role, t})
				}
			}
		}
	}
	comma, mark, err := decimalMark(path, texts, o)
	if err != nil {
		return nil, err
	}
	c.DecimalMark = mark
	blanks := 0
	parse := func(r rawLine, role string) (*big.Rat, error) {
		t := cell(r, role)
		if t == "" {
			blanks++
			return new(big.Rat), nil
		}
		v, reason := amount.Parse(t, comma, 20, 60)
		if reason != "" {
			return nil, fmt.Errorf("%s: line %d: %s %q: %s", path, r.line, c.Columns[role], t, reason)
		}
		if role == "rows" {
			if !v.IsInt() || v.Sign() < 0 {
				return nil, fmt.Errorf("%s: line %d: %s %q: a row count is a whole number, 0 or more", path, r.line, c.Columns[role], t)
			}
			return v, nil
		}
		if amount.Round(v, o.Scale).Cmp(v) != 0 {
			return nil, fmt.Errorf("%s: line %d: %s %q has more decimal places than the ledger's %d; leadline compares exactly and does not round a control total (load with --scale to keep more places)", path, r.line, c.Columns[role], t, o.Scale)
		}
		return v, nil
	}
	seen := map[string]int{}
	for _, r := range raws {
		cl := ControlLine{Line: r.line, Values: map[string]*big.Rat{}}
		for _, k := range c.Keys {
			cl.Key = append(cl.Key, cell(r, k))
		}
		id := strings.Join(cl.Key, "\x00")
		if first, dup := seen[id]; dup {
			return nil, fmt.Errorf("%s: line %d: the key %s appears again (first at line %d); give each key once", path, r.line, describeKey(c.Keys, cl.Key), first)
		}
		seen[id] = r.line
		for _, m := range c.Measures {
			if c.Shape == "trial_balance" && m == "net" {
				continue
			}
			v, err := parse(r, m)
			if err != nil {
				return nil, err
			}
			cl.Values[m] = v
		}
		if c.Shape == "trial_balance" {
			if cl.Opening, err = parse(r, "opening"); err != nil {
				return nil, err
			}
			if cl.Closing, err = parse(r, "closing"); err != nil {
				return nil, err
			}
			cl.Values["net"] = new(big.Rat).Sub(cl.Closing, cl.Opening)
		}
		c.Lines = append(c.Lines, cl)
	}
	if blanks > 0 {
		c.Notes = append(c.Notes, fmt.Sprintf("%d blank total(s) in the control file read as 0", blanks))
	}
	c.creditSign()
	return c, nil
}

// roles finds each role's column: the header named so (or a common
// alias), or the column --control-map names.
func (c *Control) roles(path string, header []string, m map[string]string) (map[string]int, error) {
	index := map[string]int{}
	fromMap := map[string]bool{}
	norm := func(s string) string {
		s = strings.ToLower(strings.TrimSpace(s))
		return strings.NewReplacer(" ", "_", "-", "_").Replace(s)
	}
	for role, col := range m {
		if !IsRole(role) {
			return nil, CheckRole(role, col)
		}
		found := -1
		for i, h := range header {
			if strings.TrimSpace(h) == col {
				found = i
			}
		}
		if found < 0 {
			for i, h := range header {
				if strings.EqualFold(strings.TrimSpace(h), col) {
					found = i
				}
			}
		}
		if found < 0 {
			return nil, &field.Error{About: "control_map", Reason: "{0}: line 1: no column {1} for {control_map} {2}={3} (columns: {4})", Args: []any{path, strconv.Quote(col), role, col, strings.Join(header, ", ")}}
		}
		index[role] = found
		fromMap[role] = true
		c.Columns[role] = strings.TrimSpace(header[found])
	}
	for i, h := range header {
		role := norm(h)
		if a, ok := aliases[role]; ok {
			role = a
		}
		if !IsRole(role) {
			continue
		}
		if fromMap[role] {
			continue
		}
		if j, twice := index[role]; twice {
			return nil, &field.Error{About: "control_map", Reason: "{0}: line 1: columns {1} and {2} both read as {3}; name one with {control_map} {3}=COLUMN", Args: []any{path, strconv.Quote(header[j]), strconv.Quote(h), role}}
		}
		taken := false
		for _, j := range index {
			if j == i {
				taken = true
			}
		}
		if !taken {
			index[role] = i
			c.Columns[role] = strings.TrimSpace(h)
		}
	}
	for _, k := range KeyColumns {
		if _, ok := index[k]; ok {
			c.Keys = append(c.Keys, k)
		}
	}
	_, hasOpen := index["opening"]
	_, hasClose := index["closing"]
	_, hasNet := index["net"]
	switch {
	case hasOpen != hasClose:
		missing := "closing"
		if hasClose {
			missing = "opening"
		}
		return nil, &field.Error{About: "control_map", Reason: "{0}: line 1: a trial balance needs both an opening and a closing balance column; no {1} column (name it so, or map it with {control_map} {1}=COLUMN)", Args: []any{path, missing}}
	case hasOpen && hasNet:
		return nil, &field.Error{About: "control_map", Reason: "{0}: line 1: give either a net column or opening and closing balances (net = closing - opening), not both; leave one out with {control_map} or a copy of the file without it", Args: []any{path}}
	case hasOpen:
		c.Shape = "trial_balance"
	default:
		c.Shape = "totals"
	}
	for _, m := range Measures {
		if _, ok := index[m]; ok || m == "net" && c.Shape == "trial_balance" {
			c.Measures = append(c.Measures, m)
		}
	}
	if len(c.Measures) == 0 {
		return nil, &field.Error{About: "control_map", Reason: "{0}: line 1: none of the columns {1}; found {2}. Name the totals so, or map them, e.g. {control_map} net={3}",
			Args: []any{path, strings.Join(ValueColumns, ", "), strings.Join(header, ", "), firstOr(header, "Amount")}}
	}
	return index, nil
}

// creditSign: a credit column holding only negative totals writes credits
// the ledger's way (credits negative); they are compared as positive sums.
func (c *Control) creditSign() {
	if !contains(c.Measures, "credit") {
		return
	}
	neg, pos := 0, 0
	for _, l := range c.Lines {
		switch l.Values["credit"].Sign() {
		case -1:
			neg++
		case 1:
			pos++
		}
	}
	if neg > 0 && pos == 0 {
		for _, l := range c.Lines {
			l.Values["credit"].Neg(l.Values["credit"])
		}
		c.Notes = append(c.Notes, "the credit column holds negative totals: compared as positive sums of the credits")
	}
}

type markText struct {
	line int
	role string
	text string
}

// decimalMark settles the file's decimal mark: the flag, else the evidence
// of the file's own amounts (a mark followed by other than three digits,
// or both marks in one amount). An amount such as 1.234 that reads both
// ways, with nothing in the file to settle it, is refused.
func decimalMark(path string, texts []markText, o Options) (comma bool, mark string, err error) {
	if o.DecimalComma && o.DecimalPoint {
		return false, "", CheckDecimalMarks(o.DecimalComma, o.DecimalPoint)
	}
	if o.DecimalComma {
		return true, "comma", nil
	}
	if o.DecimalPoint {
		return false, "point", nil
	}
	var point, commaSeen, amb *markText
	for i := range texts {
		t := &texts[i]
		switch markOf(t.text) {
		case "point":
			if point == nil {
				point = t
			}
		case "comma":
			if commaSeen == nil {
				commaSeen = t
			}
		case "ambiguous":
			if amb == nil {
				amb = t
			}
		}
	}
	switch {
	case point != nil && commaSeen != nil:
		return false, "", &field.Error{About: "control_decimal_comma", Reason: "{0}: line {1} writes {2} with a decimal point and line {3} writes {4} with a decimal comma; give {control_decimal_comma} or {control_decimal_point}", Args: []any{path, point.line, strconv.Quote(point.text), commaSeen.line, strconv.Quote(commaSeen.text)}}
	case commaSeen != nil:
		return true, "comma", nil
	case point != nil:
		return false, "point", nil
	case amb != nil:
		return false, "", &field.Error{About: "control_decimal_comma", Reason: "{0}: line {1}: {2} reads two ways (a decimal or a thousands mark) and no amount of the file settles which; give {control_decimal_comma} or {control_decimal_point}", Args: []any{path, amb.line, strconv.Quote(amb.text)}}
	}
	return false, "point", nil
}

// markOf says what one amount text tells of the decimal mark: "point",
// "comma", "ambiguous" (one mark followed by exactly three digits, after
// one to three digits), or "" (no mark).
func markOf(s string) string {
	var num []rune
	for _, r := range s {
		if r >= '0' && r <= '9' || r == '.' || r == ',' {
			num = append(num, r)
		} else if r == 'e' || r == 'E' {
			break
		}
	}
	t := string(num)
	dots, commas := strings.Count(t, "."), strings.Count(t, ",")
	switch {
	case dots > 0 && commas > 0:
		if strings.LastIndex(t, ".") > strings.LastIndex(t, ",") {
			return "point"
		}
		return "comma"
	case dots > 1:
		return "comma"
	case commas > 1:
		return "point"
	case dots == 0 && commas == 0:
		return ""
	}
	sep := "."
	if commas == 1 {
		sep = ","
	}
	i := strings.Index(t, sep)
	before, after := t[:i], t[i+1:]
	if len(after) == 3 && len(before) >= 1 && len(before) <= 3 && before[0] != '0' {
		return "ambiguous"
	}
	if sep == "." {
		return "point"
	}
	return "comma"
}

func describeKey(keys, vals []string) string {
	if len(keys) == 0 {
		return "(all rows)"
	}
	parts := make([]string, len(keys))
	for i, k := range keys {
		v := vals[i]
		if v == "" {
			v = "(blank)"
		}
		parts[i] = k + "=" + v
	}
	return strings.Join(parts, ", ")
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func firstOr(list []string, def string) string {
	if len(list) > 0 && strings.TrimSpace(list[len(list)-1]) != "" {
		return strings.TrimSpace(list[len(list)-1])
	}
	return def
}

// CheckRole checks that role, mapped to the control file's column col, is
// a role of a control file. A refusal is a *field.Error of the field
// control_map, as are the other refusals of the file's columns.
func CheckRole(role, col string) error {
	if IsRole(role) {
		return nil
	}
	return &field.Error{Field: "control_map", Value: role + "=" + col, Reason: "{0} is not a role of a control file ({1}, {2})",
		Args: []any{strconv.Quote(role), strings.Join(KeyColumns, ", "), strings.Join(ValueColumns, ", ")}}
}

// CheckDecimalMarks refuses a decimal comma and a decimal point asked for
// together.
func CheckDecimalMarks(comma, point bool) error {
	if comma && point {
		return &field.Error{About: "control_decimal_point", Reason: "{control_decimal_comma} and {control_decimal_point} contradict each other: give one"}
	}
	return nil
}
