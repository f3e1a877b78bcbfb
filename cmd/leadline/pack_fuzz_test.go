package main

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/leadline/leadline/engine/pack"
)

// FuzzPack feeds arbitrary bytes to the pack reader (engine/pack.Parse)
// and, when they parse, to the pack check (engine/pack.Check), as a pack
// file from a shared folder would reach them. Neither may panic; a pack
// that does not parse gives *pack.Problems naming the file; every problem
// Check reports names the file; and checking writes nothing (no workspace,
// no output). Check runs only on packs whose file patterns and workspace
// stay inside the pack's own (empty) folder, so that the fuzzer never
// reads the machine's files.
//
// In `go test ./...` it runs its seeds and testdata/fuzz/FuzzPack; the long
// run is in the README's "Reliability" section:
//
//	go test ./cmd/leadline -run '^$' -fuzz '^FuzzPack$' -fuzztime 5m
func FuzzPack(f *testing.F) {
	if b, err := os.ReadFile(filepath.Join("..", "..", "queries", "packs", "example.toml")); err == nil {
		f.Add(b)
	}
	for _, s := range []string{
		"",
		"\xef\xbb\xbf[pack]\nname = \"a\"\nclient = \"b\"\n",
		"[pack]\nname = \"a\"\nclient = \"b\"\nscale = \"x\"\nprecision = 1e400\n[[source]]\nfiles = [\"*.csv\"]\n",
		"[pack]\nname = \"a\"\nclient = \"b\"\n[[check]]\nname = \"c\"\nsql = \"SELECT 1; DROP TABLE ledger\"\n",
		"[pack]\nname = \"a\"\nclient = \"b\"\n[filters]\nf = \"1=1) UNION SELECT 1 FROM range(1) WHERE (1=1\"\n[population]\nfilter = \"f\"\nmin_amount = -1\n",
		"[pack]\nname = \"a\"\nclient = \"b\"\n[battery]\ntests = [\"first\", 7]\nsegments = [\"entity+\", \"\"]\n[limits]\nvalues = [\"1e999\", -5, 0]\nwidth = 2\n",
		"[pack]\nname = \"a\"\nclient = \"b\"\n[[extract]]\nfrom = \"nowhere\"\ntop = 99999999999999999999\n[[check]]\nparams = { a = [1, 2] }\n",
		"[pack]\nworkspace = \"sub/\"\n[[source]]\ncolumns = { amount = \"\", nosuch = \"x\" }\ndebit = \"d\"\n",
		"[pack\nname = ",
		"[[source]]\nfiles = [\"a.csv\", \"a.csv\"]\n[[source]]\nfiles = \"not a list\"\n",
		"pack = 5\n[pack.x]\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		dir := t.TempDir()
		path := filepath.Join(dir, "fuzzed.toml")
		p, err := pack.Parse(path, data)
		if err != nil {
			var ps *pack.Problems
			if !errors.As(err, &ps) || len(ps.List) == 0 {
				t.Fatalf("a pack that does not parse gives %T %v, not problems", err, err)
			}
			for _, pr := range ps.List {
				if pr.File != path {
					t.Fatalf("problem %q does not name the pack file", pr.String())
				}
			}
			return
		}
		if p == nil {
			t.Fatal("no pack and no error")
		}
		for _, s := range p.Sources {
			for _, fp := range s.Files {
				if filepath.IsAbs(fp) || strings.Contains(fp, "..") || strings.HasPrefix(fp, "~") {
					return
				}
			}
		}
		if ws := p.Pack.Workspace; filepath.IsAbs(ws) || strings.Contains(ws, "..") {
			return
		}
		_, probs := pack.Check(context.Background(), p)
		if probs == nil {
			t.Fatal("Check returned no problem list")
		}
		for _, pr := range probs.List {
			if pr.File != path || strings.TrimSpace(pr.Message) == "" {
				t.Fatalf("problem %+v does not name the pack file or say what is wrong", pr)
			}
		}
		entries, err := os.ReadDir(dir)
		if err != nil {
			t.Fatal(err)
		}
		if len(entries) != 0 {
			var names []string
			for _, e := range entries {
				names = append(names, e.Name())
			}
			t.Fatalf("checking the pack wrote %v", names)
		}
	})
}
