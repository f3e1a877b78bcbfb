// Command leadline is the command line of the leadline analysis engine: it
// loads ledger extracts into a DuckDB workspace, proves their completeness
// and runs the Benford's-law digit battery and its companions on them.
//
// Each command lives in its own file with an options struct, a flag layer
// that fills it (NAMEFlags) and a run function (runNAME) that takes the
// options and an env (writers and the workspace opener), so flag parsing
// is tested without a database and the run without flags.
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

	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

// command is one subcommand.
type command struct {
	name    string
	summary string
	usage   string // text after the summary in --help: arguments and examples
	flags   func(fs *pflag.FlagSet) func(ctx context.Context, args []string, env *env) error
}

// env carries what a command writes to and how it opens its workspace.
type env struct {
	stdout io.Writer
	stderr io.Writer
	isTTY  bool
	// open opens the workspace of the --db flags; nil opens the file
	// they name (dbFlags.open, or dbFlags.openOrCreate for load).
	open func(ctx context.Context, db dbFlags, readOnly bool) (*workspace.Workspace, error)
}

// openWorkspace opens the workspace the db flags name, through e.open
// when it is set.
func (e *env) openWorkspace(ctx context.Context, db dbFlags, readOnly bool) (*workspace.Workspace, error) {
	if e.open != nil {
		return e.open(ctx, db, readOnly)
	}
	return db.open(ctx, readOnly)
}

// createWorkspace opens the workspace the db flags name for load,
// creating it when there is none; through e.open (read-write) when it is
// set.
func (e *env) createWorkspace(ctx context.Context, db dbFlags) (*workspace.Workspace, error) {
	if e.open != nil {
		return e.open(ctx, db, false)
	}
	return db.openOrCreate(ctx)
}

// thin joins a command's flag layer and its run function: flags registers
// the flags on fs and returns the function that checks them and the
// arguments into the options; run does the work with them.
func thin[O any](flags func(fs *pflag.FlagSet) func(args []string) (O, error), run func(ctx context.Context, e *env, o O) error) func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
	return func(fs *pflag.FlagSet) func(context.Context, []string, *env) error {
		parse := flags(fs)
		return func(ctx context.Context, args []string, e *env) error {
			o, err := parse(args)
			if err != nil {
				return err
			}
			return run(ctx, e, o)
		}
	}
}

// newFlagSet is the flag set of one command: errors are returned, not
// printed, and flags keep the order they were registered in.
func newFlagSet(name string) *pflag.FlagSet {
	fs := pflag.NewFlagSet(name, pflag.ContinueOnError)
	fs.SortFlags = false
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return fs
}

var commands = map[string]*command{}

func register(c *command) { commands[c.name] = c }

// exitError carries a specific exit status.
type exitError struct {
	code int
	err  error
}

func (e *exitError) Error() string { return e.err.Error() }

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	e := &env{stdout: os.Stdout, stderr: os.Stderr, isTTY: isTerminal(os.Stderr)}
	os.Exit(run(ctx, os.Args[1:], e))
}

func run(ctx context.Context, args []string, e *env) int {
	if len(args) == 0 || args[0] == "-h" || args[0] == "--help" || args[0] == "help" {
		if len(args) > 1 {
			return run(ctx, []string{args[1], "--help"}, e)
		}
		printOverview(e.stdout)
		return 0
	}
	if args[0] == "--version" || args[0] == "version" {
		fmt.Fprintln(e.stdout, "leadline", version())
		return 0
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(e.stderr, "leadline: unknown command %q\n\n", args[0])
		printOverview(e.stderr)
		return 2
	}
	fs := newFlagSet("leadline " + c.name)
	runFn := c.flags(fs)
	if err := fs.Parse(args[1:]); err != nil {
		if errors.Is(err, pflag.ErrHelp) {
			printCommandHelp(e.stdout, c, fs)
			return 0
		}
		fmt.Fprintf(e.stderr, "leadline %s: %v\n(see leadline %s --help)\n", c.name, err, c.name)
		return 2
	}
	if err := runFn(ctx, fs.Args(), e); err != nil {
		var ee *exitError
		code := 1
		if errors.As(err, &ee) {
			code = ee.code
		}
		fmt.Fprintf(e.stderr, "leadline %s: %v\n", c.name, flagError(err))
		return code
	}
	return 0
}

func printOverview(w io.Writer) {
	fmt.Fprintf(w, `leadline %s: digit-frequency and limit tests for ledger extracts.
Results are signals for follow-up, never proof of fraud.

Usage: leadline COMMAND [options] [arguments]

Commands:
`, version())
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "\nRun `leadline COMMAND --help` for a command's options and examples.")
}

func printCommandHelp(w io.Writer, c *command, fs *pflag.FlagSet) {
	fmt.Fprintf(w, "leadline %s: %s\n\n%s\n", c.name, c.summary, strings.TrimSpace(c.usage))
	if fs.HasFlags() {
		fmt.Fprintf(w, "\nOptions:\n%s", fs.FlagUsagesWrapped(100))
	}
}

func isTerminal(f *os.File) bool {
	st, err := f.Stat()
	if err != nil {
		return false
	}
	return st.Mode()&os.ModeCharDevice != 0
}
