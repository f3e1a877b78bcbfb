package benford

import (
	"math"
	"sort"
)

// Band is one amount range of the range table: the count of amounts in
// [From, To) against a smooth expectation drawn from the other bands.
type Band struct {
	From       float64 `json:"from"`
	To         float64 `json:"to"`
	Count      int64   `json:"count"`
	Expected   float64 `json:"expected"`    // smooth expectation from the neighbouring bands (0 if not scored)
	ExpectedSE float64 `json:"expected_se"` // standard error of Expected from the fit
	Ratio      float64 `json:"ratio"`       // count / expected (0 if not scored)
	Z          float64 `json:"z"`           // (count - expected) / sqrt(φ expected), φ the dispersion
	P          float64 `json:"p"`           // one-sided upper tail, scaled Poisson
	PAdjusted  float64 `json:"p_adjusted"`  // Holm over the scored bands
	Flagged    bool    `json:"flagged"`     // PAdjusted < 0.05 and count > expected
	Scored     bool    `json:"scored"`      // false for bands that start at or below zero, or too few bands
}

// Parameters of the band scoring.
const (
	// MaxBands bounds LinearBands and LogBands.
	MaxBands = 10000
	// MinScoredBands is the fewest scorable bands ScoreBands works with.
	MinScoredBands = 5
	// BandAlpha is the family-wise error rate at which bands are flagged.
	BandAlpha = 0.05
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

// BandFit says how ScoreBands fitted the expectation: the local fit's
// half-width (neighbours on each side) and degree chosen by
// cross-validation, and the cross-validation score of the choice.
type BandFit struct {
	HalfWidth  int     `json:"half_width"` // neighbours on each side of a band in its local fit
	Degree     int     `json:"degree"`     // 1 (line) or 2 (quadratic) on the log scale
	CVScore    float64 `json:"cv_score"`   // robust mean squared leave-one-out Pearson residual of the choice
	Candidates int     `json:"candidates"` // (half-width, degree) pairs compared
}

// ScoreBands compares each band's count with a smooth expectation drawn
// from the other bands and flags the bands well above it. Bands must be in
// ascending order of amount; only From, To and Count are read. It returns
// the fit it chose.
//
// The expectation works on the log scale, where a scale-invariant density
// f(x) ∝ 1/x (the Benford case) is flat and a log-normal density is a
// parabola. For band i = [a, b) with count n_i let
//
//	u_i = ln(b/a)                    its width on the log scale
//	x_i = ln((b - a)/u_i)            the log of its logarithmic mean
//	y_i = ln((n_i + 1/2)/u_i)        log count per unit of log width
//
// (the logarithmic mean is where a 1/x density takes its band average; the
// 1/2 is the usual start for counts that may be 0). For each band a
// polynomial of degree d in x is fitted through its nearest scorable
// neighbours, h on each side (the window is shifted inwards at the ends of
// the range), the band itself left out; then Expected_i = u_i exp(ŷ_i).
// The fit is robust in two steps:
//
//  1. start: a least-median-of-squares quadratic (Rousseeuw 1984) through
//     each band's window, searched over triples with one point from each
//     third of the window (lmsQuadraticAt0); a block of inflated bands
//     covering less than half the window does not move it;
//  2. five passes of weighted least squares (the robustness iterations of
//     Cleveland 1979, with a flat window): with e_j = y_j - ŷ_j the
//     leave-one-out residuals of the previous pass and s = 1.4826 med|e|,
//     band j gets weight (n_j + 1/2) · B(e_j / (4.685 sqrt(s² + 1/(n_j + 1/2))))
//     where n_j + 1/2 is the precision of y_j and B(t) = (1 - t²)² for
//     |t| < 1, else 0, is Tukey's biweight. A residual is thus judged
//     against the larger of the common misfit and the band's own Poisson
//     noise.
//
// The half-width h and the degree d (1 or 2) are chosen by leave-one-out
// cross-validation over the bands: each candidate pair (h from 2 up to 64,
// or what the bands allow) is fitted as above, and scores
// CV = mean r_i² with r_i = (n_i - E_i)/sqrt(E_i) the Pearson residual of
// band i against its leave-one-out expectation, over the bands that no
// candidate's robust fit set aside (weight 0), so that an inflated band
// does not reward the windows narrow enough to absorb it. A window too
// narrow is penalised by the noise of its expectations, one too wide by
// its misfit. The widest window (then the lower degree) whose CV is within
// one standard error of the smallest is chosen (the one-standard-error
// rule of cross-validation: Breiman, Friedman, Olshen and Stone,
// Classification and Regression Trees, 1984), which keeps a wide block of
// inflated bands visible on data that a wide window fits.
//
// No band is scored by extrapolation: the first and the last scorable band
// have no band beyond them, and with a quadratic the second and the
// second-last have one, too few to pin its curvature (on smooth non-1/x
// data a quadratic through one band on one side and many on the other
// misses by several per cent at the ends). These bands take part in their
// neighbours' fits but are left unscored (Scored false), like the bands at
// or below zero. The cross-validation compares the candidates over the
// bands with at least two bands on each side.
//
// ExpectedSE = Expected · sqrt(v_i) is the standard error of Expected,
// v_i = [(XᵀWX)⁻¹]₀₀ the variance of the last pass's fit at x_i.
// With z_i = (n_i - E_i)/sqrt(E_i + E_i² v_i), the dispersion is
// φ = max(1, (1.4826 · MAD(z))²), a robust quasi-Poisson scale (the median
// absolute deviation about the median scaled to a normal standard
// deviation; Hampel 1974) that absorbs any misfit of the smooth trend
// common to most bands. Then, with φ_i = φ (1 + E_i v_i),
//
//	Z_i = (n_i - E_i) / sqrt(φ_i E_i)
//	P_i = P(X >= n_i/φ_i), X ~ Poisson(E_i/φ_i)   (PoissonUpperTail; exact Poisson when φ_i = 1)
//
// and the one-sided P_i are adjusted over the scored bands with Holm's
// procedure (Holm); a band is flagged when PAdjusted < 0.05 and it holds
// more than expected. Shortfalls are never flagged.
//
// A band that starts at or below zero has no log-scale position: it is
// left unscored (Scored false, Expected 0, P and PAdjusted 1), as are all
// bands when fewer than MinScoredBands are scorable. The first band of
// LinearBands(0, ...) is such a band; under a 1/x density its count is
// dominated by the smallest amounts in any case.
func ScoreBands(bands []Band) BandFit {
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
		return BandFit{}
	}
	x := make([]float64, m)
	y := make([]float64, m)
	u := make([]float64, m)
	w := make([]float64, m) // precision of y
	n := make([]float64, m)
	for s, i := range idx {
		b := bands[i]
		u[s] = math.Log(b.To / b.From)
		x[s] = math.Log((b.To - b.From) / u[s])
		n[s] = float64(b.Count)
		w[s] = n[s] + 0.5
		y[s] = math.Log(w[s] / u[s])
	}
	type candidate struct {
		h, deg int
		yhat   []float64
		v, rw  []float64
	}
	var cands []candidate
	for _, h := range bandHalfWidths {
		if 2*h > m-1 && h > bandHalfWidths[0] {
			break
		}
		start := lmsStart(x, y, h) // the same for both degrees
		for deg := 1; deg <= 2; deg++ {
			if deg == 2 && 2*min(h, (m-1)/2) < 5 {
				continue
			}
			yh, vh, rw := robustLocalFit(x, y, w, start, h, deg)
			cands = append(cands, candidate{min(h, (m-1)/2), deg, yh, vh, rw})
		}
	}
	// The cross-validation compares the candidates on the same bands: those
	// that no candidate's robust fit set aside (a band inflated in any
	// fit's eyes would otherwise reward the windows narrow enough to absorb
	// it).
	clean := make([]bool, m)
	for s := 2; s < m-2; s++ {
		clean[s] = true
		for _, c := range cands {
			if c.rw[s] == 0 {
				clean[s] = false
			}
		}
	}
	// Each candidate's score is the mean squared Pearson residual over the
	// clean bands, with its standard error; the widest window (then the
	// lower degree) within one standard error of the best is chosen.
	score := make([]float64, len(cands))
	best := -1
	var bestSE float64
	for k, c := range cands {
		var sum, sum2 float64
		cnt := 0
		for s := 2; s < m-2; s++ {
			if clean[s] {
				e := u[s] * math.Exp(clampFit(c.yhat[s], y))
				r2 := (n[s] - e) * (n[s] - e) / e
				sum += r2
				sum2 += r2 * r2
				cnt++
			}
		}
		if cnt == 0 {
			score[k] = math.Inf(1)
			continue
		}
		mean := sum / float64(cnt)
		score[k] = mean
		if best < 0 || mean < score[best] {
			best = k
			bestSE = math.Sqrt(math.Max(0, sum2/float64(cnt)-mean*mean) / float64(cnt))
		}
	}
	choice := 0
	if best >= 0 {
		choice = best
		for k, c := range cands {
			if score[k] <= score[best]+bestSE && (c.h > cands[choice].h || c.h == cands[choice].h && c.deg < cands[choice].deg) {
				choice = k
			}
		}
	}
	c := cands[choice]
	fit := BandFit{HalfWidth: c.h, Degree: c.deg, CVScore: score[choice], Candidates: len(cands)}
	yhat, v := c.yhat, c.v
	z := make([]float64, 0, m)
	for s, i := range idx {
		if s < c.deg || s > m-1-c.deg {
			continue // too few bands beyond it: never scored by extrapolation
		}
		b := &bands[i]
		yh := clampFit(yhat[s], y)
		vs := v[s]
		if !(vs <= 100) {
			vs = 100
		}
		e := u[s] * math.Exp(yh)
		b.Expected = e
		b.ExpectedSE = e * math.Sqrt(vs)
		b.Scored = true
		b.Ratio = float64(b.Count) / e
		z = append(z, (float64(b.Count)-e)/math.Sqrt(e+b.ExpectedSE*b.ExpectedSE))
	}
	phi := dispersion(z)
	var p []float64
	var pi []int
	for _, i := range idx {
		b := &bands[i]
		if !b.Scored {
			continue
		}
		phiI := phi * (1 + b.ExpectedSE*b.ExpectedSE/b.Expected)
		b.Z = (float64(b.Count) - b.Expected) / math.Sqrt(phiI*b.Expected)
		b.P = PoissonUpperTail(float64(b.Count)/phiI, b.Expected/phiI)
		p = append(p, b.P)
		pi = append(pi, i)
	}
	adj := Holm(p)
	for k, i := range pi {
		b := &bands[i]
		b.PAdjusted = adj[k]
		b.Flagged = adj[k] < BandAlpha && float64(b.Count) > b.Expected
	}
	return fit
}

