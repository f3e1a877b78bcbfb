package main

import (
	"bytes"
	"context"
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/load/loadtest"
)

// TestLoadBadInputCorpus runs `leadline load --format json` on every case
// of testdata/badinput/cases.toml and holds the command to the outcome
// written there: the exit status, the message on standard error (naming
// the file), and for a load that succeeds the JSON counts, with rows read =
// loaded + rejected. engine/load's TestBadInputCorpus checks the same cases
// row by row in the workspace.
func TestLoadBadInputCorpus(t *testing.T) {
	loadtest.ForEach(t, func(t *testing.T, c loadtest.Case, path string) {
		args := append([]string{"load", "--db", ":memory:", "--format", "json"}, c.Options.Args()...)
		args = append(args, path)
		var out, errOut bytes.Buffer
		code := run(context.Background(), args, &env{stdout: &out, stderr: &errOut})
		if code != c.Exit {
			t.Fatalf("exit %d, want %d; stderr: %s", code, c.Exit, errOut.String())
		}
		if c.Exit != 0 {
			msg := errOut.String()
			if !strings.HasPrefix(msg, "leadline load: ") {
				t.Errorf("message does not start with the command: %q", msg)
			}
			if e := c.ErrorMatches(msg); e != nil {
				t.Errorf("%v: %q", e, msg)
			}
			if out.Len() != 0 {
				t.Errorf("a failed load printed on standard output: %q", out.String())
			}
			return
		}
		var rep struct {
			RowsRead     int64 `json:"rows_read"`
			RowsLoaded   int64 `json:"rows_loaded"`
			RowsRejected int64 `json:"rows_rejected"`
			Files        []struct {
				Name         string `json:"name"`
				RowsRead     int64  `json:"rows_read"`
				RowsLoaded   int64  `json:"rows_loaded"`
				RowsRejected int64  `json:"rows_rejected"`
				RowsRounded  int64  `json:"rows_rounded"`
				SHA256       string `json:"sha256"`
			} `json:"files"`
		}
		if err := json.Unmarshal(out.Bytes(), &rep); err != nil {
			t.Fatalf("output is not the load's JSON: %v\n%s", err, out.String())
		}
		if len(rep.Files) != 1 || rep.Files[0].Name != filepath.Base(path) || len(rep.Files[0].SHA256) != 64 {
			t.Fatalf("files in the report: %+v", rep.Files)
		}
		f := rep.Files[0]
		if c.RowsRounded != nil && f.RowsRounded != *c.RowsRounded {
			t.Errorf("JSON rows_rounded %d, want %d", f.RowsRounded, *c.RowsRounded)
		}
		if f.RowsRead != c.RowsRead || f.RowsLoaded != c.RowsLoaded || f.RowsRejected != c.RowsRejected ||
			rep.RowsRead != f.RowsRead || rep.RowsLoaded != f.RowsLoaded || rep.RowsRejected != f.RowsRejected {
			t.Fatalf("JSON read %d loaded %d rejected %d (totals %d %d %d); want %d %d %d", f.RowsRead, f.RowsLoaded, f.RowsRejected,
				rep.RowsRead, rep.RowsLoaded, rep.RowsRejected, c.RowsRead, c.RowsLoaded, c.RowsRejected)
		}
	})
}
