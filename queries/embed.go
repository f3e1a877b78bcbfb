// Package queries holds the SQL that leadline runs, as named statements in
// .sql files embedded into the binary. A file may hold several statements,
// each introduced by a header line of the form
//
//	-- name: statement_name
//
// Statements are templates only in the narrow sense that quoted identifiers
// (table and column names that leadline itself has validated) may be
// substituted with Render; values are always bound as parameters.
package queries

import (
	"bufio"
	"embed"
	"fmt"
	"sort"
	"strings"
	"sync"
)

//go:embed *.sql
var files embed.FS

var (
	once  sync.Once
	named map[string]string
	known map[string]bool // every placeholder name of every statement
	err   error
)

func load() {
	named = map[string]string{}
	entries, e := files.ReadDir(".")
	if e != nil {
		err = e
		return
	}
	for _, ent := range entries {
		data, e := files.ReadFile(ent.Name())
		if e != nil {
			err = e
			return
		}
		var cur string
		var buf strings.Builder
		flush := func() {
			if cur != "" {
				named[cur] = strings.TrimSpace(buf.String())
			}
			buf.Reset()
		}
		sc := bufio.NewScanner(strings.NewReader(string(data)))
		sc.Buffer(make([]byte, 1<<20), 1<<20)
		for sc.Scan() {
			line := sc.Text()
			if rest, ok := strings.CutPrefix(strings.TrimSpace(line), "-- name:"); ok {
				flush()
				cur = strings.TrimSpace(rest)
				if _, dup := named[cur]; dup {
					err = fmt.Errorf("queries: statement %q defined twice (%s)", cur, ent.Name())
					return
				}
				continue
			}
			// Whole-line comments document a statement (its placeholders,
			// its bound parameters) and are not part of it: dropping them
			// keeps a placeholder named in a comment from being filled
			// with text that could end the comment's line.
			if cur != "" && !strings.HasPrefix(strings.TrimSpace(line), "--") {
				buf.WriteString(line)
				buf.WriteByte('\n')
			}
		}
		flush()
	}
	known = map[string]bool{}
	for _, q := range named {
		for {
			_, key, rest, ok := nextPlaceholder(q)
			if !ok {
				break
			}
			known[key] = true
			q = rest
		}
	}
}

// Get returns the named statement. It panics on an unknown name: the names
// are fixed at build time and a missing one is a programming error that the
// tests catch.
func Get(name string) string {
	once.Do(load)
	if err != nil {
		panic(err)
	}
	q, ok := named[name]
	if !ok {
		panic(fmt.Sprintf("queries: no statement named %q", name))
	}
	return q
}

// Render returns the named statement with each {{key}} placeholder replaced
// by the given text. Substitution is a single pass over the statement as
// written: text that was substituted is never scanned again, so a fragment
// that itself contains "{{...}}" (a string literal in a checked filter, say)
// stays exactly as it was given. A placeholder the statement has but the map
// does not fill, or a key that no statement has (a misspelt name), is a
// programming error and panics, as an unknown statement name does in Get. A
// key the statement does not use is allowed when a sibling statement does, so
// that one map can serve a family of statements.
//
// Only identifiers quoted with QuoteIdent, SQL fragments that leadline built
// itself, and user expressions already checked by engine/sqlguard may be
// passed; user values must be bound as parameters instead.
func Render(name string, repl map[string]string) string {
	out, err := render(Get(name), repl)
	if err != nil {
		panic(fmt.Sprintf("queries: statement %q: %v", name, err))
	}
	return out
}

// Placeholders lists the distinct {{key}} placeholders of the named
// statement, in order of first appearance.
func Placeholders(name string) []string {
	var keys []string
	seen := map[string]bool{}
	q := Get(name)
	for {
		_, key, rest, ok := nextPlaceholder(q)
		if !ok {
			return keys
		}
		if !seen[key] {
			seen[key] = true
			keys = append(keys, key)
		}
		q = rest
	}
}

// render substitutes every placeholder of tmpl once.
func render(tmpl string, repl map[string]string) (string, error) {
	var b strings.Builder
	used := map[string]bool{}
	rest := tmpl
	for {
		before, key, after, ok := nextPlaceholder(rest)
		if !ok {
			b.WriteString(rest)
			break
		}
		val, filled := repl[key]
		if !filled {
			return "", fmt.Errorf("placeholder {{%s}} is not filled", key)
		}
		b.WriteString(before)
		b.WriteString(val)
		used[key] = true
		rest = after
	}
	var unknown []string
	for k := range repl {
		if !used[k] && !known[k] {
			unknown = append(unknown, k)
		}
	}
	if len(unknown) > 0 {
		sort.Strings(unknown)
		return "", fmt.Errorf("no statement has a placeholder {{%s}}", strings.Join(unknown, "}}, {{"))
	}
	return b.String(), nil
}

// nextPlaceholder finds the first {{key}} in s whose key is a lower-case
// name ([a-z0-9_]+); other brace runs are left as text.
func nextPlaceholder(s string) (before, key, after string, ok bool) {
	off := 0
	for {
		i := strings.Index(s[off:], "{{")
		if i < 0 {
			return "", "", "", false
		}
		i += off
		j := strings.Index(s[i+2:], "}}")
		if j < 0 {
			return "", "", "", false
		}
		k := s[i+2 : i+2+j]
		if isPlaceholderName(k) {
			return s[:i], k, s[i+2+j+2:], true
		}
		off = i + 2
	}
}

func isPlaceholderName(k string) bool {
	if k == "" {
		return false
	}
	for _, r := range k {
		if !(r >= 'a' && r <= 'z' || r >= '0' && r <= '9' || r == '_') {
			return false
		}
	}
	return true
}

// Names lists every statement name, sorted.
func Names() []string {
	once.Do(load)
	out := make([]string, 0, len(named))
	for k := range named {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// QuoteIdent quotes an SQL identifier for DuckDB: wrapped in double quotes,
// with embedded double quotes doubled.
func QuoteIdent(s string) string {
	return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
}

// QuoteString quotes a string literal for the few places DuckDB does not take
// a bound parameter (table-function arguments such as a file path).
func QuoteString(s string) string {
	return `'` + strings.ReplaceAll(s, `'`, `''`) + `'`
}
