// Package loadtest holds the bad-input corpus of testdata/badinput for the
// tests of engine/load and of the load command: the manifest of cases with
// the outcome each must have (cases.toml), and the files that are generated
// rather than checked in (Parquet files written with parquet-go, files too
// large to keep in the repository).
//
// Only tests import it.
//
// It owns the bad-input corpus: its manifest of expected outcomes and the
// files generated for it.
package loadtest

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"

	"github.com/BurntSushi/toml"
)

// Case is one input with its expected outcome.
type Case struct {
	Name    string  `toml:"name"`
	File    string  `toml:"file"` // under testdata/badinput; or
	Gen     string  `toml:"gen"`  // the name of a generator in Generators
	What    string  `toml:"what"` // what the case is about, in a line
	Options Options `toml:"options"`

	// Exit is the load command's exit status: 0 when the load succeeds, 1
	// when it fails. Error lists substrings the error message must hold
	// (besides the file's name, which every message must hold).
	Exit  int      `toml:"exit"`
	Error []string `toml:"error"`

	RowsRead     int64    `toml:"rows_read"`
	RowsLoaded   int64    `toml:"rows_loaded"`
	RowsRejected int64    `toml:"rows_rejected"`
	RowsRounded  *int64   `toml:"rows_rounded"` // checked when given
	Warnings     []string `toml:"warnings"`     // substrings, each found in some warning
	Rejects      []Reject `toml:"reject"`       // every rejected row, in line order
	Checks       []Check  `toml:"check"`        // queries on the workspace after the load

	// Heavy marks a large generated input, skipped by go test -short.
	Heavy bool `toml:"heavy"`
}

// Options are the load options a case gives, as the command's flags.
type Options struct {
	DecimalComma bool              `toml:"decimal_comma"`
	DecimalPoint bool              `toml:"decimal_point"`
	MaxRejects   string            `toml:"max_rejects"`
	Delimiter    string            `toml:"delimiter"`
	Encoding     string            `toml:"encoding"`
	DateFormat   string            `toml:"date_format"`
	Precision    int               `toml:"precision"`
	Scale        int               `toml:"scale"`
	Map          map[string]string `toml:"map"`
	Debit        string            `toml:"debit"`
	Credit       string            `toml:"credit"`
}

// Args renders the options as flags of `leadline load`.
func (o Options) Args() []string {
	var a []string
	if o.DecimalComma {
		a = append(a, "--decimal-comma")
	}
	if o.DecimalPoint {
		a = append(a, "--decimal-point")
	}
	if o.MaxRejects != "" {
		a = append(a, "--max-rejects", o.MaxRejects)
	}
	if o.Delimiter != "" {
		a = append(a, "--delimiter", o.Delimiter)
	}
	if o.Encoding != "" {
		a = append(a, "--encoding", o.Encoding)
	}
	if o.DateFormat != "" {
		a = append(a, "--date-format", o.DateFormat)
	}
	if o.Precision != 0 {
		a = append(a, "--precision", fmt.Sprint(o.Precision))
	}
	if o.Scale != 0 {
		a = append(a, "--scale", fmt.Sprint(o.Scale))
	}
	for k, v := range o.Map {
		a = append(a, "--map", k+"="+v)
	}
	if o.Debit != "" {
		a = append(a, "--debit", o.Debit, "--credit", o.Credit)
	}
	return a
}

// Reject is one expected row of the rejects table.
type Reject struct {
	Line   int64  `toml:"line"`
	Column string `toml:"column"` // "" when the reject names no column
	Reason string `toml:"reason"` // a substring of the stored reason
}

// Check is a query run on the workspace after a successful load, with the
// text its single value must print as.
type Check struct {
	SQL  string `toml:"sql"`
	Want string `toml:"want"`
}

// Dir is testdata/badinput of this repository.
func Dir() string {
	_, file, _, _ := runtime.Caller(0)
	return filepath.Join(filepath.Dir(file), "..", "..", "..", "testdata", "badinput")
}

// Cases reads the manifest and checks that it is whole: every case names a
// file that exists or a generator that exists, once.
func Cases() ([]Case, error) {
	var doc struct {
		Case []Case `toml:"case"`
	}
	md, err := toml.DecodeFile(filepath.Join(Dir(), "cases.toml"), &doc)
	if err != nil {
		return nil, err
	}
	if und := md.Undecoded(); len(und) > 0 {
		return nil, fmt.Errorf("cases.toml: unknown keys %v", und)
	}
	seen := map[string]bool{}
	for _, c := range doc.Case {
		if c.Name == "" || seen[c.Name] {
			return nil, fmt.Errorf("cases.toml: case name %q empty or repeated", c.Name)
		}
		seen[c.Name] = true
		switch {
		case (c.File == "") == (c.Gen == ""):
			return nil, fmt.Errorf("case %s: give file or gen", c.Name)
		case c.Gen != "" && Generators[c.Gen].Write == nil:
			return nil, fmt.Errorf("case %s: no generator %q", c.Name, c.Gen)
		case c.File != "":
			if _, err := os.Stat(filepath.Join(Dir(), c.File)); err != nil {
				return nil, fmt.Errorf("case %s: %w", c.Name, err)
			}
		}
		if (c.Exit == 0) != (len(c.Error) == 0) {
			return nil, fmt.Errorf("case %s: a failing case (exit 1) lists its error substrings, a passing one none", c.Name)
		}
		if c.Exit == 0 && c.RowsRead != c.RowsLoaded+c.RowsRejected {
			return nil, fmt.Errorf("case %s: rows_read must equal rows_loaded + rows_rejected", c.Name)
		}
		if c.Exit == 0 && int64(len(c.Rejects)) != c.RowsRejected {
			return nil, fmt.Errorf("case %s: list every rejected row (%d listed, %d rejected)", c.Name, len(c.Rejects), c.RowsRejected)
		}
	}
	return doc.Case, nil
}

// Materialize returns the path of the case's input: the checked-in file, or
// a file the case's generator writes into dir.
func (c Case) Materialize(dir string) (string, error) {
	if c.File != "" {
		return filepath.Abs(filepath.Join(Dir(), c.File))
	}
	g := Generators[c.Gen]
	p := filepath.Join(dir, g.Name)
	if err := g.Write(p); err != nil {
		return "", fmt.Errorf("generating %s: %w", g.Name, err)
	}
	return p, nil
}

// FileName is the base name the input has when loaded.
func (c Case) FileName() string {
	if c.File != "" {
		return filepath.Base(c.File)
	}
	return Generators[c.Gen].Name
}

// ErrorMatches reports what is missing from msg: the file's name and each
// expected substring (case-insensitive).
func (c Case) ErrorMatches(msg string) error {
	var missing []string
	low := strings.ToLower(msg)
	for _, want := range append([]string{c.FileName()}, c.Error...) {
		if !strings.Contains(low, strings.ToLower(want)) {
			missing = append(missing, want)
		}
	}
	if len(missing) > 0 {
		return errors.New("message lacks " + strings.Join(missing, ", "))
	}
	return nil
}
