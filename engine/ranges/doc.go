// Package ranges counts the tested amounts of the ledger in amount ranges
// and answers "which range of amounts is inflated".
//
// Counting: one aggregate scan per run (Count) groups the tested amounts by
// segment and, within each segment, by the elementary intervals between a
// sorted list of edges (DuckDB's histogram aggregate with explicit
// boundaries), together with the counts of what was left out. The result is
// a bin-count table (Bins): counts are additive, so segments merge into the
// whole population by addition, and everything downstream is pure Go. The
// limit clustering probe (engine/limits) uses the same scan with the band
// edges of its limits.
//
// The range table: bands of a fixed width over [FROM, TO), or of equal
// width on a logarithmic scale (so many to a decade), each compared with a
// smooth expectation fitted to its neighbouring bands and flagged when well
// above it (benford.ScoreBands: a robust local line or quadratic on the log
// scale whose width and degree are chosen by leave-one-out
// cross-validation, a robust quasi-Poisson dispersion, Holm's adjustment
// over the bands). Bands cut by the minimum amount or reaching past the
// largest amount are listed but not scored, and so are the outermost
// scorable bands, whose expectation would be an extrapolation (NoteEdge,
// NoteNearEdge). Adjacent flagged bands are joined into stretches, each
// with the drill-down command that lists its records.
//
// Segments (--by): the same bands, laid out on the whole selection so
// they line up, are scored in every segment of at least MinSegment tested
// amounts on the segment's own counts (ScoreSegments), and the flags are
// adjusted by Holm over all scored (segment, band) pairs of the segments,
// so that a flag anywhere keeps its 5% family-wise meaning; the whole
// selection's table stays its own family.
//
// The population is every test's (engine/population):
// a filter predicate, the signs kept (positive amounts by default) and the
// smallest absolute amount kept (10 by default). Amounts are compared as
// absolute values: with --signs negative a band [4500, 5000) holds the
// amounts from -4,999.99 to -4,500.00.
//
// Results are signals for follow-up, never proof of fraud.
//
// It owns the amount-range bands: their layout, their counts in one scan
// and the score of each band.
package ranges
