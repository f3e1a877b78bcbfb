package benford

import (
	"encoding/binary"
	"hash/fnv"
	"math"
	"sort"
	"sync"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// The discrete Cramér–von Mises statistics (Choulakian, Lockhart and
// Stephens 1994, "Cramér–von Mises statistics for discrete distributions",
// Canadian Journal of Statistics 22(1); recommended for Benford's law by
// Lesperance, Reed, Stephens, Tsao and Wilton 2016, PLoS ONE 11(3):
// e0151235). With counts o_j, expected proportions p_j over K ordered
// bins and N amounts:
//
//	Z_j = S_j − T_j      S_j = Σ_{i≤j} o_i,  T_j = N Σ_{i≤j} p_i,  H_j = T_j/N
//	t_j = (p_j + p_{j+1})/2   (p_{K+1} = p_1)
//	W² = Σ Z_j² t_j / N
//	U² = Σ (Z_j − Z̄)² t_j / N,   Z̄ = Σ Z_j t_j   (Watson's)
//	A² = Σ_{j<K} Z_j² t_j / (H_j(1 − H_j)) / N
//
// U² does not change when the cycle of bins starts elsewhere (bin 1 after
// bin 9, 10 after 99), which suits digits; W² and A² read the bins in
// their order. Each statistic is a quadratic form Z'MZ/N of the
// cumulative deviations, asymptotically normal with covariance
// N(H_min(i,j) − H_i H_j), so under conformity it tends to Σ λ_i χ²₁ with
// λ_i the eigenvalues of MΣ (computed here with gonum's mat.EigenSym), and
// its p-value is that sum's upper tail by Imhof's method (Imhof 1961,
// "Computing the distribution of quadratic forms in normal variables",
// Biometrika 48).

// CvMKind names one of the discrete Cramér–von Mises statistics.
type CvMKind int

// The statistics.
const (
	CvMW2 CvMKind = iota // Cramér–von Mises W²
	CvMU2                // Watson's U²
	CvMA2                // Anderson–Darling A²
)

// String returns the statistic's name ("W2", "U2", "A2").
func (k CvMKind) String() string {
	switch k {
	case CvMW2:
		return "W2"
	case CvMU2:
		return "U2"
	case CvMA2:
		return "A2"
	}
	return "?"
}

// CramerVonMises returns the discrete Cramér–von Mises statistic of kind k
// of bin counts against expected proportions (which sum to 1) and its
// asymptotic upper-tail p-value. With no amounts, fewer than two bins or
// an unknown kind it returns (0, 1). It panics if the lengths differ.
func CramerVonMises(k CvMKind, counts []int64, expected []float64) (stat, p float64) {
	if len(counts) != len(expected) {
		panic("benford: CramerVonMises: length mismatch")
	}
	if k < CvMW2 || k > CvMA2 || len(counts) < 2 {
		return 0, 1
	}
	var n int64
	for _, c := range counts {
		n += c
	}
	if n <= 0 {
		return 0, 1
	}
	stat = cvmStat(k, counts, expected, n)
	return stat, cvmNull(k, expected).survival(stat)
}

// cvmWeights returns t_j = (p_j + p_{j+1})/2 with p_{K+1} = p_1, and the
// cumulative expected proportions H_j.
func cvmWeights(p []float64) (t, h []float64) {
	K := len(p)
	t, h = make([]float64, K), make([]float64, K)
	var cum float64
	for j := range p {
		t[j] = (p[j] + p[(j+1)%K]) / 2
		cum += p[j]
		h[j] = cum
	}
	return t, h
}

// cvmStat computes the statistic from the cumulative deviations.
func cvmStat(k CvMKind, counts []int64, p []float64, n int64) float64 {
	N := float64(n)
	t, h := cvmWeights(p)
	z := make([]float64, len(p))
	var s, zbar float64
	for j, c := range counts {
		s += float64(c)
		z[j] = s - N*h[j]
		zbar += z[j] * t[j]
	}
	var q float64
	for j := range z {
		switch k {
		case CvMW2:
			q += z[j] * z[j] * t[j]
		case CvMU2:
			d := z[j] - zbar
			q += d * d * t[j]
		case CvMA2:
			if v := h[j] * (1 - h[j]); j < len(z)-1 && v > 1e-12 {
				q += z[j] * z[j] * t[j] / v
			}
		}
	}
	return q / N
}

// cvmCache holds the eigenvalues per statistic and expected proportions:
// the decomposition of a 900×900 matrix (first-three digits) takes about a
// second, and every test of one kind shares its expectation.
var cvmCache sync.Map // string -> *quadForm

// cvmNull returns the asymptotic null distribution of statistic k for
// expected proportions p: the weights of its χ²₁ terms, largest first.
func cvmNull(k CvMKind, p []float64) *quadForm {
	hs := fnv.New64a()
	var buf [8]byte
	binary.LittleEndian.PutUint64(buf[:], uint64(k))
	hs.Write(buf[:])
	for _, v := range p {
		binary.LittleEndian.PutUint64(buf[:], math.Float64bits(v))
		hs.Write(buf[:])
	}
	key := string(hs.Sum(nil))
	if v, ok := cvmCache.Load(key); ok {
		return v.(*quadForm)
	}
	q := newQuadForm(cvmEigenCompute(k, p))
	cvmCache.Store(key, q)
	return q
}

// cvmEigenCompute builds the symmetric matrix D^{1/2} B Σ B' D^{1/2}, whose
// eigenvalues are those of MΣ with M = B'DB (D diagonal: t for W² and U²,
// t/(H(1−H)) for A²; B = I, or I − 1t' for U²), and Σ_ij = H_min(i,j) −
// H_i H_j, and returns its eigenvalues above rounding.
func cvmEigenCompute(k CvMKind, p []float64) []float64 {
	K := len(p)
	t, h := cvmWeights(p)
	sig := make([]float64, K*K)
	for i := range K {
		for j := range K {
			sig[i*K+j] = h[min(i, j)] - h[i]*h[j]
		}
	}
	if k == CvMU2 {
		// (I − 1t') Σ (I − t1') = Σ − 1v' − v1' + c 11', v = Σt, c = t'Σt.
		v := make([]float64, K)
		var c float64
		for i := range K {
			for j := range K {
				v[i] += sig[i*K+j] * t[j]
			}
			c += t[i] * v[i]
		}
		for i := range K {
			for j := range K {
				sig[i*K+j] += c - v[i] - v[j]
			}
		}
	}
	d := make([]float64, K)
	for j := range K {
		switch k {
		case CvMA2:
			if v := h[j] * (1 - h[j]); j < K-1 && v > 1e-12 {
				d[j] = math.Sqrt(t[j] / v)
			}
		default:
			d[j] = math.Sqrt(t[j])
		}
	}
	data := make([]float64, K*K)
	for i := range K {
		for j := range K {
			data[i*K+j] = d[i] * sig[i*K+j] * d[j]
		}
	}
	var es mat.EigenSym
	if !es.Factorize(mat.NewSymDense(K, data), false) {
		panic("benford: Cramér–von Mises eigenvalues did not converge")
	}
	vals := es.Values(nil)
	sort.Sort(sort.Reverse(sort.Float64Slice(vals)))
	var out []float64
	for _, v := range vals {
		if v > 1e-12*vals[0] {
			out = append(out, v)
		}
	}
	return out
}

// QuadFormSurvival returns P(Σ λ_i χ²₁ > x) for positive weights λ by
// Imhof's (1961) inversion of the characteristic function,
//
//	P = ½ + (1/π) ∫₀^∞ sin θ(u) / (u ρ(u)) du,
//	θ(u) = ½ Σ arctan(λ_i u) − ½ x u,   ρ(u) = Π (1 + λ_i² u²)^{1/4},
//
// integrated by 8-point Gauss–Legendre panels over which θ turns by at
// most three radians. The integration stops where what is left is below
// 1e-8: beyond u, with 1/(uρ) falling and θ' below −x/4 and falling, the
// rest is at most 2/(uρ|θ'|) (the second mean value theorem). One weight
// is gonum's χ²₁ tail; none gives 1 for x < 0 and 0 otherwise. The
// integral's absolute error is about 1e-8, so a tail it puts below 1e-7
// is replaced by Chernoff's upper bound (at most 1e-7): a p-value that
// small says "far beyond chance" and is never smaller than the truth.
func QuadFormSurvival(x float64, lambda []float64) float64 {
	return newQuadForm(lambda).survival(x)
}

// quadForm holds the weights of Σ λ_i χ²₁, largest first, with suffix sums
// of their powers: weights with λu below quadSmall enter θ and ρ by the
// first two terms of their series, so one evaluation costs the few large
// weights, not all 900 of the first-three digits test.
type quadForm struct {
	lambda         []float64
	sum            float64
	s1, s2, s3, s4 []float64 // s_k[i] = Σ_{j>=i} λ_j^k
}

const quadSmall = 0.02

func newQuadForm(lambda []float64) *quadForm {
	l := append([]float64(nil), lambda...)
	sort.Sort(sort.Reverse(sort.Float64Slice(l)))
	for len(l) > 0 && !(l[len(l)-1] > 0) {
		l = l[:len(l)-1]
	}
	q := &quadForm{lambda: l}
	m := len(l)
	q.s1, q.s2, q.s3, q.s4 = make([]float64, m+1), make([]float64, m+1), make([]float64, m+1), make([]float64, m+1)
	for i := m - 1; i >= 0; i-- {
		v := l[i]
		q.s1[i] = q.s1[i+1] + v
		q.s2[i] = q.s2[i+1] + v*v
		q.s3[i] = q.s3[i+1] + v*v*v
		q.s4[i] = q.s4[i+1] + v*v*v*v
	}
	if m > 0 {
		q.sum = q.s1[0]
	}
	return q
}

// at returns Σ arctan(λu), Σ log(1 + λ²u²) and Σ λ/(1 + λ²u²).
func (q *quadForm) at(u float64) (th, lr, dth float64) {
	l := q.lambda
	i0 := sort.Search(len(l), func(i int) bool { return l[i]*u < quadSmall })
	for _, v := range l[:i0] {
		lu := v * u
		th += math.Atan(lu)
		lr += math.Log1p(lu * lu)
		dth += v / (1 + lu*lu)
	}
	u2 := u * u
	th += q.s1[i0]*u - q.s3[i0]*u2*u/3
	lr += q.s2[i0]*u2 - q.s4[i0]*u2*u2/2
	dth += q.s1[i0] - q.s3[i0]*u2
	return th, lr, dth
}

func (q *quadForm) survival(x float64) float64 {
	switch {
	case len(q.lambda) == 0:
		if x < 0 {
			return 1
		}
		return 0
	case len(q.lambda) == 1:
		return distuv.ChiSquared{K: 1}.Survival(x / q.lambda[0])
	case x <= 0:
		return 1
	}
	// Far in the tail Chernoff's bound alone is below the integral's
	// accuracy, and the integral (whose panels narrow as x grows) would be
	// replaced by it anyway: skip the integration.
	if x > 2*q.sum {
		if c := q.chernoff(x); c < imhofFloor {
			return c
		}
	}
	return q.imhof(x)
}

// imhof integrates Imhof's formula for P(Σ λ_i χ²₁ > x), x > 0, falling
// back on Chernoff's bound below the integral's accuracy.
func (q *quadForm) imhof(x float64) float64 {
	h := 6 / (q.sum + x) // |θ'(u)| <= (Σλ + x)/2: at most 3 radians a panel
	var total float64
	for step := 0; step < maxImhofPanels; step++ {
		a := float64(step) * h
		var panel float64
		for i, g := range gl8Nodes {
			u := a + h/2*(1+g)
			th, lr, _ := q.at(u)
			panel += gl8Weights[i] * math.Sin(th/2-x*u/2) * math.Exp(-lr/4) / u
		}
		total += panel * h / 2
		b := a + h
		_, lr, dth := q.at(b)
		env := math.Exp(-lr/4) / b
		if slope := x/2 - dth/2; slope >= x/4 && 2*env/slope < 1e-8 {
			break
		}
	}
	p := 0.5 + total/math.Pi
	if p < imhofFloor {
		// Below the integration's accuracy: Chernoff's bound, an upper
		// bound on the true tail, so a p-value here is never too small.
		return math.Min(imhofFloor, q.chernoff(x))
	}
	return math.Min(1, p)
}

// imhofFloor is the smallest tail read from Imhof's integral; its absolute
// error is about 1e-8.
const imhofFloor = 1e-7

// chernoff returns min over 0 <= t < 1/(2λ₁) of exp(−tx) Π (1 − 2tλ_i)^(−1/2),
// an upper bound on P(Σ λ_i χ²₁ > x) (Chernoff 1952, Annals of
// Mathematical Statistics 23). The exponent is convex in t; its slope
// −x + Σ λ_i/(1 − 2tλ_i) is found at zero by bisection.
func (q *quadForm) chernoff(x float64) float64 {
	if x <= q.sum {
		return 1
	}
	slope := func(t float64) float64 {
		d := -x
		for _, l := range q.lambda {
			d += l / (1 - 2*t*l)
		}
		return d
	}
	lo, hi := 0.0, 1/(2*q.lambda[0])
	for range 200 {
		mid := (lo + hi) / 2
		if slope(mid) < 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	t := lo
	e := -t * x
	for _, l := range q.lambda {
		e -= math.Log1p(-2*t*l) / 2
	}
	return math.Min(1, math.Exp(e))
}

// maxImhofPanels bounds the integration: enough for every digit test's
// weights (the envelope is below 1e-9 well before).
const maxImhofPanels = 1 << 20

// Nodes and weights of 8-point Gauss–Legendre quadrature on [−1, 1]
// (Abramowitz and Stegun 1964, table 25.4).
var (
	gl8Nodes   = [8]float64{-0.9602898564975363, -0.7966664774136267, -0.5255324099163290, -0.1834346424956498, 0.1834346424956498, 0.5255324099163290, 0.7966664774136267, 0.9602898564975363}
	gl8Weights = [8]float64{0.1012285362903763, 0.2223810344533745, 0.3137066458778873, 0.3626837833783620, 0.3626837833783620, 0.3137066458778873, 0.2223810344533745, 0.1012285362903763}
)
