package benford

import (
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"sync"
)

// The summation test's flag. A bin's share of the total |amount| varies
// with the spread of the amounts, not with N alone: under Benford's law
// the top decade holds about 90% of the total, so each bin's sum rests on
// the few amounts of the highest decade (at N = 5,000 over five decades,
// about ten per bin). A fixed rule ("twice 1/90") therefore flags a bin in
// about half of all conforming populations of 5,000 amounts.
//
// The flag is calibrated instead by simulation from the null model of
// Scale (amounts log-uniform from the test's minimum over the fitted
// number of decades, N amounts): per draw, each bin's share of the total,
// standardized by its simulated mean and spread; the largest standardized
// surplus over the 90 bins is the test statistic, and its simulated
// distribution gives each bin a single-step max-T adjusted p-value
// (P. H. Westfall and S. S. Young, Resampling-Based Multiple Testing,
// Wiley 1993, the single-step max-T procedure), which holds the
// family-wise rate at alpha whatever the dependence between the bins.
// A bin is flagged when that p-value is below alpha and its share is
// material: at least twice 1/90 (SummationMinExcess), and at least twice
// the median share of its neighbours (summationNeighbours): the test
// looks for a bin that stands out, such as a large amount repeated, and
// a population whose top decade tapers (most real ones) holds more of
// its total in every low bin alike.

// SummationMinExcess is the summation test's materiality margin: a bin is
// material when it holds at least 1 + SummationMinExcess times its
// expected share of the total, that is twice 1/90 (the trade's rule for
// this test, common practice, no source). It is wider than the count
// tests' --min-excess because a bin's share of amounts rests on few
// amounts and on the shape of the top decade: the demo ledger, whose
// lines split log-uniform totals, holds 1.2 to 1.33 times 1/90 in bins 10
// to 19 (its top decade tapers), which is real but no reason to follow up.
const SummationMinExcess = 1.0

// summationNeighbours is the number of bins on each side (fewer at bins
// 10 and 99) whose median share is a bin's local reference: a bin is
// material only when it holds at least 1 + SummationMinExcess times both
// 1/90 and that median. A smooth excess over the low bins (the demo's
// users, whose invoice lines split totals of up to 100,000, hold 2.0 to
// 2.7 times 1/90 in each of bins 10 to 21, beyond chance for the model's
// whole decades) is then not flagged, while one bin holding a repeated
// large amount still is: its neighbours are not lifted with it. Five a
// side is a judgement of this project (no published source), the same
// width as the local surplus flag's flanks.
const summationNeighbours = 5

// neighbourMedian returns the median of the shares of the bins within
// summationNeighbours of bin k (k itself left out).
func neighbourMedian(bins []Bin, k int) float64 {
	var v []float64
	for j := max(0, k-summationNeighbours); j <= min(len(bins)-1, k+summationNeighbours); j++ {
		if j != k {
			v = append(v, bins[j].Actual)
		}
	}
	slices.Sort(v)
	m := len(v) / 2
	if len(v)%2 == 1 {
		return v[m]
	}
	return (v[m-1] + v[m]) / 2
}

// summationNull is the simulated null distribution of the summation
// test's shares at one model.
type summationNull struct {
	key     sumKey
	mean    [90]float64 // mean of 90·share per bin
	sd      [90]float64 // its standard deviation
	sorted  [90][]float64
	maxZ    []float64 // largest standardized surplus per draw, ascending
	decades float64
}

type sumKey struct {
	n       int64   // simulatedN
	decades float64 // rounded to whole decades
	offset  float64 // fractional part of log10(min), rounded to 0.05
}

var summationCache sync.Map // sumKey -> *summationNull

