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
			if cur != "" {
				buf.WriteString(line)
				buf.WriteByte('\n')
			}
		}
		flush()
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

// Render returns the named statement with each {{key}} replaced by the given
// text. Only identifiers quoted with QuoteIdent or SQL fragments that
// leadline built itself may be passed; user values must be bound instead.
func Render(name string, repl map[string]string) string {
	q := Get(name)
	keys := make([]string, 0, len(repl))
	for k := range repl {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		q = strings.ReplaceAll(q, "{{"+k+"}}", repl[k])
	}
	return q
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
