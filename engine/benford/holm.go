package benford

import (
	"math"
	"sort"
)

// Holm returns Holm's step-down adjusted p-values (S. Holm, A simple
// sequentially rejective multiple test procedure, Scandinavian Journal of
// Statistics 6, 65-70, 1979), in the order of p: with the m p-values sorted
// ascending as p_(1) <= ... <= p_(m),
//
//	p̃_(i) = max_{j<=i} min(1, (m - j + 1) p_(j)).
//
// Rejecting where p̃ < alpha controls the family-wise error rate at alpha
// under any dependence, and rejects at least what Bonferroni rejects. NaN
// p-values are treated as 1.
func Holm(p []float64) []float64 {
	m := len(p)
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	val := func(i int) float64 {
		if math.IsNaN(p[i]) {
			return 1
		}
		return p[i]
	}
	sort.SliceStable(idx, func(a, b int) bool { return val(idx[a]) < val(idx[b]) })
	adj := make([]float64, m)
	var run float64
	for j, i := range idx {
		v := math.Min(1, float64(m-j)*val(i))
		run = math.Max(run, v)
		adj[i] = run
	}
	return adj
}
