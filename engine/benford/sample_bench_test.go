package benford

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// benchSegment is one segment of the segmented-scan benchmark: its counts
// per count test and its first-two sums for the summation test.
type benchSegment struct {
	counts map[Test][]int64
	sums   []float64
	ft     []int64
}

// benchSegments draws n segments of mixed, non-round sizes (log-uniform
// from 100 to 20,000 amounts, the sizes of per-account-and-month
// segments), each a conforming population of amounts log-uniform over
// [10, 10^5).
func benchSegments(n int) []benchSegment {
	rng := rand.New(rand.NewPCG(17, 2025))
	segs := make([]benchSegment, n)
	for i := range segs {
		size := int64(math.Round(100 * math.Pow(200, rng.Float64())))
		s := benchSegment{counts: map[Test][]int64{}, sums: make([]float64, 90), ft: make([]int64, 90)}
		for range size {
			l := 1 + 4*rng.Float64()
			x := math.Pow(10, l)
			k := int(x/math.Pow10(int(math.Floor(l))-1)) - 10
			k = min(max(k, 0), 89)
			s.ft[k]++
			s.sums[k] += x
		}
		for _, t := range []Test{FirstDigit, SecondDigit, FirstThree, LastTwo, SecondOrder} {
			s.counts[t] = Multinomial(rng, Expected(t), size)
		}
		s.counts[FirstTwo] = s.ft
		segs[i] = s
	}
	return segs
}

// clearNullCaches empties the simulated nulls, so that each benchmark
// iteration pays for them as a fresh process does.
func clearNullCaches() {
	runsCache.Clear()
	summationCache.Clear()
}

// BenchmarkSegmentStatistics is the statistics of a segmented scan: 200
// segments of mixed N, every count test and the summation test, from
// empty null caches (as each scan starts).
func BenchmarkSegmentStatistics(b *testing.B) {
	segs := benchSegments(200)
	b.ResetTimer()
	for b.Loop() {
		clearNullCaches()
		for _, s := range segs {
			for t, c := range s.counts {
				if _, err := Analyze(t, c); err != nil {
					b.Fatal(err)
				}
			}
			if _, err := AnalyzeSummation(s.sums, s.ft); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// BenchmarkSampler compares the two exact multinomial draws at the bins of
// the tests and the segment sizes around their crossover (aliasPerBin).
func BenchmarkSampler(b *testing.B) {
	for _, t := range []Test{FirstDigit, FirstTwo, FirstThree} {
		p := Expected(t)
		s := newMultinomialSampler(p)
		c := make([]int64, len(p))
		for _, per := range []int64{1, 4, 8, 16, 32, 64} {
			n := per * int64(len(p))
			src := rand.NewPCG(1, 2)
			rng := rand.New(src)
			b.Run(string(t)+"/alias/perbin="+itoa(per), func(b *testing.B) {
				for b.Loop() {
					clear(c)
					for range n {
						c[s.alias.draw(src.Uint64())]++
					}
				}
			})
			b.Run(string(t)+"/binomial/perbin="+itoa(per), func(b *testing.B) {
				for b.Loop() {
					clear(c)
					multinomialInto(rng, p, n, c)
				}
			})
		}
	}
}

func itoa(x int64) string { return strconv.FormatInt(x, 10) }
