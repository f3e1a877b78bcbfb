// Package sensitivity documents what the tests could and could not have
// detected in a population: it injects synthetic amounts of a chosen kind
// at several rates over many seeds and reports, per signal and rate, the
// share of trials in which the signal fired.
//
// It works on bin counts only (counts are additive; docs/design.md). The
// population's counts are read once; each trial adds the counts of its
// injected amounts to them in memory. The loaded ledger is never copied or
// touched.
//
// It owns the injection study: what each test would have detected at which
// rate of injected amounts.
package sensitivity

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"github.com/leadline/leadline/engine/benford"
	"gonum.org/v1/gonum/stat/distuv"
)

// Population holds the bin counts of the tested population.
type Population struct {
	FirstThree []int64         `json:"first_three"` // bins 100..999
	LastTwo    []int64         `json:"last_two"`    // bins 0..99 (cents)
	Limits     []LimitCounts   `json:"limits"`      // round limits probed, with their band counts
	TopAmounts []AmountCount   `json:"top_amounts"` // the most frequent exact amounts, most first
	Extra      map[int64]int64 `json:"-"`           // counts of specific amounts (cents) asked for
}

// LimitCounts are a limit's band counts in the population.
type LimitCounts struct {
	Limit float64 `json:"limit"`
	Below int64   `json:"below"`
	Above int64   `json:"above"`
}

// AmountCount is one exact amount (in cents) and how often it occurs.
type AmountCount struct {
	Cents int64 `json:"cents"`
	Count int64 `json:"count"`
}

// N is the number of amounts in the population.
func (p Population) N() int64 {
	var n int64
	for _, c := range p.FirstThree {
		n += c
	}
	return n
}

// Kind of injection.
const (
	Uniform    = "uniform"     // uniform in [From, To)
	BelowLimit = "below-limit" // uniform in [Limit(1-Width), Limit)
	Repeated   = "repeated"    // one amount, again and again
	Rounded    = "rounded"     // log-uniform amounts rounded to whole hundreds
)

// Options describe a study.
type Options struct {
	Kind     string    `json:"kind"`
	From     float64   `json:"from,omitempty"`
	To       float64   `json:"to,omitempty"`
	Limit    float64   `json:"limit,omitempty"`
	Width    float64   `json:"width"`
	Amount   float64   `json:"amount,omitempty"`
	Rates    []float64 `json:"rates"`
	Seeds    int       `json:"seeds"`
	Baseline string    `json:"baseline"` // "workspace": the counts as loaded; "benford": a conforming population of the same size, drawn afresh per seed
	Min      float64   `json:"min_amount"`
	Max      float64   `json:"max_amount"` // range of rounded injections
}

// Validate checks the options and fills defaults.
func (o *Options) Validate() error {
	if o.Width == 0 {
		o.Width = 0.10
	}
	if o.Seeds == 0 {
		o.Seeds = 50
	}
	if len(o.Rates) == 0 {
		o.Rates = []float64{0, 0.005, 0.01, 0.02, 0.05, 0.10}
	}
	if o.Baseline == "" {
		o.Baseline = "benford"
	}
	if o.Min == 0 {
		o.Min = 10
	}
	if o.Max == 0 {
		o.Max = 100000
	}
	for _, r := range o.Rates {
		if r < 0 || r > 1 {
			return fmt.Errorf("rate %v: give rates as shares between 0 and 1 (0.01 for 1%%)", r)
		}
	}
	if o.Baseline != "benford" && o.Baseline != "workspace" {
		return fmt.Errorf("baseline %q: give benford or workspace", o.Baseline)
	}
	switch o.Kind {
	case Uniform:
		if !(o.From >= o.Min && o.To > o.From) {
			return fmt.Errorf("uniform injection needs FROM < TO, both at least the minimum amount %v", o.Min)
		}
	case BelowLimit:
		if err := benford.CheckLimit(o.Limit, o.Width); err != nil {
			return err
		}
	case Repeated:
		if !(o.Amount >= o.Min) {
			return fmt.Errorf("repeated injection needs an amount of at least %v", o.Min)
		}
	case Rounded:
	default:
		return fmt.Errorf("kind %q: give uniform, below-limit, repeated or rounded", o.Kind)
	}
	return nil
}

