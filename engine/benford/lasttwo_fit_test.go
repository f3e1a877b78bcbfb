package benford

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestLastTwoNeedsFourthDigit backs the last-two test's default minimum
// (engine/battery: amounts of at least 100.00 at scale 2). Amounts drawn
// log-uniform over [10, 10^6) (Benford's law exactly), rounded to cents,
// 5,000,000 of them: the last two digits (the cents) of all amounts fail
// the uniform expectation, because for 10.00 to 99.99 they are the third
// and fourth significant digits; the same amounts of at least 100.00 fit
// it. The Kolmogorov-Smirnov test over the ordered bins sees it (the low
// third digits are the more frequent: a drift in the cumulative share);
// the chi-square at 99 df barely does.
func TestLastTwoNeedsFourthDigit(t *testing.T) {
	if testing.Short() {
		t.Skip("5,000,000 amounts")
	}
	rng := rand.New(rand.NewPCG(100, 2))
	all := make([]int64, 100)
	from100 := make([]int64, 100)
	for range 5000000 {
		u := int64(math.Floor(math.Pow(10, 3+5*rng.Float64()))) // cents, 10.00 to 999,999.99
		all[u%100]++
		if u >= 10000 {
			from100[u%100]++
		}
	}
	ra, _ := Analyze(LastTwo, all)
	rf, _ := Analyze(LastTwo, from100)
	t.Logf("all amounts: chi-square p %.3g, KS D %.5f (critical %.5f), %d flagged; from 100.00: p %.3g, KS D %.5f (critical %.5f), %d flagged",
		ra.PValue, ra.KSD, ra.KSCritical, ra.Flagged, rf.PValue, rf.KSD, rf.KSCritical, rf.Flagged)
	if ra.KSD < ra.KSCritical {
		t.Errorf("all amounts: KS D %v below its critical value %v: the cents of 10.00 to 99.99 should not look uniform", ra.KSD, ra.KSCritical)
	}
	if rf.KSD > rf.KSCritical || rf.PValue < 0.01 || rf.Flagged != 0 {
		t.Errorf("from 100.00: KS D %v (critical %v), chi-square p %v, %d flagged: should fit", rf.KSD, rf.KSCritical, rf.PValue, rf.Flagged)
	}
}
