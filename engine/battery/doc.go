// Package battery runs the digit battery built on Benford's law over the
// workspace's ledger: the first-digit, second-digit, first-two digits,
// first-three digits, last-two digits and summation tests from ONE
// aggregate scan, the second-order test and number duplication from a
// query each, on the whole selection and on segments (--by columns) from
// the same scan.
//
// The scan groups the tested amounts by (segment..., first three
// significant digits) and by (segment..., last two digits), counting them
// and summing their absolute values (queries/battery.sql, battery_scan).
// The first three significant digits determine the first digit, the
// second digit and the first two digits, so every count-based test is a
// roll-up of that one table (Counts). Tables are additive: the whole
// selection's table is the sum of its segments' tables, and tables from
// other partitions or engines merge by addition (Counts.Add). The
// statistics (engine/benford) never see rows.
//
// Digits come from the exact DECIMAL amount, as a whole number of units of
// the ledger's scale, by integer arithmetic (see FirstThreeOf and
// drill.DigitsOf, which state the same definitions):
//
//   - the significant digits of x != 0 are those of |x| without the
//     decimal point and leading zeros, padded with zeros to three digits:
//     1234.56 -> 123, 10.00 -> 100, 99.99 -> 999, 0.29 -> 290, 5.00 -> 500;
//   - the last two digits are the two rightmost digits of |x| written at
//     the ledger's scale (1234.56 -> 56, 10.00 -> 00; at scale 0 1234 ->
//     34), or with Options.LastTwo = LastTwoUnits those of its whole
//     currency part (1234.56 -> 34);
//   - zero has no significant digits and is left out, and counted.
//
// Every row of the ledger is accounted for: rows = tested + filtered +
// zero + other sign + below the minimum (Left).
//
// Results are signals for follow-up, never proof of fraud.
//
// It owns the digit battery's scan of the ledger: the bin counts of every
// digit test, whole and per segment, and their statistics as one report.
package battery
