package countsql

import (
	"database/sql"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/leadline/leadline/engine/segment"
)

// countFile is the layout of one kind of count file: the columns after
// the segments' by_NAME columns, what the query that returns it is
// called in messages, and a check of a header that is not this layout
// (a file of the other kind) for a better message.
type countFile struct {
	tail  []string // kind, bin, n and the sums or bounds
	what  string   // "counting query", "band query"
	other func(path, header string) error
}

// read reads one count file: checks its header against the layout and
// the segments of the files read before (*by; the first file sets them),
// then calls row for every record with its segment key (NULL for an empty
// or \N value: the queries write blank values as NULL) and the columns
// after the segments; bad words a problem of that line. The file's entry
// in the provenance is added to files.
func (l countFile) read(path string, by *[]string, files *[]File, first bool, row func(key segment.Key, rec []string, bad func(string) error) error) error {
	got, f, err := l.readFile(path, *by, first, row)
	if err != nil {
		return err
	}
	if first {
		*by = got
	}
	*files = append(*files, f)
	return nil
}

func (l countFile) readFile(path string, by []string, first bool, row func(key segment.Key, rec []string, bad func(string) error) error) ([]string, File, error) {
	r, sum, closeFn, err := openCounts(path)
	if err != nil {
		return nil, File{}, err
	}
	defer closeFn()
	head, err := r.Read()
	if err != nil {
		return nil, File{}, fmt.Errorf("%s: no header line (%s): %w; write the query's result as CSV with a header (psql --csv, clickhouse client --format CSVWithNames, DuckDB COPY ... (HEADER))", path, strings.Join(l.tail, ", "), err)
	}
	var got []string
	for _, c := range head {
		if n, ok := strings.CutPrefix(strings.TrimSpace(c), "by_"); ok {
			got = append(got, n)
		}
	}
	want := append(prefixed(got), l.tail...)
	if h := strings.Join(trimAll(head), ","); h != strings.Join(want, ",") {
		if l.other != nil {
			if err := l.other(path, h); err != nil {
				return nil, File{}, err
			}
		}
		return nil, File{}, fmt.Errorf("%s line 1: columns %s; the %s returns %s, with this header line (psql --csv without -t; clickhouse client --format CSVWithNames)", path, strings.Join(head, ","), l.what, strings.Join(want, ","))
	}
	if !first && strings.Join(got, ",") != strings.Join(by, ",") {
		return nil, File{}, fmt.Errorf("%s: segments %v, but the first file has %v: count files to merge come from the same query", path, got, by)
	}
	nseg := len(got)
	var rows int64
	key := make(segment.Key, nseg)
	for line := 2; ; line++ {
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, File{}, fmt.Errorf("%s: %w", path, err)
		}
		rows++
		for i := 0; i < nseg; i++ {
			if v := rec[i]; v == "" || v == `\N` {
				key[i] = sql.NullString{}
			} else {
				key[i] = sql.NullString{String: v, Valid: true}
			}
		}
		bad := func(what string) error {
			return fmt.Errorf("%s line %d: %s; the file must be the %s's result, unchanged", path, line, what, l.what)
		}
		if err := row(key, rec[nseg:], bad); err != nil {
			return nil, File{}, err
		}
	}
	return got, File{Path: path, SHA256: sum(), Rows: rows}, nil
}
