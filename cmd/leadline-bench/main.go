// Command leadline-bench measures leadline's speed and memory on generated
// ledgers. It is kept out of the leadline binary: the product ships
// without its benchmarks.
//
//	go run ./cmd/leadline-bench bench-battery --rows 2000000 --repeat 3
//	go build -o leadline ./cmd/leadline && go run ./cmd/leadline-bench bench --rows 5000000 --leadline ./leadline
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"sort"
	"strings"
	"syscall"

	"github.com/leadline/leadline/engine/jsondoc"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

// command is one benchmark.
type command struct {
	name    string
	summary string
	usage   string
	flags   func(fs *pflag.FlagSet) func(ctx context.Context, args []string, e *env) error
}

// env carries what a benchmark writes to: results on stdout, progress on
// stderr.
type env struct {
	stdout, stderr io.Writer
}

var commands = map[string]*command{}

func register(c *command) { commands[c.name] = c }

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	os.Exit(run(ctx, os.Args[1:], &env{stdout: os.Stdout, stderr: os.Stderr}))
}

func run(ctx context.Context, args []string, e *env) int {
	if len(args) == 0 || args[0] == "-h" || args[0] == "--help" || args[0] == "help" {
		if len(args) > 1 {
			return run(ctx, []string{args[1], "--help"}, e)
		}
		printOverview(e.stdout)
		return 0
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(e.stderr, "leadline-bench: unknown command %q\n\n", args[0])
		printOverview(e.stderr)
		return 2
	}
	fs := pflag.NewFlagSet("leadline-bench "+c.name, pflag.ContinueOnError)
	fs.SortFlags = false
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	runFn := c.flags(fs)
	if err := fs.Parse(args[1:]); err != nil {
		if errors.Is(err, pflag.ErrHelp) {
			fmt.Fprintf(e.stdout, "leadline-bench %s: %s\n\n%s\n", c.name, c.summary, strings.TrimSpace(c.usage))
			if fs.HasFlags() {
				fmt.Fprintf(e.stdout, "\nOptions:\n%s", fs.FlagUsagesWrapped(100))
			}
			return 0
		}
		fmt.Fprintf(e.stderr, "leadline-bench %s: %v\n(see leadline-bench %s --help)\n", c.name, err, c.name)
		return 2
	}
	if err := runFn(ctx, fs.Args(), e); err != nil {
		fmt.Fprintf(e.stderr, "leadline-bench %s: %v\n", c.name, err)
		return 1
	}
	return 0
}

func printOverview(w io.Writer) {
	fmt.Fprintf(w, "leadline-bench %s: speed and memory of leadline on generated ledgers.\n\nUsage: leadline-bench COMMAND [options]\n\nCommands:\n", version())
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-14s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "\nRun `leadline-bench COMMAND --help` for a command's options and examples.")
}

func version() string { return workspace.Version }

// formatFlag is --format text|csv|json.
type formatFlag struct{ value string }

func (f *formatFlag) add(fs *pflag.FlagSet) {
	fs.StringVar(&f.value, "format", "text", "output format: text, csv or json")
}

func (f *formatFlag) check() error { return tabular.CheckFormat(f.value) }

func writeJSON(w io.Writer, v any) error { return jsondoc.Write(w, v) }