// summationKey rounds a model so that segments of similar size and spread
// share one simulation: N to a grid of 10 steps a decade (26% apart; the
// spread of the shares, which falls as 1/sqrt(N), is rescaled to the
// population's own N in z), the decades to whole decades: only over whole
// decades does every bin expect 1/90 of the total (over 4.25 decades the
// top quarter decade, bins 10 to 17, would hold more than its share, and
// the null would centre the other bins below 1/90).
func summationKey(s Scale) sumKey {
	d, _ := FitDecades(s.Min, s.Mean)
	n := s.N
	if n > 100 {
		n = int64(math.Round(math.Pow(10, math.Round(10*math.Log10(float64(n)))/10)))
	}
	off := math.Log10(s.Min)
	off -= math.Floor(off)
	off = math.Round(off*20) / 20
	if off >= 1 {
		off = 0
	}
	return sumKey{n: n, decades: math.Max(1, math.Round(d)), offset: off}
}

// summationCell is one stretch of the model's log-scale inside one decade
// and one first-two bin.
type summationCell struct {
	bin      int // 0..89
	p        float64
	mean, sd float64 // of one amount in the cell, top of the range = 1
}

// summationCells splits log10 x over [offset, offset + decades) at every
// first-two bin boundary. Amounts are measured against the top of the
// range (x / max), so the largest is 1.
func summationCells(offset, decades float64) []summationCell {
	cuts := []float64{0, decades}
	for j := 0; float64(j) <= offset+decades+1; j++ {
		for k := 10; k <= 99; k++ {
			s := float64(j) + math.Log10(float64(k)/10) - offset
			if s > 0 && s < decades {
				cuts = append(cuts, s)
			}
		}
	}
	sort.Float64s(cuts)
	var cells []summationCell
	for i := 0; i+1 < len(cuts); i++ {
		s0, s1 := cuts[i], cuts[i+1]
		if s1-s0 < 1e-12 {
			continue
		}
		mid := offset + (s0+s1)/2
		k := int(math.Floor(10 * math.Pow(10, mid-math.Floor(mid))))
		k = min(max(k, 10), 99)
		m, v := logUniformMoments(math.Pow(10, s0-decades), math.Pow(10, s1-decades))
		cells = append(cells, summationCell{bin: k - 10, p: (s1 - s0) / decades, mean: m, sd: math.Sqrt(v)})
	}
	return cells
}

// summationNullFor returns the simulated null of the summation test at the
// model of s, drawn once per rounded model (seeded by it) and cached.
func summationNullFor(s Scale) *summationNull {
	key := summationKey(s)
	if v, ok := summationCache.Load(key); ok {
		return v.(*summationNull)
	}
	cells := summationCells(key.offset, key.decades)
	// Cells more than three decades below the top hold under 0.1% of the
	// total: they enter at their expected sum, and only the others are
	// drawn (which makes a null several times cheaper at many decades).
	var random []summationCell
	var ps []float64
	var fixed [90]float64
	var pr, tot float64
	for _, c := range cells {
		tot += c.p
	}
	for _, c := range cells {
		if c.mean+3*c.sd < 1e-3 {
			fixed[c.bin] += float64(key.n) * c.p / tot * c.mean
			continue
		}
		random = append(random, c)
		ps = append(ps, c.p/tot)
		pr += c.p / tot
	}
	for i := range ps {
		ps[i] /= pr
	}
	h := fnv.New64a()
	h.Write([]byte("summation"))
	src := rand.NewPCG(h.Sum64()^math.Float64bits(key.decades), uint64(key.n)^math.Float64bits(key.offset))
	rng := rand.New(src)
	sampler := newMultinomialSampler(ps)
	cnt := make([]int64, len(ps))
	sims := summationSimulations
	ratios := make([][90]float64, sims)
	for d := range sims {
		sampler.draw(src, rng, Binomial(rng, key.n, math.Min(1, pr)), cnt)
		sums := fixed
		var total float64
		for _, x := range fixed {
			total += x
		}
		for i, c := range cnt {
			if c == 0 {
				continue
			}
			x := float64(c)*random[i].mean + math.Sqrt(float64(c))*random[i].sd*rng.NormFloat64()
			x = math.Max(x, 0)
			sums[random[i].bin] += x
			total += x
		}
		if total > 0 {
			for k := range sums {
				ratios[d][k] = 90 * sums[k] / total
			}
		}
	}
	nl := &summationNull{key: key, decades: key.decades}
	for k := range 90 {
		var s, s2 float64
		col := make([]float64, sims)
		for d := range sims {
			x := ratios[d][k]
			col[d] = x
			s += x
			s2 += x * x
		}
		nl.mean[k] = s / float64(sims)
		nl.sd[k] = math.Sqrt(math.Max(0, (s2-s*s/float64(sims))/float64(sims-1)))
		slices.Sort(col)
		nl.sorted[k] = col
	}
	nl.maxZ = make([]float64, sims)
	for d := range sims {
		m := math.Inf(-1)
		for k := range 90 {
			m = math.Max(m, nl.z(k, ratios[d][k]))
		}
		nl.maxZ[d] = m
	}
	slices.Sort(nl.maxZ)
	v, _ := summationCache.LoadOrStore(key, nl)
	return v.(*summationNull)
}

