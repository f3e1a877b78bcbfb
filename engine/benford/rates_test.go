package benford

import (
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"runtime"
	"strings"
	"sync"
	"testing"
)

// The full false-alarm table (README, section "False-alarm rates"):
//
//	go test ./engine/benford -run TestFalseAlarmRates -v -args -full
//
// or LEADLINE_FULL_RATES=1 in the environment.
var fullRates = flag.Bool("full", false, "TestFalseAlarmRates: the full table (N up to 5,000,000, 1,000 populations each)")

// rateRow is one signal measured on conforming populations.
type rateRow struct {
	test   Test
	signal string
	assert bool // a flag that promises 5%: the test fails above the bound
	fires  func(r Result) bool
}

var rateRows = func() []rateRow {
	var rows []rateRow
	for _, t := range []Test{FirstDigit, SecondDigit, FirstTwo, FirstThree, LastTwo, SecondOrder} {
		rows = append(rows,
			rateRow{t, "flag (any bin flagged)", true, func(r Result) bool { return r.Flagged > 0 }},
			rateRow{t, "chi-square p < 0.05", false, func(r Result) bool { return r.DF > 0 && r.PValue < 0.05 }},
			rateRow{t, "Kolmogorov-Smirnov D > 1.36/sqrt(N)", false, func(r Result) bool { return r.KSD > r.KSCritical }},
			rateRow{t, "reference: any bin outside Z bounds", false, func(r Result) bool { return r.ZFlagged > 0 }},
			rateRow{t, "reference: any bin outside Goodman", false, func(r Result) bool { return r.OutsideGoodman > 0 }},
		)
		if t == FirstTwo || t == FirstThree || t == SecondOrder {
			rows = append(rows, rateRow{t, "runs test p < 0.05 (simulated null)", true, func(r Result) bool { return r.Runs.P < 0.05 }})
		}
		if t == FirstTwo {
			rows = append(rows, rateRow{t, "fewer than 35 runs (note)", false, func(r Result) bool { return r.Runs.Runs < FewRunsFirstTwo }})
		}
	}
	return rows
}()

// TestFalseAlarmRates measures, on conforming populations (multinomial
// draws from each test's expected proportions, seeded), how often every
// signal of the digit tests fires, at the sizes users have; a segment of
// 1,000 or 5,000 amounts is tested exactly as a population of that size,
// so the rows N = 1,000 and 5,000 are also the per-segment rates. The
// flags that promise 5% (the bin flag of every test, the calibrated runs
// test) must stay within the 99% upper binomial bound of a 5% rate for the
// number of populations drawn (rateBound); the chi-square, the
// Kolmogorov-Smirnov test and the per-bin references are measured and
// printed, not held to 5%.
//
// -short: N = 1,000, 5,000 and 50,000, 150 populations each. Default: also
// 500,000. -args -full: also 5,000,000, 1,000 populations each, and the
// table printed (go test -v).
func TestFalseAlarmRates(t *testing.T) {
	sizes := []int64{1000, 5000, 50000, 500000}
	seeds := 200
	if testing.Short() {
		sizes, seeds = []int64{1000, 5000, 50000}, 150
	}
	full := *fullRates || os.Getenv("LEADLINE_FULL_RATES") != ""
	if full {
		sizes, seeds = []int64{1000, 5000, 50000, 500000, 5000000}, 1000
	}
	bound := rateBound(seeds, FlagAlpha)
	fired := make(map[string][]int) // row key -> count per size
	key := func(r rateRow) string { return string(r.test) + "\x00" + r.signal }
	for _, r := range rateRows {
		fired[key(r)] = make([]int, len(sizes))
	}
	var mu sync.Mutex
	for si, n := range sizes {
		for _, tt := range []Test{FirstDigit, SecondDigit, FirstTwo, FirstThree, LastTwo, SecondOrder} {
			runsNullFor(tt, n) // draw the null once, before the workers share it
			exp := Expected(tt)
			salt := uint64(len(tt))<<32 ^ uint64(tt[len(tt)-1])
			next := make(chan int)
			var wg sync.WaitGroup
			for range runtime.GOMAXPROCS(0) {
				wg.Add(1)
				go func() {
					defer wg.Done()
					for s := range next {
						rng := rand.New(rand.NewPCG(uint64(s)^salt<<40, uint64(n)^0xfa15e))
						res, err := Analyze(tt, Multinomial(rng, exp, n))
						if err != nil {
							t.Error(err)
							return
						}
						mu.Lock()
						for _, r := range rateRows {
							if r.test == tt && r.fires(res) {
								fired[key(r)][si]++
							}
						}
						mu.Unlock()
					}
				}()
			}
			for s := range seeds {
				next <- s
			}
			close(next)
			wg.Wait()
		}
	}
	var b strings.Builder
	fmt.Fprintf(&b, "False-alarm rates on conforming populations (%d per size; 99%% upper bound for a true 5%% rate: %d, that is %.1f%%)\n\n", seeds, bound, 100*float64(bound)/float64(seeds))
	fmt.Fprintf(&b, "| test | signal |")
	for _, n := range sizes {
		fmt.Fprintf(&b, " N = %d |", n)
	}
	fmt.Fprintf(&b, "\n|---|---|%s\n", strings.Repeat("---:|", len(sizes)))
	for _, r := range rateRows {
		fmt.Fprintf(&b, "| %s | %s |", r.test, r.signal)
		for si := range sizes {
			c := fired[key(r)][si]
			fmt.Fprintf(&b, " %.1f%% |", 100*float64(c)/float64(seeds))
			if r.assert && c > bound {
				t.Errorf("%s, %s, N %d: %d of %d conforming populations (bound %d)", r.test, r.signal, sizes[si], c, seeds, bound)
			}
		}
		b.WriteString("\n")
	}
	t.Log("\n" + b.String())
}
