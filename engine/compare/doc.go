// Package compare sets two bin-count tables of the digit tests side by
// side: two stored runs, two periods or two entities of one workspace, or
// two workspaces. For each test it gives
//
//   - a homogeneity test of the 2×K table of counts (Pearson's chi-square,
//     K-1 degrees of freedom; a Monte Carlo p-value when cells expect
//     fewer than five amounts),
//   - the bins whose share changed most: the difference of proportions,
//     its two-proportion Z (the textbook reference), and a flag that holds
//     the family-wise error at 5% over the test's bins (an exact binomial
//     test of each bin conditional on its total, Holm's step-down) and asks
//     for a material change (benford.MaterialDiff with --min-excess, the
//     margin of the battery's bin flag),
//   - each side's conformity (MAD, its published class and the severity
//     verdict of package benford) and whether it changed.
//
// CompareSegments does the same segment by segment (compare --by): each
// segment found on both sides gets its own homogeneity test, the p-values
// adjusted by Holm's step-down over the segments, and is flagged as
// changed when that is below 5% and a bin's share moved materially.
//
// It works on counts only and needs no database.
package compare
