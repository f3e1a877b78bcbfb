// Package parallel spreads independent pieces of work over the machine's
// cores.
package parallel

import (
	"runtime"
	"sync"
)

// For calls fn(i) for every i in [0, n), on as many goroutines as there
// are processors (GOMAXPROCS), and returns when every call has. The calls
// must be independent: each writes only its own results (e.g. out[i]), so
// that what they compute does not depend on the scheduling.
func For(n int, fn func(i int)) {
	next := make(chan int)
	var wg sync.WaitGroup
	for range min(n, runtime.GOMAXPROCS(0)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				fn(i)
			}
		}()
	}
	for i := range n {
		next <- i
	}
	close(next)
	wg.Wait()
}