// bandHalfWidths are the local fit's half-widths that ScoreBands compares
// by cross-validation (roughly doubling: the criterion is flat near its
// minimum).
var bandHalfWidths = []int{2, 3, 4, 6, 8, 12, 16, 24, 32, 48, 64}

// clampFit keeps a fitted log density finite and within e^20 of the
// observed ones (a NaN fit takes the median of y).
func clampFit(yh float64, y []float64) float64 {
	ylo, yhi := y[0], y[0]
	for _, t := range y {
		ylo, yhi = math.Min(ylo, t), math.Max(yhi, t)
	}
	if math.IsNaN(yh) {
		yh = median(append([]float64(nil), y...))
	}
	return math.Min(math.Max(yh, ylo-20), yhi+20)
}

// bandWindow returns the window of band s among m bands for half-width h:
// h bands on each side, shifted inwards at the ends.
func bandWindow(s, m, h int) (lo, hi int) {
	win := min(2*h, m-1)
	lo = max(0, min(s-win/2, m-1-win))
	return lo, lo + win
}

// lmsStart returns the robust start of the local fits of half-width h: a
// least-median-of-squares quadratic through each band's neighbours
// (lmsQuadraticAt0).
func lmsStart(x, y []float64, h int) []float64 {
	m := len(x)
	win := min(2*h, m-1)
	start := make([]float64, m)
	nx := make([]float64, 0, win)
	ny := make([]float64, 0, win)
	scratch := make([]float64, 0, win)
	for s := range m {
		lo, hi := bandWindow(s, m, h)
		nx, ny = nx[:0], ny[:0]
		for t := lo; t <= hi; t++ {
			if t != s {
				nx = append(nx, x[t]-x[s])
				ny = append(ny, y[t])
			}
		}
		start[s] = lmsQuadraticAt0(nx, ny, scratch)
	}
	return start
}

