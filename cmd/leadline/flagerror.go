package main

import (
	"errors"

	"github.com/leadline/leadline/engine/population"
)

// populationFlags names the population's fields as the command line
// spells them.
var populationFlags = map[string]string{
	population.FieldWhere: "--where",
	population.FieldSigns: "--signs",
	population.FieldMin:   "--min",
}

// flagError words an engine error in the command line's terms: an error
// about a field of the population names the flag that sets it. Other
// errors pass unchanged.
func flagError(err error) error {
	if fe, ok := population.AsFieldError(err); ok {
		return errors.New(fe.Render(func(f string) string { return populationFlags[f] }))
	}
	return err
}
