package pack

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/leadline/leadline/fixtures"
	"github.com/leadline/leadline/queries/packs"
)

// The generated ledgers the tests share: written once per test binary.
var (
	genOnce sync.Once
	genDir  string
	genErr  error
	genCfg  = fixtures.Config{Rows: 20_000, Seed: 11, Plants: true}
)

const (
	genCSV     = "skerrimoor_ledger_2025.csv"
	genParquet = "skerrimoor_ledger_2025.parquet"
)

func TestMain(m *testing.M) {
	code := m.Run()
	if genDir != "" {
		os.RemoveAll(genDir)
	}
	os.Exit(code)
}

func generated(t *testing.T) string {
	t.Helper()
	genOnce.Do(func() {
		genDir, genErr = os.MkdirTemp("", "leadline-pack-test-")
		if genErr != nil {
			return
		}
		if _, genErr = fixtures.WriteCSV(filepath.Join(genDir, genCSV), genCfg); genErr != nil {
			return
		}
		_, genErr = fixtures.WriteParquet(filepath.Join(genDir, genParquet), genCfg)
	})
	if genErr != nil {
		t.Fatal(genErr)
	}
	return genDir
}

// packDir makes a folder holding the generated files (linked) and the pack
// text, and returns the pack's path.
func packDir(t *testing.T, text string) string {
	t.Helper()
	src := generated(t)
	dir := t.TempDir()
	for _, f := range []string{genCSV, genParquet} {
		if err := os.Symlink(filepath.Join(src, f), filepath.Join(dir, f)); err != nil {
			t.Fatal(err)
		}
	}
	path := filepath.Join(dir, "pack.toml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// examplePack is the shipped example pack with the battery switched off
// (so that the tests do not depend on it) unless keepBattery.
func examplePack(keepBattery bool) string {
	s := string(packs.Example())
	if !keepBattery {
		s = strings.Replace(s, "[battery]\n", "[battery]\nenabled = false\n", 1)
	}
	return s
}

// The example pack's first run, shared by the tests that read its outputs.
var (
	exOnce sync.Once
	exPath string
	exOut  string
	exRes  *Result
	exErr  error
)

func exampleRun(t *testing.T) (path, out string, res *Result) {
	t.Helper()
	generated(t)
	exOnce.Do(func() {
		dir, err := os.MkdirTemp(genDir, "example-")
		if err != nil {
			exErr = err
			return
		}
		for _, f := range []string{genCSV, genParquet} {
			if err := os.Symlink(filepath.Join(genDir, f), filepath.Join(dir, f)); err != nil {
				exErr = err
				return
			}
		}
		exPath = filepath.Join(dir, "pack.toml")
		if exErr = os.WriteFile(exPath, []byte(examplePack(true)), 0o644); exErr != nil {
			return
		}
		p, err := Read(exPath)
		if err != nil {
			exErr = err
			return
		}
		exOut = filepath.Join(dir, "out1")
		exRes, exErr = Run(context.Background(), p, RunOptions{Out: exOut})
		if exErr == nil && len(exRes.StepErrors) > 0 {
			exErr = fmt.Errorf("step errors: %v", exRes.StepErrors)
		}
	})
	if exErr != nil {
		t.Fatal(exErr)
	}
	return exPath, exOut, exRes
}

func mustRead(t *testing.T, path string) *Pack {
	t.Helper()
	p, err := Read(path)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func mustRun(t *testing.T, p *Pack, out string, fresh bool) *Result {
	t.Helper()
	res, err := Run(context.Background(), p, RunOptions{Out: out, Fresh: fresh})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.StepErrors) > 0 {
		t.Fatalf("step errors: %v", res.StepErrors)
	}
	return res
}
