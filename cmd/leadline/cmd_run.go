package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"path/filepath"

	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/pack"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "run",
		summary: "run a pack: load (or reuse) the workspace, run every test and check, write the output folder",
		usage: `Usage: leadline run PACK --out DIR [options]

Checks the whole pack first (unknown keys, columns missing from the files,
values that are not numbers, SQL that does not parse or would write, globs
that match nothing): with any problem, nothing runs.

Then loads the pack's sources into its workspace, or reuses the workspace
when the input files' SHA-256 and the mapping are unchanged, runs every
step and writes DIR:

  results.xlsx          summary sheet, then one sheet per table
  results.json          every result (docs/json.md, "run")
  manifest.json         tool and DuckDB versions, pack and input hashes, parameters, times
  tables/NAME.csv       each result table
  tables/NAME.parquet

DIR must be new, empty, or an earlier output folder of the same pack (its
files are replaced). Results are signals for follow-up, never proof.

Exit status: 0 done; 2 the pack has problems (nothing ran); 3 some steps
could not complete (the others ran and DIR was written); 1 other errors.

Examples:
  leadline run client.toml --out results-2025q4
  leadline run client.toml --out results --fresh     # reload even if the inputs are unchanged`,
		flags: thin(runFlags, runPack),
	})
}

// runFlags registers run's flags; the function it returns takes the pack
// file from the one argument.
func runFlags(fs *pflag.FlagSet) func(args []string) (runCmdOptions, error) {
	var o runCmdOptions
	fs.StringVar(&o.out, "out", "", "output folder (required)")
	fs.BoolVar(&o.fresh, "fresh", false, "reload the workspace even when the inputs are unchanged")
	fs.BoolVarP(&o.quiet, "quiet", "q", false, "print only problems and the output folder")
	fs.StringVar(&o.format, "format", "text", "what to print: text, or json (the manifest)")
	return func(args []string) (runCmdOptions, error) {
		if len(args) != 1 {
			return o, fmt.Errorf("give one pack file (see --help)")
		}
		o.pack = args[0]
		return o, nil
	}
}

// runCmdOptions are what run's flags and argument ask for.
type runCmdOptions struct {
	pack, out, format string
	fresh, quiet      bool
	extra             []output.Writer
}

// runPack checks and runs the pack and prints its summary or manifest.
func runPack(ctx context.Context, e *env, o runCmdOptions) error {
	if o.format != "text" && o.format != "json" {
		return fmt.Errorf("--format %q: give text or json", o.format)
	}
	if o.out == "" {
		return &exitError{code: 2, err: fmt.Errorf("give the output folder with --out DIR")}
	}
	p, err := pack.Read(o.pack)
	if err != nil {
		return packError(err)
	}
	var log io.Writer
	if !o.quiet && o.format == "text" {
		log = e.stderr
	}
	res, err := pack.Run(withProgress(ctx), p, pack.RunOptions{Out: o.out, Fresh: o.fresh, Log: log, Output: output.Options{Extra: o.extra}})
	if err != nil {
		return packError(err)
	}
	for _, w := range res.Warnings {
		fmt.Fprintln(e.stderr, w.String())
	}
	if o.format == "json" {
		if err := writeJSON(e.stdout, res.Run.Manifest); err != nil {
			return err
		}
	} else {
		printRunSummary(e.stdout, res, o)
	}
	if r := res.Reconciliation; r != nil && r.Failed() {
		return &exitError{code: 3, err: fmt.Errorf("%s (or accept = true under [control]); the output folder holds the results", r.Error())}
	}
	if len(res.StepErrors) > 0 {
		return &exitError{code: 3, err: fmt.Errorf("%d step(s) could not complete; the output folder holds the rest:\n  %s", len(res.StepErrors), joinLines(res.StepErrors))}
	}
	return nil
}

func joinLines(s []string) string {
	out := ""
	for i, x := range s {
		if i > 0 {
			out += "\n  "
		}
		out += x
	}
	return out
}

// packError gives pack problems exit status 2.
func packError(err error) error {
	var ps *pack.Problems
	if errors.As(err, &ps) {
		return &exitError{code: 2, err: err}
	}
	return err
}

func printRunSummary(w io.Writer, res *pack.Result, o runCmdOptions) {
	run := res.Run
	m := run.Manifest
	if !o.quiet {
		fmt.Fprintf(w, "Pack %s (%s, %s)\n", run.Pack.Name, run.Pack.Client, run.Pack.Period)
		fmt.Fprintf(w, "Workspace %s: %s\n\n", m.Workspace, m.Run.WorkspaceAction)
		fmt.Fprintln(w, "Key findings:")
		for _, f := range run.Summary.Findings {
			fmt.Fprintf(w, "  - %s\n", f.Text)
		}
		for _, n := range run.Summary.Notes {
			fmt.Fprintf(w, "  note: %s\n", n)
		}
		fmt.Fprintf(w, "\n%s\n\n", output.Caution)
	}
	abs, _ := filepath.Abs(o.out)
	fmt.Fprintf(w, "Wrote %d files to %s (workbook: %s)\n", len(res.Outputs)+1, abs, filepath.Join(abs, output.WorkbookFile))
}
