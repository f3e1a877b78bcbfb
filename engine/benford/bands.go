package benford

import (
	"math"
	"sort"
)

// Band is one amount range of the range table: the count of amounts in
// [From, To) against a smooth expectation drawn from the other bands.
type Band struct {
	From      float64 `json:"from"`
	To        float64 `json:"to"`
	Count     int64   `json:"count"`
	Expected  float64 `json:"expected"`   // smooth expectation from the neighbouring bands (0 if not scored)
	Ratio     float64 `json:"ratio"`      // count / expected (0 if not scored)
	Z         float64 `json:"z"`          // (count - expected) / sqrt(φ expected), φ the dispersion
	P         float64 `json:"p"`          // one-sided upper tail, scaled Poisson
	PAdjusted float64 `json:"p_adjusted"` // Holm over the scored bands
	Flagged   bool    `json:"flagged"`    // PAdjusted < 0.05 and count > expected
	Scored    bool    `json:"scored"`     // false for bands that start at or below zero, or too few bands
}

// Parameters of the band scoring.
const (
	// MaxBands bounds LinearBands and LogBands.
	MaxBands = 100000
	// MinScoredBands is the fewest scorable bands ScoreBands works with.
	MinScoredBands = 5
	// BandAlpha is the family-wise error rate at which bands are flagged.
	BandAlpha = 0.05
	// minNeighbours and maxNeighbours bound the neighbours on each side of
	// a band in its local fit (see ScoreBands).
	minNeighbours = 10
	maxNeighbours = 30
)

// LinearBands returns bands of equal width covering [min, max):
// [min + i·width, min + (i+1)·width). The last band ends at or just past
// max. It returns nil unless width > 0, max > min, both are finite and
// there are at most MaxBands bands.
func LinearBands(min, max, width float64) []Band {
	if !(width > 0) || !(max > min) || math.IsInf(min, 0) || math.IsInf(max, 0) || math.IsInf(width, 0) {
		return nil
	}
	nf := math.Ceil((max-min)/width - 1e-9)
	if nf < 1 || nf > MaxBands {
		return nil
	}
	n := int(nf)
	bands := make([]Band, n)
	for i := range bands {
		bands[i].From = min + float64(i)*width
		bands[i].To = min + float64(i+1)*width
	}
	return bands
}

// LogBands returns bands of equal width on a logarithmic scale, perDecade
// to a decade, with edges on the grid 10^(j/perDecade) (so every power of
// ten is an edge), from the largest grid point <= min to the smallest >=
// max. Edges are not rounded to display values. It returns nil unless
// 0 < min < max, both finite, perDecade >= 1, and there are at most
// MaxBands bands.
func LogBands(min, max float64, perDecade int) []Band {
	if !(min > 0) || !(max > min) || math.IsInf(max, 0) || perDecade < 1 {
		return nil
	}
	pd := float64(perDecade)
	j0 := int(math.Floor(math.Log10(min)*pd + 1e-9))
	j1 := int(math.Ceil(math.Log10(max)*pd - 1e-9))
	if j1 <= j0 {
		j1 = j0 + 1
	}
	if j1-j0 > MaxBands {
		return nil
	}
	edge := func(j int) float64 {
		k := j / perDecade
		m := j % perDecade
		if m < 0 {
			m += perDecade
			k--
		}
		var p float64
		if k >= 0 {
			p = math.Pow10(k)
		} else {
			p = 1 / math.Pow10(-k)
		}
		if m == 0 {
			return p
		}
		return p * math.Pow(10, float64(m)/pd)
	}
	bands := make([]Band, j1-j0)
	for i := range bands {
		bands[i].From = edge(j0 + i)
		bands[i].To = edge(j0 + i + 1)
	}
	return bands
}

// ScoreBands compares each band's count with a smooth expectation drawn
// from the other bands and flags the bands well above it. Bands must be in
// ascending order of amount; only From, To and Count are read.
//
// The expectation works on the log scale, where a scale-invariant density
// f(x) ∝ 1/x (the Benford case) is flat. For band i = [a, b) with count
// n_i let
//
//	u_i = ln(b/a)                    its width on the log scale
//	x_i = ln((b - a)/u_i)            the log of its logarithmic mean
//	y_i = ln((n_i + 1/2)/u_i)        log count per unit of log width
//
// (the logarithmic mean is where a 1/x density takes its band average, and
// the 1/2 is the usual start for counts that may be 0). For each band a
// straight line y = α + βx is fitted by Siegel's repeated median
// (A. F. Siegel, Robust regression using repeated medians, Biometrika 69,
// 242-244, 1982) through its nearest scorable neighbours, h on each side
// (h = n/4 clamped to [10, 30], shifted inwards at the ends of the range),
// the band itself excluded; then Expected_i = u_i exp(α + β x_i). The
// repeated median tolerates up to half the neighbours being inflated, so a
// block of several adjacent inflated bands neither hides itself nor is
// absorbed into its neighbours' expectations, and a straight line on the
// log scale follows any smooth trend (a power law exactly). Linear and
// logarithmic bands are treated alike.
//
// With Pearson residuals z_i = (n_i - E_i)/sqrt(E_i), the dispersion is
// φ = max(1, (1.4826 · MAD(z))²), a robust quasi-Poisson scale (the median
// absolute deviation about the median, scaled to the normal standard
// deviation; Hampel 1974) that absorbs both the noise of the fit and any
// misfit of the smooth trend common to most bands. Then
//
//	Z_i = (n_i - E_i) / sqrt(φ E_i)
//	P_i = P(X >= n_i/φ), X ~ Poisson(E_i/φ)   (PoissonUpperTail; exact Poisson when φ = 1)
//
// and the one-sided P_i are adjusted over the scored bands with Holm's
// procedure (Holm); a band is flagged when PAdjusted < 0.05 and it holds
// more than expected. Shortfalls are never flagged.
//
// A band that starts at or below zero has no log scale position: it is
// left unscored (Scored false, Expected 0, P and PAdjusted 1), as are all
// bands when fewer than MinScoredBands are scorable. The first band of
// LinearBands(0, ...) is such a band; under a 1/x density its count is
// dominated by the smallest amounts in any case.
func ScoreBands(bands []Band) {
	scoreBands(bands)
}