// z standardizes 90·share of bin k at the simulated N.
func (nl *summationNull) z(k int, ratio float64) float64 {
	return nl.zAt(k, ratio, nl.key.n)
}

// zAt standardizes 90·share of bin k for a population of n amounts: the
// simulated spread rescaled by sqrt(simulated N / n).
func (nl *summationNull) zAt(k int, ratio float64, n int64) float64 {
	sd := nl.sd[k] * math.Sqrt(float64(nl.key.n)/float64(max(n, 1)))
	if sd <= 0 {
		return 0
	}
	return (ratio - nl.mean[k]) / sd
}

// critical returns the smallest standardized surplus whose max-T p-value
// is below alpha.
func (nl *summationNull) critical(alpha float64) float64 {
	s := len(nl.maxZ)
	// p(z) = (count(maxZ >= z) + 1)/(s + 1) < alpha  <=>  count < alpha(s+1) - 1
	c := int(math.Ceil(alpha*float64(s+1) - 1))
	if c <= 0 {
		return math.Inf(1)
	}
	return nl.maxZ[s-c]
}

// flagSummation fills P, PAdjusted, Z, Upper, MinDiff, Material and
// Flagged of the bins of a summation result, from the simulated null of
// scale s.
func (res *Result) flagSummation(s Scale, f Flagging) {
	nl := summationNullFor(s)
	crit := nl.critical(f.Alpha)
	for k := range res.Bins {
		b := &res.Bins[k]
		r := 90 * b.Actual
		z := nl.zAt(k, r, s.N)
		b.Z = math.Max(0, z)
		// the share as it would read at the simulated N, for the marginal tail
		b.P = atLeast(nl.sorted[k], nl.mean[k]+(r-nl.mean[k])*math.Sqrt(float64(s.N)/float64(nl.key.n)))
		// No tail beyond the draws here (tailAtLeast): the largest
		// standardized share has a skewed tail its check does not cover.
		b.PAdjusted = atLeast(nl.maxZ, z)
		b.Upper = (nl.mean[k] + crit*nl.sd[k]*math.Sqrt(float64(nl.key.n)/float64(s.N))) / 90
		if math.IsInf(b.Upper, 0) {
			b.Upper = 1
		}
		b.Lower = 0
		b.Neighbours = neighbourMedian(res.Bins, k)
		ref := math.Max(b.Expected, b.Neighbours)
		b.MinDiff = (1+SummationMinExcess)*ref - b.Expected
		b.Material = b.Diff >= b.MinDiff*(1-1e-12)
		b.Flagged = b.PAdjusted < f.Alpha && b.Material
	}
	res.FlagRule = f
	res.SummationDecades = nl.decades
	res.SimulatedN = nl.key.n
}

// summationSimulations is the number of populations drawn for the
// summation test's null: its critical value is a 95th percentile of a
// maximum, whose simulation error at 2,000 draws (about ±0.5 points of
// the rate) showed in the measured rate; at 5,000 it is about ±0.3.
const summationSimulations = 5000
