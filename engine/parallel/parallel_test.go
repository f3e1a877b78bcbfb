package parallel

import (
	"sync/atomic"
	"testing"
)

// TestForCallsEachIndexOnce: every index from 0 to n-1 is called exactly
// once, whatever n (none for 0), and For returns only after the last.
func TestForCallsEachIndexOnce(t *testing.T) {
	for _, n := range []int{0, 1, 2, 7, 1000} {
		calls := make([]int32, n)
		var total atomic.Int64
		For(n, func(i int) {
			atomic.AddInt32(&calls[i], 1)
			total.Add(1)
		})
		if total.Load() != int64(n) {
			t.Fatalf("n %d: %d calls", n, total.Load())
		}
		for i, c := range calls {
			if c != 1 {
				t.Fatalf("n %d: index %d called %d times", n, i, c)
			}
		}
	}
}
