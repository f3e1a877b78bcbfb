package benford

import (
	"math"
	"math/rand/v2"
	"sort"
	"sync"

	"github.com/leadline/leadline/engine/parallel"
)

// Simulated populations for the scenario and false-alarm tests. These are
// invented test populations, not data: amounts log-uniform over [10, 10^6)
// (five whole decades, so the first-two digits follow Benford's law
// exactly), optionally with 10% more amounts uniform in [2000, 5000), the
// "amounts pushed below a 5,000 limit" scenario of the range and limit
// probes.

const (
	simBase     = 500000 // log-uniform amounts per population
	simInjected = 50000  // extra amounts uniform in [2000, 5000)
	simSeeds    = 100    // populations for the false-alarm rates
	simWidth    = 0.10   // limit band width
)

var (
	simLimits   = ScanLimits(10, 1e6, simWidth)
	simLogBands = LogBands(10, 1e6, 10)
	simLinBands = LinearBands(0, 20000, 500)
)

// population holds the bin counts of one simulated population.
type population struct {
	firstTwo []int64 // bins 10..99
	below    []int64 // per simLimits
	above    []int64
	logBands []int64 // per simLogBands
	linBands []int64 // per simLinBands
}

// limitEdges returns the sorted edges T(1-w), T, T(1+w) of the limit bands
// (the bands of simLimits do not overlap for w = 0.10).
func limitEdges() []float64 {
	var e []float64
	for _, t := range simLimits {
		e = append(e, t*(1-simWidth), t, t*(1+simWidth))
	}
	if !sort.Float64sAreSorted(e) {
		panic("limit bands overlap")
	}
	return e
}

func bandEdges(b []Band) []float64 {
	e := make([]float64, len(b)+1)
	for i := range b {
		e[i] = b[i].From
	}
	e[len(b)] = b[len(b)-1].To
	return e
}

// simulate draws one population with a fixed seed.
func simulate(seed uint64, inject bool) population {
	rng := rand.New(rand.NewPCG(seed, 0x5eed1ead))
	p := population{
		firstTwo: make([]int64, 90),
		below:    make([]int64, len(simLimits)),
		above:    make([]int64, len(simLimits)),
		logBands: make([]int64, len(simLogBands)),
		linBands: make([]int64, len(simLinBands)),
	}
	le := limitEdges()
	lne := bandEdges(simLinBands)
	add := func(x, l10 float64) { // l10 = log10(x)
		// first two digits
		k := int(math.Floor(l10))
		m := x / math.Pow10(k-1)
		ft := int(m)
		if ft > 99 { // rounding at the top of a decade
			ft = 99
		}
		if ft < 10 {
			ft = 10
		}
		p.firstTwo[ft-10]++
		// limit bands: x in [e[i], e[i+1]) is below limit i/3 when i%3 == 0, above when i%3 == 1
		if i := bandIndex(le, x); i >= 0 {
			switch i % 3 {
			case 0:
				p.below[i/3]++
			case 1:
				p.above[i/3]++
			}
		}
		if i := int(math.Floor((l10 - 1) * 10)); i >= 0 && i < len(p.logBands) {
			p.logBands[i]++ // simLogBands: 10 a decade from 10
		}
		if x >= 20000 {
			return
		}
		if i := bandIndex(lne, x); i >= 0 {
			p.linBands[i]++
		}
	}
	for range simBase {
		l := 1 + 5*rng.Float64()
		add(math.Exp(l*math.Ln10), l)
	}
	if inject {
		for range simInjected {
			x := 2000 + 3000*rng.Float64()
			add(x, math.Log10(x))
		}
	}
	return p
}

// bandIndex returns i with e[i] <= x < e[i+1], or -1.
func bandIndex(e []float64, x float64) int {
	j := sort.SearchFloat64s(e, x)
	i := j - 1
	if j < len(e) && e[j] == x {
		i = j
	}
	if i < 0 || i >= len(e)-1 {
		return -1
	}
	return i
}

var (
	nullOnce sync.Once
	nullPops []population
)

// nullPopulations returns simSeeds populations without injection, drawn
// once for all tests, in parallel.
func nullPopulations() []population {
	nullOnce.Do(func() {
		nullPops = make([]population, simSeeds)
		parallel.For(simSeeds, func(s int) { nullPops[s] = simulate(uint64(1000+s), false) })
	})
	return nullPops
}

var (
	injOnce sync.Once
	injPop  population
)

// injectedPopulation returns one population with the [2000, 5000) injection.
func injectedPopulation() population {
	injOnce.Do(func() { injPop = simulate(42, true) })
	return injPop
}

// multinomial draws n categorical outcomes with probabilities p (summing
// to 1) and returns the counts.
func multinomial(rng *rand.Rand, p []float64, n int) []int64 {
	cum := make([]float64, len(p))
	var s float64
	for i, v := range p {
		s += v
		cum[i] = s
	}
	cum[len(cum)-1] = math.Inf(1)
	c := make([]int64, len(p))
	for range n {
		c[sort.SearchFloat64s(cum, rng.Float64()*s)]++
	}
	return c
}

// withBands copies the template bands and sets their counts.
func withBands(tmpl []Band, counts []int64) []Band {
	b := append([]Band(nil), tmpl...)
	for i := range b {
		b[i].Count = counts[i]
	}
	return b
}
