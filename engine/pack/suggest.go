package pack

import (
	"reflect"
	"strings"
)

// distance is the optimal-string-alignment edit distance: insertions,
// deletions, substitutions and swaps of neighbouring letters cost one.
func distance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	d := make([][]int, len(ra)+1)
	for i := range d {
		d[i] = make([]int, len(rb)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(ra); i++ {
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			d[i][j] = min(d[i-1][j]+1, d[i][j-1]+1, d[i-1][j-1]+cost)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(ra)][len(rb)]
}

// closest returns the candidate nearest to s when it is near enough to be
// the likely intent (at most 2 edits, or a third of the word), ignoring
// case, dashes and underscores; "" otherwise.
func closest(s string, candidates []string) string {
	norm := func(x string) string {
		return strings.NewReplacer("-", "", "_", "", " ", "").Replace(strings.ToLower(x))
	}
	ns := norm(s)
	best, bestD := "", 1<<30
	for _, c := range candidates {
		nc := norm(c)
		d := distance(ns, nc)
		if nc == ns {
			d = 0
		} else if strings.HasPrefix(nc, ns) && len(ns) >= 4 || strings.HasPrefix(ns, nc) && len(nc) >= 4 {
			d = min(d, 2)
		}
		if d < bestD || d == bestD && commonPrefix(nc, ns) > commonPrefix(norm(best), ns) {
			best, bestD = c, d
		}
	}
	limit := max(2, len([]rune(ns))/3)
	if best != "" && bestD <= limit {
		return best
	}
	return ""
}

// keysAt lists the TOML keys allowed at a path of the pack (array indices
// left out): the tags of the struct found there, embedded structs
// included. ok is false when any key is allowed (a map) or the path does
// not lead to a table.
func keysAt(path []string) (keys []string, ok bool) {
	t := reflect.TypeOf(Pack{})
	for _, k := range path {
		t = deref(t)
		if t.Kind() != reflect.Struct {
			return nil, false
		}
		f, found := fieldByTag(t, k)
		if !found {
			return nil, false
		}
		t = f.Type
	}
	t = deref(t)
	if t.Kind() != reflect.Struct {
		return nil, false
	}
	return structKeys(t), true
}

func deref(t reflect.Type) reflect.Type {
	for t.Kind() == reflect.Pointer || t.Kind() == reflect.Slice {
		t = t.Elem()
	}
	return t
}

func structKeys(t reflect.Type) []string {
	var out []string
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		if f.Anonymous {
			out = append(out, structKeys(f.Type)...)
			continue
		}
		tag := strings.Split(f.Tag.Get("toml"), ",")[0]
		if tag != "" && tag != "-" {
			out = append(out, tag)
		}
	}
	return out
}

func fieldByTag(t reflect.Type, key string) (reflect.StructField, bool) {
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		if f.Anonymous {
			if g, ok := fieldByTag(f.Type, key); ok {
				return g, true
			}
			continue
		}
		if strings.Split(f.Tag.Get("toml"), ",")[0] == key {
			return f, true
		}
	}
	return reflect.StructField{}, false
}

func commonPrefix(a, b string) int {
	n := 0
	for n < len(a) && n < len(b) && a[n] == b[n] {
		n++
	}
	return n
}
