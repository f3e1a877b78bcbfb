// Package drill goes back from a result to the records behind it: a digit
// bin of any test of the battery (first, second, first_two, first_three,
// last_two), an exact amount, a half-open range of absolute amounts (a
// limit band), a segment (COLUMN=VALUE), a duplicate group of a stored
// duplicates run, narrowed by the same filter predicate, signs and minimum
// as the scan.
//
// A selection is built into one SQL predicate over the ledger (Build); its
// records are then listed with every original column (Records), grouped by
// any column with counts, totals and the most repeated amounts (Group), or
// written by DuckDB straight to a CSV, JSON or Parquet file (Export), each
// record followed by the empty follow-up columns of engine/followup. Only
// the rows shown are ever held in Go memory. Sample draws a reproducible
// sample of the records in file order (engine/sample over DrawSample,
// which pack extracts share).
//
// Amounts: --amount and --range are compared with the absolute amount under
// the signs kept (positive amounts by default, as in the scan), so that a
// limit band such as --range 4500:5000 reads the same for invoices and
// credit notes; --signs negative or both widens it. Digit bins use the
// digit definitions documented in digits.go, taken from the exact decimal.
//
// Results are signals for follow-up, never proof of fraud.
//
// It owns the way back from a result to its records: the selection of a
// bin, amount, range, segment or group and the records' export.
package drill
