// Package countsql counts where the data lives: it writes the digit
// battery's additive counting query in the SQL of another engine (DuckDB,
// PostgreSQL, ClickHouse), reads the count files those engines return,
// adds them up exactly and builds the same bin-count tables a local scan
// builds, so that `leadline scan --counts` gives the same results,
// rankings and notes as a scan of the same rows.
//
// The query uses integer arithmetic only: the amount becomes a whole number
// of units (amount * 10^scale, a 64-bit integer, through the engine's exact
// decimal type), and its first three significant digits come from
// comparisons with powers of ten and integer division, the rule of the
// local scan (queries/battery.sql). The amount column must hold an exact
// decimal or integer type with at most --scale decimal places: ClickHouse
// converts a Float column by truncation (0.29 would count as 0.28), so a
// Float amount must be cast to Decimal in a view first.
//
// The counts come back in one layout, the same for every engine, as CSV
// with a header (or Parquet, read through DuckDB):
//
//	by_NAME...  one column per segment (text; empty or \N for blank)
//	kind        f: first three significant digits; l: last two digits
//	bin         kind f: 100..999, or why the rows were left out:
//	            -1 zero, -2 other sign, -3 below the minimum,
//	            -4 NULL amount, -5 dropped by the filter;
//	            kind l: 0..99 (tested amounts only)
//	n           rows
//	sum_hi      sum of |units| of the tested rows = sum_hi * 10^9 + sum_lo,
//	sum_lo      split so that each part fits a 64-bit integer everywhere
//
// Every row of the table is counted once under kind f, so rows = the sum
// of n over kind f; tested rows count again under kind l. The files of
// partitions, shards or months of the same query merge by addition.
//
// It owns counting elsewhere: the counting query for another engine and the
// reading and merging of the count files it returns.
// The limit probe's and the range table's bands (Spec.Test "limits" or
// "ranges") come back in a layout of their own:
//
//	by_NAME...  one column per segment
//	kind        b: tested amounts in a bin of the grid; x: rows left out
//	bin         kind b: the number of grid thresholds at or below |units|;
//	            kind x: the codes -1..-5 above
//	n           rows
//	lo, hi      kind b: the smallest and largest |units| in the bin
//
// The grid (on the query's first line) holds, for every band edge a local
// run could use, the smallest whole number of units whose amount the local
// run puts at or above the edge (its DECIMAL converted to a double), so
// that the merged bins add up to the local counts between any of those
// edges exactly; the lows and highs give each segment's range of amounts.
package countsql
