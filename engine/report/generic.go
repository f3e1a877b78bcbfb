package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"html/template"
	"regexp"
	"sort"
	"strings"
)

// node is a JSON value with object keys kept in document order.
type node struct {
	kind  byte // 'o' object, 'a' array, 's' string, 'n' number, 'b' bool, 'z' null
	keys  []string
	vals  []*node
	items []*node
	str   string
	num   json.Number
	b     bool
}

// parseOrdered parses JSON keeping the order of object keys.
func parseOrdered(data []byte) (*node, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	n, err := parseNode(dec)
	if err != nil {
		return nil, err
	}
	return n, nil
}

func parseNode(dec *json.Decoder) (*node, error) {
	tok, err := dec.Token()
	if err != nil {
		return nil, err
	}
	return parseTok(dec, tok)
}

func parseTok(dec *json.Decoder, tok json.Token) (*node, error) {
	switch t := tok.(type) {
	case json.Delim:
		switch t {
		case '{':
			n := &node{kind: 'o'}
			for dec.More() {
				kt, err := dec.Token()
				if err != nil {
					return nil, err
				}
				k, _ := kt.(string)
				v, err := parseNode(dec)
				if err != nil {
					return nil, err
				}
				n.keys = append(n.keys, k)
				n.vals = append(n.vals, v)
			}
			_, err := dec.Token()
			return n, err
		case '[':
			n := &node{kind: 'a'}
			for dec.More() {
				v, err := parseNode(dec)
				if err != nil {
					return nil, err
				}
				n.items = append(n.items, v)
			}
			_, err := dec.Token()
			return n, err
		}
	case string:
		return &node{kind: 's', str: t}, nil
	case json.Number:
		return &node{kind: 'n', num: t}, nil
	case bool:
		return &node{kind: 'b', b: t}, nil
	case nil:
		return &node{kind: 'z'}, nil
	}
	return nil, fmt.Errorf("unexpected JSON token %v", tok)
}

func (n *node) get(key string) *node {
	if n == nil || n.kind != 'o' {
		return nil
	}
	for i, k := range n.keys {
		if k == key {
			return n.vals[i]
		}
	}
	return nil
}

func (n *node) scalar() bool { return n != nil && n.kind != 'o' && n.kind != 'a' }

var decimalText = regexp.MustCompile(`^-?[0-9]+\.[0-9]+$`)

// cell renders a scalar JSON value; numbers and exact decimal strings are
// marked up with their source.
func (n *node) cell(r ref, key string) template.HTML {
	switch n.kind {
	case 'n':
		if i, err := n.num.Int64(); err == nil && !strings.ContainsAny(n.num.String(), ".eE") {
			switch {
			case isIDKey(key):
				return r.F(key, i, "id")
			case isMoneyKey(key):
				return r.F(key, i, "money")
			}
			return r.F(key, i, "int")
		}
		f, _ := n.num.Float64()
		switch {
		case isPKey(key):
			return r.F(key, f, "p")
		case isMoneyKey(key):
			return r.F(key, f, "money")
		}
		return r.F(key, f, "sf")
	case 's':
		if decimalText.MatchString(n.str) {
			return r.F(key, n.str, "money")
		}
		return template.HTML(template.HTMLEscapeString(dateText(n.str)))
	case 'b':
		if n.b {
			return "yes"
		}
		return "no"
	case 'z':
		return ""
	}
	return ""
}

// typedCell renders a cell of an output table: key is its place in the
// row, name and kind its column's (output.Kind).
func (n *node) typedCell(r ref, key, name, kind string) template.HTML {
	fieldRef := ref{Src: r.Src, Field: r.Field, cell: r.cell}
	mark := func(v any, format string) template.HTML {
		nr := fieldRef.At(key)
		if r.cell != nil {
			nr.Src = r.cell(key)
		}
		nr.Field = r.Field + "." + name
		return numHTML(nr.Field, nr.Src, v, format)
	}
	switch {
	case n.kind == 'n' && (kind == "count" || kind == ""):
		i, err := n.num.Int64()
		if err != nil {
			break
		}
		if isIDKey(name) {
			return mark(i, "id")
		}
		if kind == "" && isMoneyKey(name) {
			return mark(i, "money")
		}
		return mark(i, "int")
	case n.kind == 'n' && kind == "money":
		if strings.ContainsAny(n.num.String(), "eE") {
			f, _ := n.num.Float64()
			return mark(f, "money")
		}
		return mark(n.num.String(), "money")
	case n.kind == 's' && kind == "money" && plainDecimal.MatchString(n.str):
		return mark(n.str, "money")
	case n.kind == 'n' && kind == "percent":
		f, _ := n.num.Float64()
		return mark(f, "pct:2")
	case n.kind == 'n' && (kind == "number" || kind == "proportion"):
		f, _ := n.num.Float64()
		if isPKey(name) {
			return mark(f, "p")
		}
		return mark(f, "sf")
	case n.kind == 's' && (kind == "date" || kind == "timestamp" || kind == "text" || kind == ""):
		if kind == "" && decimalText.MatchString(n.str) {
			return mark(n.str, "money")
		}
		if d := dateText(n.str); d != n.str || kind == "date" {
			return template.HTML(`<span class="date">` + template.HTMLEscapeString(d) + `</span>`)
		}
		return template.HTML(template.HTMLEscapeString(n.str))
	}
	return n.cell(r, key)
}

