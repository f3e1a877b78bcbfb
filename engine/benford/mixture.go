package benford

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// SmoothMixture is a smooth population of amounts that does not follow
// 1/x locally, for the simulations that measure false-alarm rates: a
// mixture of three lognormals (invented for the tests), median amounts
// 150, 2,500 and 40,000, weights 0.5, 0.35 and 0.15.
var SmoothMixture = []struct{ W, Mu, Sigma float64 }{
	{0.5, math.Log(150), 1.0}, {0.35, math.Log(2500), 0.9}, {0.15, math.Log(40000), 1.1},
}

// SmoothMixtureCDF is P(X < x) for X drawn from SmoothMixture.
func SmoothMixtureCDF(x float64) float64 {
	if x <= 0 {
		return 0
	}
	var c float64
	for _, m := range SmoothMixture {
		c += m.W * distuv.UnitNormal.CDF((math.Log(x)-m.Mu)/m.Sigma)
	}
	return c
}
