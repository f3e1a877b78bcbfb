package pack

import "testing"

func TestLineIndex(t *testing.T) {
	text := `# comment [not.a.table]
[pack]
name = "a # not a comment"   # comment
"quoted key" = 1

[[source]]
files = [
  "a.csv",   # first
  "b.csv",
]
[source.columns]
amount = "Amount"

[[source]]
files = ["c.csv"]
sql = """
name = "inside a string"
[not.a.table]
"""
after = 'x'
inline = { a = 1, b = [1, 2] }
[[check]]
name = "x"
[check.params]
min = 5
`
	ix := indexLines(text)
	cases := map[string]int{
		"pack":                     2,
		"pack.name":                3,
		"pack.quoted key":          4,
		"source[0]":                6,
		"source[0].files":          7,
		"source[0].files[0]":       8,
		"source[0].files[1]":       9,
		"source[0].columns.amount": 12,
		"source[1].files":          15,
		"source[1].sql":            16,
		"source[1].after":          20,
		"source[1].inline.b":       21,
		"check[0].name":            23,
		"check[0].params.min":      25,
		"check[0].params.max":      24, // falls back to the table
		"source[1].columns":        14, // no such table: the element
	}
	for path, want := range cases {
		if got := ix.Line(path); got != want {
			t.Errorf("%s: line %d, want %d", path, got, want)
		}
	}
	if m := ix.Match("source.files"); len(m) != 2 {
		t.Errorf("Match: %v", m)
	}
	if ix.Line("not.a.table") != 0 {
		t.Errorf("a table inside a string was indexed")
	}
}

func TestClosest(t *testing.T) {
	cases := map[string]string{"segmnts": "segments", "acount": "account", "windowdays": "window_days", "Limits": "limits", "zzz": "", "per_decades": "per_decade"}
	cands := []string{"segments", "account", "amount", "window_days", "limits", "per_decade"}
	for in, want := range cases {
		if got := closest(in, cands); got != want {
			t.Errorf("closest(%q) = %q, want %q", in, got, want)
		}
	}
}