// Signal names, each a flag the engagement team would act on.
const (
	SigFirstTwoFlag  = "first_two bin flagged"   // the battery's bin flag: exact binomial, Holm, material
	SigRunsP         = "first_two runs p < 0.05" // the runs test against its simulated null
	SigFirstThreeFlg = "first_three bin flagged"
	SigLastTwoFlag   = "last_two bin flagged"
	SigFirstTwoMAD   = "first_two MAD nonconforming"
	SigFirstTwoChi   = "first_two chi-square p < 0.01"
	SigGoodman       = "first_two bin outside Goodman 95%"
	SigRuns          = "first_two runs < 35"
	SigFirstThreeMAD = "first_three MAD nonconforming"
	SigLastTwoChi    = "last_two chi-square p < 0.01"
	SigLimit         = "limit probe flags the limit"
	SigDuplication   = "amount among the 10 most frequent"
)

// Row is one signal's detection share per rate.
type Row struct {
	Signal    string    `json:"signal"`
	Detection []float64 `json:"detection"` // share of seeds that fired, per rate
}

// Result of a study.
type Result struct {
	Options Options   `json:"options"`
	N       int64     `json:"n"`
	Rates   []float64 `json:"rates"`
	Rows    []Row     `json:"rows"`
	Notes   []string  `json:"notes"`
}

// Run performs the study on the population's counts.
func Run(pop Population, o Options) (*Result, error) {
	if err := o.Validate(); err != nil {
		return nil, err
	}
	if len(pop.FirstThree) != 900 || len(pop.LastTwo) != 100 {
		return nil, fmt.Errorf("population counts have the wrong shape")
	}
	n := pop.N()
	if n == 0 {
		return nil, fmt.Errorf("the population has no amounts to test")
	}
	signals := []string{SigFirstTwoFlag, SigRunsP, SigFirstThreeFlg, SigLastTwoFlag, SigFirstTwoMAD, SigFirstTwoChi, SigGoodman, SigRuns, SigFirstThreeMAD, SigLastTwoChi}
	if o.Kind == BelowLimit {
		signals = append(signals, SigLimit)
	}
	if o.Kind == Repeated {
		signals = append(signals, SigDuplication)
	}
	fired := make(map[string][]int, len(signals))
	for _, s := range signals {
		fired[s] = make([]int, len(o.Rates))
	}
	for ri, rate := range o.Rates {
		for seed := 0; seed < o.Seeds; seed++ {
			rng := rand.New(rand.NewPCG(uint64(seed)+1, uint64(ri)*7919+13))
			f3 := append([]int64(nil), pop.FirstThree...)
			l2 := append([]int64(nil), pop.LastTwo...)
			if o.Baseline == "benford" {
				f3 = multinomial(rng, n, benford.Expected(benford.FirstThree))
				l2 = multinomial(rng, n, benford.Expected(benford.LastTwo))
			}
			k := int64(math.Round(rate * float64(n)))
			inj := inject(rng, o, k)
			below, above := int64(0), int64(0)
			var injRepeat int64
			for _, c := range inj {
				f3[firstThree(c)-100]++
				l2[c%100]++
				if o.Kind == BelowLimit {
					lim := int64(math.Round(o.Limit * 100))
					lo := int64(math.Ceil(o.Limit * (1 - o.Width) * 100))
					if c >= lo && c < lim {
						below++
					} else if c >= lim {
						above++
					}
				}
				if o.Kind == Repeated {
					injRepeat++
				}
			}
			fire := evaluate(f3, l2)
			if o.Kind == BelowLimit {
				fire[SigLimit] = limitFires(rng, pop, o, below, above)
			}
			if o.Kind == Repeated {
				fire[SigDuplication] = repeatFires(pop, o, injRepeat)
			}
			for s, ok := range fire {
				if ok {
					fired[s][ri]++
				}
			}
		}
	}
	res := &Result{Options: o, N: n, Rates: o.Rates}
	for _, s := range signals {
		row := Row{Signal: s}
		for ri := range o.Rates {
			row.Detection = append(row.Detection, float64(fired[s][ri])/float64(o.Seeds))
		}
		res.Rows = append(res.Rows, row)
	}
	if o.Baseline == "benford" {
		res.Notes = append(res.Notes, "baseline: a conforming population of the same size drawn afresh for each seed, so the rate-0 column is each signal's false-alarm rate")
	} else {
		res.Notes = append(res.Notes, "baseline: the workspace's own counts, the same in every seed; the rate-0 column says whether a signal already fires on the population itself")
	}
	res.Notes = append(res.Notes, "rules of thumb used as signals (MAD ranges, runs < 35, top 10) are common practice, no source")
	return res, nil
}

// firstThree returns the first three significant digits of a positive
// amount in cents (at least 1000 cents, i.e. 10.00).
func firstThree(c int64) int {
	for c >= 1000 {
		c /= 10
	}
	for c < 100 {
		c *= 10
	}
	return int(c)
}