// isIDKey tells the columns that hold identifiers (shown without
// thousands separators): row_id, line, doc_id, run_id, group...
func isIDKey(key string) bool {
	k := strings.ToLower(key)
	switch k {
	case "id", "line", "row", "run", "file", "load", "group", "line_id", "row_id", "doc_id", "first_line", "run id", "row id", "line id", "file id":
		return true
	}
	return strings.HasSuffix(k, "_id") || strings.HasSuffix(k, " id")
}

// isMoneyKey tells the columns that hold amounts (shown with two
// decimals).
func isMoneyKey(key string) bool {
	k := strings.ToLower(strings.ReplaceAll(key, " ", "_"))
	switch k {
	case "amount", "total", "net", "sum", "largest", "second", "smallest", "min_amount", "max_amount", "limit", "excess_amount":
		return true
	}
	return strings.HasPrefix(k, "sum_") || strings.HasSuffix(k, "_amount")
}

// isPKey tells the columns that hold p-values.
func isPKey(key string) bool {
	k := strings.ToLower(strings.ReplaceAll(key, " ", "_"))
	return k == "p" || k == "p_value" || k == "p_adjusted" || k == "runs_p" || strings.HasSuffix(k, "_p")
}

// maxGenericRows bounds each generic table.
const maxGenericRows = 50

// genericFrom turns a JSON document into facts (scalars, with nested
// objects flattened into dotted labels) and tables (arrays of objects).
func genericFrom(run *Run, title string, data []byte, r ref) (*GenericSection, error) {
	root, err := parseOrdered(data)
	if err != nil {
		return nil, err
	}
	g := &GenericSection{Run: run, Title: title}
	g.walk(root, r, "", 0)
	return g, nil
}

func (g *GenericSection) walk(n *node, r ref, label string, depth int) {
	switch n.kind {
	case 'o':
		for i, k := range n.keys {
			v := n.vals[i]
			l := k
			if label != "" {
				l = label + "." + k
			}
			switch {
			case v.scalar():
				g.Facts = append(g.Facts, Fact{Label: humanLabel(l), Value: v.cell(r, k)})
			case depth < 3:
				g.walk(v, r.At(k), l, depth+1)
			}
		}
	case 'a':
		g.table(n, r, label, depth)
	}
}

// table renders an array: of objects as a table with the union of their
// scalar keys, of scalars as one fact.
func (g *GenericSection) table(n *node, r ref, label string, depth int) {
	if len(n.items) == 0 {
		g.Facts = append(g.Facts, Fact{Label: humanLabel(label), Value: "none"})
		return
	}
	if n.items[0].kind != 'o' {
		var parts []string
		for i, it := range n.items {
			if i == 20 {
				parts = append(parts, fmt.Sprintf("… %d more", len(n.items)-20))
				break
			}
			if it.scalar() {
				parts = append(parts, string(it.cell(r, fmt.Sprint(i))))
			}
		}
		g.Facts = append(g.Facts, Fact{Label: humanLabel(label), Value: template.HTML(strings.Join(parts, ", "))})
		return
	}
	t := GenericTable{Title: humanLabel(label)}
	var nested []nestedTable
	seen := map[string]bool{}
	for _, it := range n.items {
		for i, k := range it.keys {
			if it.vals[i].scalar() && !seen[k] {
				seen[k] = true
				t.Columns = append(t.Columns, k)
			}
		}
	}
	for i, it := range n.items {
		if i == maxGenericRows {
			t.More = len(n.items) - i
			break
		}
		row := make([]template.HTML, len(t.Columns))
		ri := r.At(i)
		for j, c := range t.Columns {
			if v := it.get(c); v != nil && v.scalar() {
				row[j] = v.cell(ri, c)
			}
		}
		t.Rows = append(t.Rows, row)
		// Nested arrays of objects inside the first rows become their own
		// tables (for instance the groups of each duplicate test).
		if depth < 3 && i < 10 {
			for k, key := range it.keys {
				if v := it.vals[k]; v.kind == 'a' && len(v.items) > 0 && v.items[0].kind == 'o' {
					nested = append(nested, nestedTable{v, ri.At(key), fmt.Sprintf("%s %d %s", label, i+1, key)})
				}
			}
		}
	}
	for i := range t.Columns {
		t.Columns[i] = humanLabel(t.Columns[i])
	}
	g.Tables = append(g.Tables, t)
	for _, nt := range nested {
		g.table(nt.n, nt.r, nt.label, depth+1)
	}
}

type nestedTable struct {
	n     *node
	r     ref
	label string
}

// humanLabel turns a JSON key into a heading: "rows_read" -> "rows read".
func humanLabel(k string) string {
	return strings.ReplaceAll(k, "_", " ")
}

// sortedKeys returns a map's keys sorted.
func sortedKeys[V any](m map[string]V) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}
