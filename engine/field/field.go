// Package field owns the errors about one setting of a run (a field such
// as by, width or limits): which field, the value given and what is wrong,
// so that the engine checks a setting once and the command line and the
// pack checker word the same refusal in their own names for it.
package field

import (
	"errors"
	"fmt"
	"regexp"
	"strconv"
	"strings"
)

// Error is a setting that cannot be used. Error words it as the command
// line does (--by, --per-decade); Render words it with another caller's
// names (a pack's keys).
type Error struct {
	Field string // the setting at fault, as the engine names it (by, per_decade); "" when the reason names them
	Value string // the value given, shown after the field's name; "" for none
	// Reason says what is wrong and what to give instead. {name} in it
	// stands for another field, worded by the caller (e.g. "give either
	// {width} or {per_decade}"), and {0}, {1}... for Args: text from the
	// user (a column name, a path) goes there, never into Reason itself,
	// so that it is not read as a field.
	Reason string
	Args   []any
	// About is the field a refusal with no Field is about: where a pack
	// points its problem.
	About string
}

// Flag is the command line's name of a field: by -> --by, per_decade ->
// --per-decade.
func Flag(f string) string { return "--" + strings.ReplaceAll(f, "_", "-") }

// Error words the error with the command line's flags.
func (e *Error) Error() string { return e.Render(Flag) }

var ref = regexp.MustCompile(`\{([a-z_]+|[0-9]+)\}`)

// Render words the error naming each field by name(field); a name of ""
// leaves the field out (a pack problem already shows its key). Reason is
// read once: what is put in for a reference is never read again.
func (e *Error) Render(name func(field string) string) string {
	reason := ref.ReplaceAllStringFunc(e.Reason, func(m string) string {
		r := m[1 : len(m)-1]
		if i, err := strconv.Atoi(r); err == nil {
			if i < len(e.Args) {
				return fmt.Sprint(e.Args[i])
			}
			return m
		}
		return name(r)
	})
	var head []string
	if e.Field != "" {
		if n := name(e.Field); n != "" {
			head = append(head, n)
		}
	}
	if e.Value != "" {
		head = append(head, e.Value)
	}
	if len(head) == 0 {
		return reason
	}
	return strings.Join(head, " ") + ": " + reason
}

// At is the field the error is about: Field, or About when the reason
// names the fields itself.
func (e *Error) At() string {
	if e.Field != "" {
		return e.Field
	}
	return e.About
}

// As reports whether err is or wraps an *Error.
func As(err error) (*Error, bool) {
	var fe *Error
	if errors.As(err, &fe) {
		return fe, true
	}
	return nil, false
}
