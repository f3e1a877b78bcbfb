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

// LimitCounts are a limit's band counts in the population: the tested
// bands [T(1-w), T) and [T, T(1+w)) and, when the probe could model the
// density near T from them (Flanked), the flanking bands [T(1-2w),
// T(1-w)) and [T(1+w), T(1+2w)).
type LimitCounts struct {
	Limit   float64 `json:"limit"`
	Below   int64   `json:"below"`
	Above   int64   `json:"above"`
	Flanked bool    `json:"flanked"`
	Left    int64   `json:"left,omitempty"`
	Right   int64   `json:"right,omitempty"`
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

// Signal names: the flags the product raises (the same rules as the scan,
// the report and the limit probe), then the trade's older rules, named as
// references.
const (
	SigFirstTwoFlag  = "first_two bin flagged"           // the battery's bin flag: exact binomial, Holm, material
	SigFirstTwoLocal = "first_two local surplus flagged" // adjacent bins above their neighbours' smooth trend: calibrated, material
	SigRunsP         = "first_two runs p < 0.05"         // the runs test against its simulated null
	SigFirstTwoChi   = "first_two chi-square p < 0.05"
	SigFirstTwoCvM   = "first_two Cramér-von Mises U² p < 0.05"
	SigFirstTwoSev   = "first_two MAD beyond chance, material" // the severity verdict: MAD beyond its simulated null and in the marginal or nonconforming class
	SigFirstThreeFlg = "first_three bin flagged"
	SigLastTwoFlag   = "last_two bin flagged"
	SigLimit         = "limit probe flags the limit" // flanked: the density near the limit modelled from its flanking bands
	SigDuplication   = "amount among the 10 most frequent"

	SigFirstTwoMAD = "reference: first_two MAD nonconforming"
	SigGoodman     = "reference: first_two bin outside Goodman 95%"
	SigRuns        = "reference: first_two runs < 35"
	SigLimitOneX   = "reference: limit probe under a 1/x density"
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
	signals := []string{SigFirstTwoFlag, SigFirstTwoLocal, SigRunsP, SigFirstTwoChi, SigFirstTwoCvM, SigFirstTwoSev, SigFirstThreeFlg, SigLastTwoFlag}
	if o.Kind == BelowLimit {
		signals = append(signals, SigLimit)
	}
	if o.Kind == Repeated {
		signals = append(signals, SigDuplication)
	}
	signals = append(signals, SigFirstTwoMAD, SigGoodman, SigRuns)
	if o.Kind == BelowLimit {
		signals = append(signals, SigLimitOneX)
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
			var bands [4]int64 // injected amounts in the left flank, below, above and the right flank of the limit
			var injRepeat int64
			for _, c := range inj {
				f3[firstThree(c)-100]++
				l2[c%100]++
				if o.Kind == BelowLimit {
					if b := bandOf(c, o.Limit, o.Width); b >= 0 {
						bands[b]++
					}
				}
				if o.Kind == Repeated {
					injRepeat++
				}
			}
			fire := evaluate(f3, l2)
			if o.Kind == BelowLimit {
				fire[SigLimit], fire[SigLimitOneX] = limitFires(rng, pop, o, bands)
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
	res.Notes = append(res.Notes, "the signals are the product's flags (bin flag with Holm's step-down and materiality, the first-two local surplus flag, calibrated runs test, chi-square, Cramér-von Mises U², MAD severity, the limit probe with the density modelled from its flanking bands); rows named reference are the trade's older rules, kept for comparison")
	res.Notes = append(res.Notes, "rules of thumb among the signals (MAD ranges, runs < 35, top 10) are common practice, no source")
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
	out[SigFirstTwoLocal] = r2.LocalSurplus != nil && len(r2.LocalSurplus.Flagged) > 0
	out[SigRunsP] = r2.Runs != nil && r2.Runs.P < 0.05
	out[SigFirstTwoChi] = r2.DF > 0 && r2.PValue < 0.05
	out[SigFirstTwoCvM] = r2.DF > 0 && r2.CvMU2P < 0.05
	out[SigFirstTwoSev] = r2.Severity == benford.BeyondChanceMaterial
	out[SigFirstTwoMAD] = r2.Conformity == "nonconforming"
	out[SigGoodman] = r2.OutsideGoodman > 0
	out[SigRuns] = r2.Runs != nil && r2.Runs.Runs < benford.FewRunsFirstTwo
	r3, _ := benford.Analyze(benford.FirstThree, f3)
	out[SigFirstThreeFlg] = r3.Flagged > 0
	rl, _ := benford.Analyze(benford.LastTwo, l2)
	out[SigLastTwoFlag] = rl.Flagged > 0
	return out
}

// bandOf returns which band of limit T an amount in cents falls in: 0 the
// left flank [T(1-2w), T(1-w)), 1 below [T(1-w), T), 2 above [T, T(1+w)),
// 3 the right flank [T(1+w), T(1+2w)); -1 outside them.
func bandOf(c int64, limit, w float64) int {
	edges := [5]float64{limit * (1 - 2*w), limit * (1 - w), limit, limit * (1 + w), limit * (1 + 2*w)}
	for b := 0; b < 4; b++ {
		lo, hi := int64(math.Ceil(edges[b]*100)), int64(math.Ceil(edges[b+1]*100))
		if c >= lo && c < hi {
			return b
		}
	}
	return -1
}

// limitFires probes the population's limits with the injected band counts
// added at the target limit, Holm-adjusted together like the limit probe,
// and says whether the target is flagged: by the probe the product runs
// (the density near each limit modelled from its flanking bands,
// benford.LimitProbeFlanked; the 1/x split where the population gave no
// flanks) and, as a reference, under the 1/x density. With a benford
// baseline the band counts are redrawn around the population's totals
// from the 1/x density (shares of the bands' log widths), which is what a
// population following Benford's law gives.
func limitFires(rng *rand.Rand, pop Population, o Options, inj [4]int64) (flanked, oneX bool) {
	w := o.Width
	var rs, ro []benford.LimitResult
	found := false
	for _, l := range pop.Limits {
		bands := [4]int64{l.Left, l.Below, l.Above, l.Right}
		if o.Baseline == "benford" {
			if l.Flanked {
				bands = redraw(rng, bands[:], []float64{math.Log((1 - w) / (1 - 2*w)), -math.Log(1 - w), math.Log(1 + w), math.Log((1 + 2*w) / (1 + w))})
			} else {
				r := benford.ExpectedBelowAboveRatio(w)
				b := redraw(rng, bands[1:3], []float64{r, 1})
				bands = [4]int64{0, b[0], b[1], 0}
			}
		}
		if l.Limit == o.Limit {
			for i := range bands {
				bands[i] += inj[i]
			}
			found = true
		}
		ro = append(ro, benford.LimitProbe(l.Limit, w, bands[1], bands[2]))
		if l.Flanked {
			rs = append(rs, benford.LimitProbeFlanked(l.Limit, w, bands[1], bands[2], bands[0], bands[3]))
		} else {
			rs = append(rs, benford.LimitProbe(l.Limit, w, bands[1], bands[2]))
		}
	}
	if !found {
		ro = append(ro, benford.LimitProbe(o.Limit, w, inj[1], inj[2]))
		rs = append(rs, benford.LimitProbe(o.Limit, w, inj[1], inj[2]))
	}
	return flaggedAt(rs, o.Limit), flaggedAt(ro, o.Limit)
}

// redraw draws the total of counts again over len(counts) bands with
// weights w (multinomial), returned in the first len(counts) places.
func redraw(rng *rand.Rand, counts []int64, w []float64) [4]int64 {
	var tot int64
	for _, c := range counts {
		tot += c
	}
	var sum float64
	for _, x := range w {
		sum += x
	}
	p := make([]float64, len(w))
	for i, x := range w {
		p[i] = x / sum
	}
	var out [4]int64
	copy(out[:], multinomial(rng, tot, p))
	return out
}

// flaggedAt adjusts the probes together (Holm) and says whether the one at
// limit is flagged.
func flaggedAt(rs []benford.LimitResult, limit float64) bool {
	benford.AdjustLimits(rs)
	for _, r := range rs {
		if r.Limit == limit {
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