func inject(rng *rand.Rand, o Options, k int64) []int64 {
	out := make([]int64, 0, k)
	uniform := func(a, b float64) int64 {
		lo, hi := int64(math.Ceil(a*100)), int64(math.Ceil(b*100))
		return lo + rng.Int64N(hi-lo)
	}
	for i := int64(0); i < k; i++ {
		var c int64
		switch o.Kind {
		case Uniform:
			c = uniform(o.From, o.To)
		case BelowLimit:
			c = uniform(o.Limit*(1-o.Width), o.Limit)
		case Repeated:
			c = int64(math.Round(o.Amount * 100))
		case Rounded:
			x := math.Exp(math.Log(math.Max(o.Min, 100)) + rng.Float64()*(math.Log(o.Max)-math.Log(math.Max(o.Min, 100))))
			c = int64(math.Max(1, math.Round(x/100))) * 10000
		}
		out = append(out, c)
	}
	return out
}

func multinomial(rng *rand.Rand, n int64, p []float64) []int64 {
	out := make([]int64, len(p))
	left := n
	rest := 1.0
	src := rngSource{rng}
	for i, pi := range p {
		if left == 0 {
			break
		}
		if i == len(p)-1 || rest <= pi {
			out[i] = left
			break
		}
		q := math.Min(1, pi/rest)
		b := distuv.Binomial{N: float64(left), P: q, Src: src}
		x := int64(b.Rand())
		out[i] = x
		left -= x
		rest -= pi
	}
	return out
}

type rngSource struct{ r *rand.Rand }

func (s rngSource) Uint64() uint64 { return s.r.Uint64() }

func evaluate(f3, l2 []int64) map[string]bool {
	f2 := make([]int64, 90)
	for i, c := range f3 {
		f2[(i+100)/10-10] += c
	}
	out := map[string]bool{}
	r2, _ := benford.Analyze(benford.FirstTwo, f2)
	out[SigFirstTwoFlag] = r2.Flagged > 0
	out[SigRunsP] = r2.Runs != nil && r2.Runs.P < 0.05
	out[SigFirstTwoMAD] = r2.Conformity == "nonconforming"
	out[SigFirstTwoChi] = r2.DF > 0 && r2.PValue < 0.01
	out[SigGoodman] = r2.OutsideGoodman > 0
	out[SigRuns] = r2.Runs != nil && r2.Runs.Runs < 35
	r3, _ := benford.Analyze(benford.FirstThree, f3)
	out[SigFirstThreeMAD] = r3.Conformity == "nonconforming"
	out[SigFirstThreeFlg] = r3.Flagged > 0
	rl, _ := benford.Analyze(benford.LastTwo, l2)
	out[SigLastTwoChi] = rl.DF > 0 && rl.PValue < 0.01
	out[SigLastTwoFlag] = rl.Flagged > 0
	return out
}

// limitFires probes the population's limits with the injected counts
// added at the target limit, Holm-adjusted together, and says whether the
// target is flagged. With a benford baseline the band counts are redrawn
// from the null split (the 1/x density) around the population's totals.
func limitFires(rng *rand.Rand, pop Population, o Options, below, above int64) bool {
	var rs []benford.LimitResult
	found := false
	for _, l := range pop.Limits {
		b, a := l.Below, l.Above
		if o.Baseline == "benford" {
			r := benford.ExpectedBelowAboveRatio(o.Width)
			tot := b + a
			if tot > 0 {
				bin := distuv.Binomial{N: float64(tot), P: r / (1 + r), Src: rngSource{rng}}
				b = int64(bin.Rand())
				a = tot - b
			}
		}
		if l.Limit == o.Limit {
			b += below
			a += above
			found = true
		}
		rs = append(rs, benford.LimitProbe(l.Limit, o.Width, b, a))
	}
	if !found {
		rs = append(rs, benford.LimitProbe(o.Limit, o.Width, below, above))
	}
	benford.AdjustLimits(rs)
	for _, r := range rs {
		if r.Limit == o.Limit {
			return r.Flagged
		}
	}
	return false
}

// repeatFires: the repeated amount's count (population plus injected)
// reaches the 10 most frequent amounts of the population.
func repeatFires(pop Population, o Options, injected int64) bool {
	if injected == 0 {
		return false
	}
	cents := int64(math.Round(o.Amount * 100))
	own := pop.Extra[cents] + injected
	var others []int64
	for _, a := range pop.TopAmounts {
		if a.Cents != cents {
			others = append(others, a.Count)
		}
	}
	sort.Slice(others, func(i, j int) bool { return others[i] > others[j] })
	if len(others) < 10 {
		return true
	}
	return own > others[9]
}