// BandDispersion returns the dispersion φ >= 1 that ScoreBands used for
// the scored bands (1 if none are scored).
func BandDispersion(bands []Band) float64 {
	var z []float64
	for _, b := range bands {
		if b.Scored && b.Expected > 0 {
			z = append(z, (float64(b.Count)-b.Expected)/math.Sqrt(b.Expected))
		}
	}
	return dispersion(z)
}

// dispersion returns max(1, (1.4826 MAD(z))²).
func dispersion(z []float64) float64 {
	if len(z) == 0 {
		return 1
	}
	m := median(append([]float64(nil), z...))
	dev := make([]float64, len(z))
	for i, v := range z {
		dev[i] = math.Abs(v - m)
	}
	s := 1.4826 * median(dev)
	return math.Max(1, s*s)
}

func scoreBands(bands []Band) {
	var idx []int // scorable bands
	for i := range bands {
		b := &bands[i]
		*b = Band{From: b.From, To: b.To, Count: b.Count, P: 1, PAdjusted: 1}
		if b.From > 0 && b.To > b.From && !math.IsInf(b.To, 0) && b.Count >= 0 {
			idx = append(idx, i)
		}
	}
	m := len(idx)
	if m < MinScoredBands {
		return
	}
	x := make([]float64, m)
	y := make([]float64, m)
	u := make([]float64, m)
	for s, i := range idx {
		b := bands[i]
		u[s] = math.Log(b.To / b.From)
		x[s] = math.Log((b.To - b.From) / u[s])
		y[s] = math.Log((float64(b.Count) + 0.5) / u[s])
	}
	h := min(max(m/4, minNeighbours), maxNeighbours)
	win := min(2*h, m-1)
	nx := make([]float64, 0, win)
	ny := make([]float64, 0, win)
	slopes := make([]float64, 0, win)
	z := make([]float64, 0, m)
	for s, i := range idx {
		lo := max(0, min(s-h, m-1-win))
		hi := lo + win // inclusive; window of win+1 positions containing s
		nx, ny = nx[:0], ny[:0]
		for t := lo; t <= hi; t++ {
			if t != s {
				nx = append(nx, x[t]-x[s])
				ny = append(ny, y[t])
			}
		}
		pred := repeatedMedianAt0(nx, ny, slopes)
		e := u[s] * math.Exp(pred)
		b := &bands[i]
		b.Expected = e
		b.Scored = true
		b.Ratio = float64(b.Count) / e
		z = append(z, (float64(b.Count)-e)/math.Sqrt(e))
	}
	phi := dispersion(z)
	p := make([]float64, m)
	for s, i := range idx {
		b := &bands[i]
		b.Z = (float64(b.Count) - b.Expected) / math.Sqrt(phi*b.Expected)
		b.P = PoissonUpperTail(float64(b.Count)/phi, b.Expected/phi)
		p[s] = b.P
	}
	adj := Holm(p)
	for s, i := range idx {
		b := &bands[i]
		b.PAdjusted = adj[s]
		b.Flagged = adj[s] < BandAlpha && float64(b.Count) > b.Expected
	}
}

// repeatedMedianAt0 fits y = α + βx by Siegel's repeated median,
//
//	β = med_i med_{j≠i} (y_j - y_i)/(x_j - x_i),   α = med_i (y_i - β x_i),
//
// and returns α, the fitted value at x = 0. Pairs with equal x are
// skipped. With fewer than two distinct x it returns the median of y.
// scratch is reused storage.
func repeatedMedianAt0(x, y, scratch []float64) float64 {
	n := len(x)
	inner := make([]float64, 0, n)
	for i := 0; i < n; i++ {
		scratch = scratch[:0]
		for j := 0; j < n; j++ {
			if j != i && x[j] != x[i] {
				scratch = append(scratch, (y[j]-y[i])/(x[j]-x[i]))
			}
		}
		if len(scratch) > 0 {
			inner = append(inner, median(scratch))
		}
	}
	if len(inner) == 0 {
		return median(append([]float64(nil), y...))
	}
	beta := median(inner)
	res := make([]float64, n)
	for i := range res {
		res[i] = y[i] - beta*x[i]
	}
	return median(res)
}

// median returns the median of v, reordering v. It returns 0 for an empty
// slice.
func median(v []float64) float64 {
	n := len(v)
	if n == 0 {
		return 0
	}
	sort.Float64s(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}
