package benford

import (
	"math"
	"math/bits"
	"math/rand/v2"
)

// The null simulations draw millions of multinomial counts (thousands of
// populations per test and N, at every segment size). Multinomial's
// conditional binomials cost one binomial draw per bin whatever N, and a
// binomial draw with a small mean costs an exponential and a logarithm:
// for 900 first-three bins and a segment of a few hundred amounts that is
// far more work than drawing the few hundred amounts themselves. The
// sampler below draws each amount's bin from an alias table when N is
// small beside the number of bins, and falls back to the conditional
// binomials otherwise. Both are exact: a multinomial count is the tally of
// N independent draws of one bin, and the conditional binomials give the
// same law.

// aliasTable draws a bin with probabilities p in constant time: Walker's
// alias method (A. J. Walker, An efficient method for generating discrete
// random variables with general distributions, ACM Transactions on
// Mathematical Software 3(3), 253-256, 1977), built by Vose's pairing of
// small and large columns (M. D. Vose, A linear algorithm for generating
// random numbers with a given distribution, IEEE Transactions on Software
// Engineering 17(9), 972-975, 1991), which needs no sorting. Column i of
// K equal columns keeps bin i with probability keep[i] / 2^64 and gives
// bin alias[i] otherwise.
type aliasTable struct {
	keep  []uint64
	alias []int32
}

func newAliasTable(p []float64) *aliasTable {
	k := len(p)
	t := &aliasTable{keep: make([]uint64, k), alias: make([]int32, k)}
	var total float64
	for _, x := range p {
		total += x
	}
	// scaled[i] = K p_i: a column's height, 1 on average
	scaled := make([]float64, k)
	var small, large []int32
	for i, x := range p {
		scaled[i] = x / total * float64(k)
		if scaled[i] < 1 {
			small = append(small, int32(i))
		} else {
			large = append(large, int32(i))
		}
	}
	keep := make([]float64, k)
	for len(small) > 0 && len(large) > 0 {
		s, l := small[len(small)-1], large[len(large)-1]
		small = small[:len(small)-1]
		keep[s], t.alias[s] = scaled[s], l
		// the large column fills the rest of the small one's
		scaled[l] -= 1 - scaled[s]
		if scaled[l] < 1 {
			large = large[:len(large)-1]
			small = append(small, l)
		}
	}
	// what is left is 1 up to rounding
	for _, i := range large {
		keep[i], t.alias[i] = 1, i
	}
	for _, i := range small {
		keep[i], t.alias[i] = 1, i
	}
	for i, q := range keep {
		if q >= 1 {
			t.keep[i] = math.MaxUint64
			t.alias[i] = int32(i)
			continue
		}
		t.keep[i] = uint64(math.Ldexp(q, 64))
	}
	return t
}

// draw returns one bin from one uniform 64-bit word x: the 128-bit product
// x·K splits into the column (its high word, uniform over the K columns up
// to K/2^64) and a uniform fraction within the column (its low word, in
// steps of K/2^64), compared with the column's keep share. Both errors are
// below 10^-16, far below any probability the tests resolve.
func (t *aliasTable) draw(x uint64) int {
	col, frac := bits.Mul64(x, uint64(len(t.keep)))
	if frac < t.keep[col] {
		return int(col)
	}
	return int(t.alias[col])
}

// aliasPerBin is the number of amounts per bin below which the sampler
// draws the amounts one by one. Measured with BenchmarkSampler: the two
// cost the same between 8 and 16 amounts a bin (a draw by
// alias costs a few nanoseconds an amount; a conditional binomial draw
// tens to hundreds of nanoseconds a bin).
const aliasPerBin = 10

// multinomialSampler draws multinomial counts over fixed probabilities.
type multinomialSampler struct {
	p     []float64
	alias *aliasTable
	cond  []binomialProb // Multinomial's conditional binomials over p
}

func newMultinomialSampler(p []float64) *multinomialSampler {
	return &multinomialSampler{p: p, alias: newAliasTable(p), cond: conditionals(p)}
}

// draw fills c (len(p)) with the counts of n amounts, from src (by alias)
// or rng (by conditional binomials; rng may draw from src).
func (s *multinomialSampler) draw(src *rand.PCG, rng *rand.Rand, n int64, c []int64) {
	clear(c)
	if n > aliasPerBin*int64(len(s.p)) {
		multinomialCond(rng, s.cond, n, c)
		return
	}
	for range n {
		c[s.alias.draw(src.Uint64())]++
	}
}
