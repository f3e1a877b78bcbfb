package main

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/leadline/leadline/engine/pack"
	"github.com/leadline/leadline/queries/packs"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "pack",
		summary: "start a pack from a sample file, or check a pack without running it",
		usage: `Usage:
  leadline pack init SAMPLE [--out PACK] [--name N] [--client C] [--period P] [--force]
  leadline pack check PACK [--format text|json]
  leadline pack example [--out PACK] [--force]

init writes a starter pack for a sample extract (CSV, TSV or Parquet): the
suggested column mapping, delimiter, encoding, decimal mark and date format,
and every option of a pack present with a comment. Review it, then run it
with leadline run.

check validates a pack completely (keys, values, files, columns, filters,
SQL) and prints every problem with its file and line; nothing is loaded.
Exit status 2 when the pack has problems.

example writes the commented example pack (the demo's ledger).

Examples:
  leadline pack init extracts/gl_2025.csv --out acme.toml --client "Acme Group" --period 2025-01-01..2025-12-31
  leadline pack check acme.toml
  leadline run acme.toml --out results`,
		flags: thin(packFlags, runPackCmd),
	})
}

// packCmdOptions are what pack's flags and arguments ask for.
type packCmdOptions struct {
	sub, file                         string // subcommand and its file
	out, name, client, period, format string
	force                             bool
}

// packFlags registers pack's flags; the function it returns checks the
// subcommand and its arguments.
func packFlags(fs *pflag.FlagSet) func(args []string) (packCmdOptions, error) {
	var o packCmdOptions
	fs.StringVar(&o.out, "out", "", "init, example: the pack file to write (default: SAMPLE's name with .toml; example.toml)")
	fs.StringVar(&o.name, "name", "", "init: the pack's name (default: the sample's file name)")
	fs.StringVar(&o.client, "client", "", "init: the client's name")
	fs.StringVar(&o.period, "period", "", "init: the period the extract covers")
	fs.BoolVar(&o.force, "force", false, "init, example: overwrite an existing pack file")
	fs.StringVar(&o.format, "format", "text", "check: text or json")
	return func(args []string) (packCmdOptions, error) {
		if len(args) == 0 {
			return o, fmt.Errorf("give a subcommand: init, check or example (see --help)")
		}
		o.sub = args[0]
		switch args[0] {
		case "init":
			if len(args) != 2 {
				return o, fmt.Errorf("pack init takes one sample file")
			}
			o.file = args[1]
		case "check":
			if len(args) != 2 {
				return o, fmt.Errorf("pack check takes one pack file")
			}
			o.file = args[1]
		case "example":
			if len(args) != 1 {
				return o, fmt.Errorf("pack example takes no arguments")
			}
			if o.out == "" {
				o.out = "example.toml"
			}
		default:
			return o, fmt.Errorf("unknown subcommand %q: give init, check or example", args[0])
		}
		return o, nil
	}
}

// runPackCmd runs the pack subcommand.
func runPackCmd(ctx context.Context, e *env, o packCmdOptions) error {
	switch o.sub {
	case "init":
		return packInit(ctx, e, o.file, o)
	case "check":
		return packCheck(ctx, e, o.file, o)
	}
	return writeNew(e, o.out, packs.Example(), o.force, "example pack")
}

func packInit(ctx context.Context, e *env, sample string, o packCmdOptions) error {
	if o.out == "" {
		base := filepath.Base(sample)
		for _, ext := range []string{".gz", ".csv", ".tsv", ".txt", ".parquet", ".pq"} {
			base = strings.TrimSuffix(base, ext)
		}
		o.out = base + ".toml"
	}
	text, err := pack.Starter(ctx, sample, o.out, pack.StarterOptions{Name: o.name, Client: o.client, Period: o.period})
	if err != nil {
		return err
	}
	if err := writeNew(e, o.out, text, o.force, "starter pack"); err != nil {
		return err
	}
	// Say at once whether the starter runs as it stands.
	p, err := pack.Read(o.out)
	if err != nil {
		return packError(err)
	}
	_, probs := pack.Check(ctx, p)
	for _, pr := range probs.List {
		fmt.Fprintln(e.stderr, pr.String())
	}
	if len(probs.Errors()) > 0 {
		return &exitError{code: 2, err: fmt.Errorf("edit the pack to fix the problems above, then: leadline pack check %s", o.out)}
	}
	fmt.Fprintf(e.stdout, "Review it, then: leadline run %s --out results\n", o.out)
	return nil
}

func writeNew(e *env, path string, data []byte, force bool, what string) error {
	if _, err := os.Stat(path); err == nil && !force {
		return fmt.Errorf("%s exists; give --force to overwrite it, or another --out", path)
	} else if err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	if err := os.WriteFile(path, data, 0o644); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "Wrote the %s %s\n", what, path)
	return nil
}

func packCheck(ctx context.Context, e *env, path string, o packCmdOptions) error {
	if o.format != "text" && o.format != "json" {
		return fmt.Errorf("--format %q: give text or json", o.format)
	}
	p, err := pack.Read(path)
	var probs *pack.Problems
	var plan *pack.Plan
	if err != nil {
		if !errors.As(err, &probs) {
			return err
		}
	} else {
		plan, probs = pack.Check(ctx, p)
	}
	if o.format == "json" {
		doc := map[string]any{"pack": path, "ok": len(probs.Errors()) == 0, "problems": probs.List}
		if plan != nil && len(probs.Errors()) == 0 {
			doc["parameters"] = plan.Parameters()
		}
		if doc["problems"] == nil {
			doc["problems"] = []pack.Problem{}
		}
		if err := writeJSON(e.stdout, doc); err != nil {
			return err
		}
	} else {
		for _, pr := range probs.List {
			fmt.Fprintln(e.stdout, pr.String())
		}
	}
	if n := len(probs.Errors()); n > 0 {
		return &exitError{code: 2, err: fmt.Errorf("%s: %d problem(s); nothing would run", path, n)}
	}
	if o.format == "text" {
		files := 0
		for _, s := range plan.Sources {
			files += len(s.Files)
		}
		var steps []string
		if plan.Battery != nil {
			steps = append(steps, "battery")
		}
		if plan.Limits != nil {
			steps = append(steps, "limits")
		}
		if plan.Ranges != nil {
			steps = append(steps, "ranges")
		}
		if plan.Duplicates != nil {
			steps = append(steps, "duplicates")
		}
		fmt.Fprintf(e.stdout, "%s: OK: %d source(s), %d file(s), workspace %s; steps: %s; %d extract(s), %d check(s)\n",
			path, len(plan.Sources), files, plan.Workspace, strings.Join(steps, ", "), len(plan.Extracts), len(plan.Checks))
	}
	return nil
}