// robustLocalFit returns, for every band s, the robust leave-one-out fit
// ŷ_s of degree deg through the h nearest bands on each side (shifted
// inwards at the ends), from the robust start (lmsStart), its variance,
// and the robustness weights of the last pass (0 for the bands set aside;
// see ScoreBands).
func robustLocalFit(x, y, w, start []float64, h, deg int) (yhat, v, rw []float64) {
	m := len(x)
	yhat = append([]float64(nil), start...)
	v = make([]float64, m)
	rw = make([]float64, m) // robustness weights
	e := make([]float64, m)
	abs := make([]float64, m)
	for iter := 0; ; iter++ {
		// Robustness weights from the leave-one-out residuals on the log
		// scale, each against the larger of the common scale and the
		// band's own Poisson noise.
		for s := range m {
			e[s] = y[s] - yhat[s]
			abs[s] = math.Abs(e[s])
		}
		sc := 1.4826 * median(abs)
		for s := range m {
			rw[s] = biweight(e[s] / (biweightC * math.Sqrt(sc*sc+1/w[s])))
		}
		for s := range m {
			lo, hi := bandWindow(s, m, h)
			yhat[s], v[s] = localFit(x, y, w, rw, s, lo, hi, deg)
		}
		if iter == robustIterations {
			break
		}
	}
	return yhat, v, rw
}

