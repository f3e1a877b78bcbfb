package report

import (
	"bufio"
	_ "embed"
	"fmt"
	"strings"
	"sync"
)

//go:embed report.sql
var reportSQL string

var (
	sqlOnce  sync.Once
	sqlNamed map[string]string
)

// stmt returns the named statement of report.sql ("-- name: x" headers,
// as in queries/). It panics on an unknown name: names are fixed at build
// time and the tests run every statement.
func stmt(name string) string {
	sqlOnce.Do(func() {
		sqlNamed = map[string]string{}
		var cur string
		var buf strings.Builder
		flush := func() {
			if cur != "" {
				sqlNamed[cur] = strings.TrimSpace(buf.String())
			}
			buf.Reset()
		}
		sc := bufio.NewScanner(strings.NewReader(reportSQL))
		for sc.Scan() {
			line := sc.Text()
			if rest, ok := strings.CutPrefix(strings.TrimSpace(line), "-- name:"); ok {
				flush()
				cur = strings.TrimSpace(rest)
				continue
			}
			if cur != "" {
				buf.WriteString(line + "\n")
			}
		}
		flush()
	})
	q, ok := sqlNamed[name]
	if !ok {
		panic(fmt.Sprintf("report: no statement named %q", name))
	}
	return q
}
