package main

import (
	"errors"

	"github.com/leadline/leadline/engine/field"
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
// about the population's fields (a *population.FieldError or
// *population.EmptyError) names the flags that set them. Other errors, and
// such an error wrapped in another's context, pass unchanged.
func flagError(err error) error {
	if w, ok := err.(population.Worded); ok {
		return errors.New(w.Render(func(f string) string {
			if n, ok := populationFlags[f]; ok {
				return n
			}
			// Any other field (a *field.Error's) by its flag.
			return field.Flag(f)
		}))
	}
	return err
}
