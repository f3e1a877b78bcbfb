// Package sample draws reproducible audit samples from an ordered
// population: simple random sampling without replacement and
// monetary-unit sampling (probability proportional to size, systematic
// selection with a random start). Both take a seed, so that a reviewer
// who has the population in the same order and the seed draws the same
// records again. No database: positions in, positions out.
//
// It owns reproducible samples: simple random and monetary-unit selection
// from a seed.
package sample

import (
	"fmt"
	"math/big"
	"math/rand/v2"
	"sort"
	"strconv"

	"github.com/leadline/leadline/engine/field"
)

// Methods are the sampling methods by name.
var Methods = []string{"random", "monetary"}

// CheckMethod checks a sampling method's name (one of Methods). A refusal
// is a *field.Error of the field "sample".
func CheckMethod(m string) error {
	for _, x := range Methods {
		if m == x {
			return nil
		}
	}
	return &field.Error{Field: "sample", Value: strconv.Quote(m), Reason: `give "random" (simple random, seeded) or "monetary" (monetary-unit: probability proportional to |amount|)`}
}

// rng is the generator every draw uses: PCG from the standard library,
// seeded with (seed, 0), whose sequence is fixed by its specification.
func rng(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 0)) }

// Random returns k distinct positions of 0..n-1, sorted, drawn with equal
// probability (a partial Fisher-Yates shuffle); all n when k >= n.
func Random(n int64, k int, seed uint64) []int64 {
	if n <= 0 || k <= 0 {
		return nil
	}
	if int64(k) >= n {
		out := make([]int64, n)
		for i := range out {
			out[i] = int64(i)
		}
		return out
	}
	r := rng(seed)
	swapped := map[int64]int64{} // the positions moved so far, as a sparse array
	at := func(i int64) int64 {
		if v, ok := swapped[i]; ok {
			return v
		}
		return i
	}
	out := make([]int64, k)
	for i := 0; i < k; i++ {
		j := int64(i) + r.Int64N(n-int64(i))
		vi, vj := at(int64(i)), at(j)
		swapped[j] = vi
		out[i] = vj
	}
	sort.Slice(out, func(a, b int) bool { return out[a] < out[b] })
	return out
}

// MonetaryResult is a monetary-unit selection.
type MonetaryResult struct {
	Positions []int64  // selected records, sorted; a record hit twice is listed once
	Hits      int      // selection points that fell on a record
	Total     *big.Int // population total of the sizes (in the amounts' smallest units)
	Interval  *big.Int // sampling interval: ceil(Total / k)
	Start     *big.Int // the random start, 1..Interval
}

// Monetary selects records with probability proportional to their size
// (sizes: |amount| in the smallest units, in population order): the
// interval J = ceil(total / k), a random start s in 1..J, and the points
// s, s+J, s+2J... up to the total; a record is selected when a point falls
// within its cumulative range. A record of size J or more is always
// selected; a record of size 0 never.
func Monetary(sizes []*big.Int, k int, seed uint64) (MonetaryResult, error) {
	res := MonetaryResult{Total: new(big.Int)}
	for i, s := range sizes {
		if s.Sign() < 0 {
			return res, fmt.Errorf("record %d: a negative size", i)
		}
		res.Total.Add(res.Total, s)
	}
	if k <= 0 {
		return res, fmt.Errorf("sample size %d: give 1 or more", k)
	}
	if res.Total.Sign() == 0 {
		return res, fmt.Errorf("the records' amounts total 0: nothing to sample by value")
	}
	kk := big.NewInt(int64(k))
	res.Interval = new(big.Int).Add(res.Total, new(big.Int).Sub(kk, big.NewInt(1)))
	res.Interval.Quo(res.Interval, kk)
	// A uniform start in 1..J, drawn exactly with big.Int (J may exceed 2^63).
	res.Start = new(big.Int).Add(randBelow(rng(seed), res.Interval), big.NewInt(1))
	return selectFrom(sizes, res), nil
}

// selectFrom walks the sizes with the points res.Start, +Interval, ...
func selectFrom(sizes []*big.Int, res MonetaryResult) MonetaryResult {
	point := new(big.Int).Set(res.Start)
	cum := new(big.Int)
	for i, s := range sizes {
		cum.Add(cum, s)
		hit := false
		for point.Cmp(cum) <= 0 {
			hit = true
			res.Hits++
			point.Add(point, res.Interval)
		}
		if hit {
			res.Positions = append(res.Positions, int64(i))
		}
	}
	return res
}

// randBelow returns a uniform integer in [0, n) from r, n > 0.
func randBelow(r *rand.Rand, n *big.Int) *big.Int {
	if n.IsInt64() {
		return big.NewInt(r.Int64N(n.Int64()))
	}
	// Rejection sampling over the bit length of n.
	bits := n.BitLen()
	for {
		v := new(big.Int)
		for got := 0; got < bits; got += 64 {
			v.Lsh(v, 64)
			v.Or(v, new(big.Int).SetUint64(r.Uint64()))
		}
		v.Rsh(v, uint(((bits+63)/64)*64-bits))
		if v.Cmp(n) < 0 {
			return v
		}
	}
}
