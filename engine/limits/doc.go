// Package limits runs the limit clustering probe (a method of this
// project's own, described in docs/design.md): are amounts piled up just below an
// approval or testing limit?
//
// For a limit T and a width w the probe compares the count of tested
// amounts in [T(1-w), T) with the count in [T, T(1+w)). Under a
// scale-invariant density f(x) ∝ 1/x the ratio below/above is
// ln(1/(1-w))/ln(1+w) (1.105 for w = 0.10) whatever T; the split is tested
// with an exact one-sided binomial test (benford.LimitProbe), and the
// excess count below the limit is reported.
//
// Limits are given (the client's approval limits) or scanned: the round
// values 1, 2, 2.5 and 5 × 10^k whose whole band lies within the tested
// amounts. Every limit is probed on the whole selection and, with --by, in
// every segment, from one aggregate scan that counts the amounts between
// all band edges per segment (engine/ranges); everything after that scan
// works on the bin counts in Go (Probe). A (segment, limit) pair is tested
// when its band lies within that segment's own range of amounts (a band
// cut off by the largest amount would always show a surplus below the
// limit) and holds at least MinCount amounts; all pairs tested in one run
// are adjusted together with Holm's procedure, so a flag carries a
// family-wise error rate of 5% over the limits and segments tested.
//
// The population is every test's (engine/population: filter, signs, minimum).
// Amounts are compared as absolute values: with --signs negative the band
// below a 5,000 limit holds the amounts from -4,999.99 to -4,500.00 (a
// credit limit reads the same as a debit limit); --signs both pools the two.
//
// Results are signals for follow-up, never proof of fraud.
//
// It owns the limit clustering probe: the bands around each limit, their
// counts and the test of each limit.
package limits
