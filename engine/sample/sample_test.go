package sample

import (
	"math"
	"math/big"
	"reflect"
	"testing"
)

func TestRandomIsReproducibleAndDistinct(t *testing.T) {
	a, b, c := Random(1000, 25, 7), Random(1000, 25, 7), Random(1000, 25, 8)
	if !reflect.DeepEqual(a, b) {
		t.Error("the same seed drew two samples")
	}
	if reflect.DeepEqual(a, c) {
		t.Error("two seeds drew the same sample")
	}
	seen := map[int64]bool{}
	for i, p := range a {
		if p < 0 || p >= 1000 || seen[p] || i > 0 && a[i-1] >= p {
			t.Fatalf("sample %v: not distinct sorted positions of 0..999", a)
		}
		seen[p] = true
	}
	if len(a) != 25 {
		t.Errorf("%d positions, want 25", len(a))
	}
	if got := Random(4, 10, 1); !reflect.DeepEqual(got, []int64{0, 1, 2, 3}) {
		t.Errorf("k >= n: %v", got)
	}
}

// Each position is drawn with probability k/n in simple random sampling
// without replacement (the definition of the design). Over 4,000 seeds
// each of 20 positions is drawn Binomial(4000, 5/20) times: mean 1,000,
// standard deviation 27.4; 6 standard deviations is a bound no correct
// sampler crosses in practice (common practice, no source).
func TestRandomDrawsEveryPositionEqually(t *testing.T) {
	counts := make([]int, 20)
	for seed := uint64(1); seed <= 4000; seed++ {
		for _, p := range Random(20, 5, seed) {
			counts[p]++
		}
	}
	sd := math.Sqrt(4000 * 0.25 * 0.75)
	for p, n := range counts {
		if math.Abs(float64(n)-1000) > 6*sd {
			t.Errorf("position %d drawn %d times, want about 1000", p, n)
		}
	}
}

func sizes(v ...int64) []*big.Int {
	out := make([]*big.Int, len(v))
	for i, x := range v {
		out[i] = big.NewInt(x)
	}
	return out
}

// A hand-worked selection: sizes 10, 20, 30, 40 (total 100), two points
// at interval 50 from start 5: points 5 and 55 fall in the first record
// (0, 10] and the third (30, 60].
func TestMonetaryHandWorked(t *testing.T) {
	res := selectFrom(sizes(10, 20, 30, 40), MonetaryResult{Start: big.NewInt(5), Interval: big.NewInt(50)})
	if !reflect.DeepEqual(res.Positions, []int64{0, 2}) || res.Hits != 2 {
		t.Errorf("start 5: %v, %d hits", res.Positions, res.Hits)
	}
	res = selectFrom(sizes(10, 20, 30, 40), MonetaryResult{Start: big.NewInt(50), Interval: big.NewInt(50)})
	if !reflect.DeepEqual(res.Positions, []int64{2, 3}) || res.Hits != 2 {
		t.Errorf("start 50: %v, %d hits", res.Positions, res.Hits)
	}
}

// Every record of size at least the interval is selected, a record of size
// 0 never; the interval is ceil(total / k), the start within 1..interval,
// at most k points fall, and the same seed gives the same selection.
func TestMonetaryProperties(t *testing.T) {
	sz := sizes(0, 500, 7, 120000, 33, 0, 99999, 1, 250, 40000, 12)
	for seed := uint64(1); seed <= 200; seed++ {
		res, err := Monetary(sz, 4, seed)
		if err != nil {
			t.Fatal(err)
		}
		if res.Total.Int64() != 260802 || res.Interval.Int64() != 65201 {
			t.Fatalf("total %v interval %v, want 260802 and 65201", res.Total, res.Interval)
		}
		if res.Start.Sign() <= 0 || res.Start.Cmp(res.Interval) > 0 || res.Hits > 4 {
			t.Fatalf("start %v, hits %d", res.Start, res.Hits)
		}
		sel := map[int64]bool{}
		for _, p := range res.Positions {
			sel[p] = true
		}
		if !sel[3] || sel[0] || sel[5] {
			t.Fatalf("seed %d: %v (record 3 of 120,000 must be in, the zeros out)", seed, res.Positions)
		}
		again, _ := Monetary(sz, 4, seed)
		if !reflect.DeepEqual(again.Positions, res.Positions) || again.Start.Cmp(res.Start) != 0 {
			t.Fatal("the same seed selected twice differently")
		}
	}
	if _, err := Monetary(sizes(0, 0), 2, 1); err == nil {
		t.Error("a population totalling 0 was sampled")
	}
}

// A record smaller than the interval is selected with probability
// size / interval (the design of systematic monetary-unit selection with a
// uniform start). Record 1 (size 30 of interval 100) over 5,000 seeds:
// Binomial(5000, 0.3), mean 1,500, standard deviation 32.4; bound 6 sd
// (common practice, no source).
func TestMonetaryInclusionProbability(t *testing.T) {
	sz := sizes(50, 30, 20, 100) // total 200, k 2: interval 100
	n := 0
	for seed := uint64(1); seed <= 5000; seed++ {
		res, _ := Monetary(sz, 2, seed)
		for _, p := range res.Positions {
			if p == 1 {
				n++
			}
		}
	}
	if sd := math.Sqrt(5000 * 0.3 * 0.7); math.Abs(float64(n)-1500) > 6*sd {
		t.Errorf("record of size 30 selected %d times of 5000, want about 1500", n)
	}
}

func TestRandBelowLarge(t *testing.T) {
	n, _ := new(big.Int).SetString("123456789012345678901234567890", 10)
	r := rng(3)
	for i := 0; i < 200; i++ {
		if v := randBelow(r, n); v.Sign() < 0 || v.Cmp(n) >= 0 {
			t.Fatalf("%v outside [0, %v)", v, n)
		}
	}
}
