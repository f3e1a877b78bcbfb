// Package population owns which rows of the ledger a test reads: the
// checked filter, the signs kept and the smallest absolute amount, the SQL
// that selects those rows, and the count of the rows it leaves out, by
// reason.
//
// Every command that tests amounts (the digit battery, the limit probe,
// the ranges, the duplicate tests, the sensitivity study, the drill-down
// and packs) takes its population from Prepare, so that a --where, --signs
// and --min mean the same rows everywhere and are refused the same way.
//
// Errors about a field of the population are *FieldError values: they name
// the field (where, signs, min) and the value, never a command-line flag or
// a pack key; the command line and the pack checker name the field in their
// own terms.
package population