const (
	robustIterations = 4
	lmsPerThird      = 5
	biweightC        = 4.685 // Tukey's biweight tuning constant (95% efficiency at the normal)
)

// biweight returns Tukey's biweight (1 - t²)² for |t| < 1, else 0.
func biweight(t float64) float64 {
	if math.Abs(t) >= 1 {
		return 0
	}
	a := 1 - t*t
	return a * a
}

// localFit fits y ≈ b0 + b1 (x - x_s) + b2 (x - x_s)² (up to degree
// maxDeg) by weighted least squares over positions lo..hi except s, with
// weights w·rw, and returns the fitted value b0 at x_s and its variance
// [(XᵀWX)⁻¹]₀₀. It keeps at least one point more than the fit's
// coefficients (a lower degree otherwise), and falls back to lower degrees
// when the normal equations are singular; with no weight at all it returns
// the median of the window's y and a variance of 0.
func localFit(x, y, w, rw []float64, s, lo, hi, maxDeg int) (fit, variance float64) {
	npos := 0
	for t := lo; t <= hi; t++ {
		if t != s && w[t]*rw[t] > 0 {
			npos++
		}
	}
	for deg := maxDeg; deg >= 0; deg-- {
		if npos <= deg || (deg > 0 && npos == deg+1) {
			continue
		}
		var a [3][3]float64
		var rhs [3]float64
		for t := lo; t <= hi; t++ {
			wt := w[t] * rw[t]
			if t == s || wt == 0 {
				continue
			}
			d := x[t] - x[s]
			f := [3]float64{1, d, d * d}
			for r := 0; r <= deg; r++ {
				rhs[r] += wt * f[r] * y[t]
				for c := 0; c <= deg; c++ {
					a[r][c] += wt * f[r] * f[c]
				}
			}
		}
		inv, ok := invertSym(a, deg+1)
		if !ok {
			continue
		}
		var b0 float64
		for c := 0; c <= deg; c++ {
			b0 += inv[0][c] * rhs[c]
		}
		return b0, math.Max(0, inv[0][0])
	}
	var win []float64
	for t := lo; t <= hi; t++ {
		if t != s {
			win = append(win, y[t])
		}
	}
	return median(win), 0
}

