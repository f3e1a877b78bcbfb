package benford

import "gonum.org/v1/gonum/stat/distuv"

// ChiSquare returns Pearson's chi-square statistic of bin counts against
// expected proportions,
//
//	χ² = Σ (n_k - N p_k)² / (N p_k),
//
// its K - 1 degrees of freedom and the upper-tail p-value
// P(χ²_{K-1} >= χ²) from gonum's distuv.ChiSquared. Bins with p_k == 0 are
// skipped (and not counted in K). When N == 0 or fewer than two bins are
// usable it returns (0, 0, 1): df == 0 means "not computed". It panics if
// the lengths differ.
func ChiSquare(counts []int64, expected []float64) (chi2 float64, df int, p float64) {
	if len(counts) != len(expected) {
		panic("benford: ChiSquare: length mismatch")
	}
	var n int64
	for _, c := range counts {
		n += c
	}
	if n <= 0 {
		return 0, 0, 1
	}
	N := float64(n)
	k := 0
	for i, c := range counts {
		if expected[i] <= 0 {
			continue
		}
		e := N * expected[i]
		d := float64(c) - e
		chi2 += d * d / e
		k++
	}
	if k < 2 {
		return 0, 0, 1
	}
	df = k - 1
	return chi2, df, distuv.ChiSquared{K: float64(df)}.Survival(chi2)
}
