// Package benford holds the statistics of leadline's digit battery: the
// expected proportions of Benford's law, the per-bin Z-statistic and
// bounds, the mean absolute deviation (MAD) with its published conformity
// ranges, the chi-square and Kolmogorov-Smirnov tests, Goodman's
// simultaneous confidence intervals, the runs test over ordered bins, the
// summation test, and two probes of this project's own: limit clustering
// (amounts bunched just below an approval limit) and the amount-range
// table.
//
// The package is pure Go and works from bin counts only, never rows:
// counts are additive, so counts computed over any partition of the data
// (or by any engine) can be merged with Merge and then tested. It imports
// no database code.
//
// Each statistic lives in its own file with its formula in the doc
// comment. Values recalled rather than looked up are marked "from memory";
// rules of thumb of the trade are marked "common practice, no source".
//
// Sources (bibliographic details from memory unless a test checks a value
// against them):
//
//   - F. Benford (1938), The law of anomalous numbers, Proceedings of the
//     American Philosophical Society 78(4), 551-572: expected proportions.
//   - T. P. Hill (1995), A statistical derivation of the significant-digit
//     law, Statistical Science 10(4), 354-363: the general digit law.
//   - P. Diaconis (1977), The distribution of leading digits and uniform
//     distribution mod 1, Annals of Probability 5(1), 72-81: powers of two
//     follow the law, used as an exact reference in the tests.
//   - M. J. Nigrini (2012), Benford's Law: Applications for Forensic
//     Accounting, Auditing, and Fraud Detection, Wiley: the Z-statistic with
//     continuity correction, the bounds, the MAD conformity ranges (from
//     memory), the summation test.
//   - M. J. Nigrini and S. J. Miller (2009), Data diagnostics using
//     second-order tests of Benford's law, Auditing: A Journal of Practice
//     & Theory 28(2), 305-324: the second-order test.
//   - B. Barney and K. Schulzke (2016), Moderating "cry wolf" events with
//     excess MAD in Benford's law research and practice, Journal of Forensic
//     Accounting Research 1(1) (title and journal from memory): the excess
//     MAD.
//   - R. Cerqueti and C. Lupi (2022): the asymptotic distribution of the
//     MAD ("Severe testing of Benford's law", arXiv:2202.05237).
//   - L. A. Goodman (1965), On simultaneous confidence intervals for
//     multinomial proportions, Technometrics 7(2), 247-254; as recommended
//     by M. Lesperance, W. J. Reed, M. A. Stephens, C. Tsao and B. Wilton
//     (2016), Assessing conformance with Benford's law: goodness-of-fit tests
//     and simultaneous confidence intervals, PLoS ONE 11(3): e0151235.
//   - A. Wald and J. Wolfowitz (1940), On a test whether two samples are
//     from the same population, Annals of Mathematical Statistics 11(2),
//     147-162: the runs test.
//   - S. Holm (1979), A simple sequentially rejective multiple test
//     procedure, Scandinavian Journal of Statistics 6(2), 65-70.
//   - W. S. Cleveland (1979), Robust locally weighted regression and
//     smoothing scatterplots, Journal of the American Statistical
//     Association 74, 829-836: the range table's neighbour fit (robustness
//     iterations with Tukey's biweight).
//   - P. J. Rousseeuw (1984), Least median of squares regression, Journal of
//     the American Statistical Association 79, 871-880: the robust start of
//     that fit.
//   - F. R. Hampel (1974), The influence curve and its role in robust
//     estimation, Journal of the American Statistical Association 69,
//     383-393: the MAD scale estimate used for the range table's dispersion.
//   - M. Abramowitz and I. A. Stegun (1964), Handbook of Mathematical
//     Functions: binomial and Poisson tails through the incomplete beta and
//     gamma functions.
//   - NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4
//     (critical values of the chi-square distribution): checks in the tests.
//
// Chi-square, normal, beta and gamma functions come from gonum
// (gonum.org/v1/gonum/stat/distuv and gonum.org/v1/gonum/mathext).
//
// Results are signals for follow-up, never proof of fraud.
//
// It owns the statistics computed from bin counts: expected proportions,
// the tests of conformity and the flag of a bin.
package benford