// invertSym inverts the leading n×n block of a by Gauss-Jordan elimination
// with partial pivoting, reporting false when it is (nearly) singular.
func invertSym(a [3][3]float64, n int) (inv [3][3]float64, ok bool) {
	var m [3][6]float64
	var norm float64
	for r := range n {
		for c := range n {
			m[r][c] = a[r][c]
			norm = math.Max(norm, math.Abs(a[r][c]))
		}
		m[r][n+r] = 1
	}
	if norm == 0 {
		return inv, false
	}
	for c := range n {
		p := c
		for r := c + 1; r < n; r++ {
			if math.Abs(m[r][c]) > math.Abs(m[p][c]) {
				p = r
			}
		}
		if math.Abs(m[p][c]) <= 1e-12*norm {
			return inv, false
		}
		m[c], m[p] = m[p], m[c]
		piv := m[c][c]
		for k := range 2 * n {
			m[c][k] /= piv
		}
		for r := range n {
			if r != c && m[r][c] != 0 {
				f := m[r][c]
				for k := range 2 * n {
					m[r][k] -= f * m[c][k]
				}
			}
		}
	}
	for r := range n {
		for c := range n {
			inv[r][c] = m[r][n+c]
		}
	}
	return inv, true
}

// BandDispersion returns the dispersion φ >= 1 that ScoreBands used for
// the scored bands (1 if none are scored).
func BandDispersion(bands []Band) float64 {
	var z []float64
	for _, b := range bands {
		if b.Scored && b.Expected > 0 {
			z = append(z, (float64(b.Count)-b.Expected)/math.Sqrt(b.Expected+b.ExpectedSE*b.ExpectedSE))
		}
	}
	return dispersion(z)
}

// dispersion returns max(1, (1.4826 MAD(z))²), the MAD taken about the
// median.
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

// lmsQuadraticAt0 returns, at x = 0, the quadratic through three of the
// points (x, y) that minimizes the median absolute residual over all of
// them: a least-median-of-squares fit (P. J. Rousseeuw, Least median of
// squares regression, JASA 79, 871-880, 1984) searched over the triples
// that take one point from each third of the points (in x order), up to
// lmsPerThird evenly spaced choices a third. A contiguous block of
// outliers spoils only the triples that touch it. With fewer than six
// points it returns the median of y. scratch is reused storage.
func lmsQuadraticAt0(x, y, scratch []float64) float64 {
	n := len(x)
	if n < 6 {
		return median(append(scratch[:0], y...))
	}
	pick := func(lo, hi int) []int { // up to lmsPerThird evenly spaced in [lo, hi)
		k := min(lmsPerThird, hi-lo)
		out := make([]int, k)
		for i := range out {
			out[i] = lo + (2*i+1)*(hi-lo)/(2*k)
		}
		return out
	}
	A, B, C := pick(0, n/3), pick(n/3, 2*n/3), pick(2*n/3, n)
	best, bestFit := math.Inf(1), median(append(scratch[:0], y...))
	for _, a := range A {
		for _, b := range B {
			for _, c := range C {
				xa, xb, xc := x[a], x[b], x[c]
				if xa == xb || xb == xc || xa == xc {
					continue
				}
				// Newton form: q(t) = y_a + d1 (t - x_a) + d2 (t - x_a)(t - x_b)
				d1 := (y[b] - y[a]) / (xb - xa)
				d2 := ((y[c]-y[b])/(xc-xb) - d1) / (xc - xa)
				scratch = scratch[:0]
				for i := range n {
					q := y[a] + d1*(x[i]-xa) + d2*(x[i]-xa)*(x[i]-xb)
					scratch = append(scratch, math.Abs(y[i]-q))
				}
				if crit := selectK(scratch, n/2); crit < best {
					best = crit
					bestFit = y[a] + d1*(0-xa) + d2*(0-xa)*(0-xb)
				}
			}
		}
	}
	return bestFit
}

// selectK returns the k-th smallest element (0-based) of v, reordering v
// (Hoare's selection).
func selectK(v []float64, k int) float64 {
	lo, hi := 0, len(v)-1
	for lo < hi {
		p := v[(lo+hi)/2]
		i, j := lo, hi
		for i <= j {
			for v[i] < p {
				i++
			}
			for v[j] > p {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
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
