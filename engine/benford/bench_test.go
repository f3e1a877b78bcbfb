package benford

import (
	"math"
	"testing"
)

func benchBands(b *testing.B, n int) {
	bands := LinearBands(1, 1+float64(n)*10, 10)
	for i := range bands {
		bands[i].Count = int64(1e6 / bands[i].To * 10 * (1 + 0.01*math.Sin(float64(i))))
	}
	for b.Loop() {
		ScoreBands(bands)
	}
}

func BenchmarkScoreBands100(b *testing.B)   { benchBands(b, 100) }
func BenchmarkScoreBands10000(b *testing.B) { benchBands(b, 10000) }

func BenchmarkAnalyzeFirstTwo(b *testing.B) {
	counts := make([]int64, 90)
	for i, p := range Expected(FirstTwo) {
		counts[i] = int64(p * 1e7)
	}
	for b.Loop() {
		Analyze(FirstTwo, counts)
	}
}
