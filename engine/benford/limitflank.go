package benford

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// The limit probe with the density modelled from flanking bands (a method
// of this project's own). LimitProbe assumes f(x) ∝ 1/x near the limit;
// in the tails of real populations the density falls faster or slower, and
// with hundreds of thousands of amounts that alone flags limits where no
// one touched anything. Instead, the density near T is taken as a local
// power law f(x) ∝ x^β, with β fitted to the two flanking bands
//
//	left  [T(1-2w), T(1-w))      right [T(1+w), T(1+2w)),
//
// which the tested bands [T(1-w), T) and [T, T(1+w)) lie between; the split
// of the amounts between the tested bands expected under that density is
// then tested as before, with the uncertainty of the fitted β added to the
// binomial variance.

// powerBand returns ∫_a^b x^β dx (with x in units of T).
func powerBand(a, b, beta float64) float64 {
	if math.Abs(beta+1) < 1e-9 {
		return math.Log(b / a)
	}
	e := beta + 1
	return (math.Pow(b, e) - math.Pow(a, e)) / e
}

// flankRatio returns ln(left/right) expected under x^β.
func flankRatio(w, beta float64) float64 {
	return math.Log(powerBand(1-2*w, 1-w, beta)) - math.Log(powerBand(1+w, 1+2*w, beta))
}

// splitQ returns the share of the tested bands' amounts expected below the
// limit under x^β.
func splitQ(w, beta float64) float64 {
	b := powerBand(1-w, 1, beta)
	a := powerBand(1, 1+w, beta)
	return b / (a + b)
}

// fitBeta solves flankRatio(w, β) = lr for β by bisection (flankRatio
// falls as β rises) within [-60, 60].
func fitBeta(w, lr float64) float64 {
	lo, hi := -60.0, 60.0
	for range 200 {
		mid := (lo + hi) / 2
		if flankRatio(w, mid) > lr {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

// LimitProbeFlanked probes limit T like LimitProbe, with the density near
// T modelled from the counts in the flanking bands (left, right) instead
// of assumed ∝ 1/x. Beta is the fitted exponent (−1 is the 1/x of
// LimitProbe); ExpectedRatio, ExpectedBelow, Excess and ExcessVsAbove use
// the modelled split q. The test: with p̂ = (below + ½)/(n + 1),
//
//	z = (logit p̂ − logit q) / sqrt(1/(n q (1 − q)) + (d logit q/dβ)² Var β̂),
//	Var β̂ = (1/left + 1/right) / (d ln(left/right)/dβ)²,
//
// and P = 1 − Φ(z) (one-sided: a surplus below the limit). It panics like
// LimitProbe; with no amounts in a flank it returns LimitProbe's result.
func LimitProbeFlanked(limit, w float64, below, above, left, right int64) LimitResult {
	res := LimitProbe(limit, w, below, above)
	if left <= 0 || right <= 0 || !(w < 0.5) {
		return res
	}
	res.Left, res.Right, res.Flanked = left, right, true
	lr := math.Log(float64(left) / float64(right))
	beta := fitBeta(w, lr)
	res.Beta = beta
	q := splitQ(w, beta)
	n := below + above
	res.ExpectedRatio = q / (1 - q)
	res.ExpectedBelow = float64(n) * q
	res.Excess = float64(below) - res.ExpectedBelow
	res.ExcessVsAbove = float64(below) - res.ExpectedRatio*float64(above)
	if n == 0 {
		res.Z, res.P, res.PAdjusted, res.Flagged = 0, 1, 1, false
		return res
	}
	const h = 1e-4
	logit := func(p float64) float64 { return math.Log(p / (1 - p)) }
	dq := (logit(splitQ(w, beta+h)) - logit(splitQ(w, beta-h))) / (2 * h)
	dr := (flankRatio(w, beta+h) - flankRatio(w, beta-h)) / (2 * h)
	varBeta := (1/float64(left) + 1/float64(right)) / (dr * dr)
	N := float64(n)
	ph := (float64(below) + 0.5) / (N + 1)
	v := 1/(N*q*(1-q)) + dq*dq*varBeta
	res.Z = (logit(ph) - logit(q)) / math.Sqrt(v)
	res.P = distuv.UnitNormal.Survival(res.Z)
	res.PAdjusted = res.P
	res.Flagged = res.PAdjusted < LimitAlpha
	return res
}
