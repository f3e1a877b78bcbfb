package benford

import (
	"math"
	"sort"
)

// Conformity levels returned by Conformity.
const (
	Close            = "close"
	Acceptable       = "acceptable"
	Marginal         = "marginal"
	Nonconforming    = "nonconforming"
	NoPublishedRange = "no published range"
	NoAmounts        = "no amounts" // used by Analyze when N == 0
)

// MAD returns the mean absolute deviation (1/K) Σ |actual_k - expected_k|.
// It panics if the lengths differ.
func MAD(actual, expected []float64) float64 {
	if len(actual) != len(expected) {
		panic("benford: MAD: length mismatch")
	}
	if len(actual) == 0 {
		return 0
	}
	var s float64
	for i := range actual {
		s += math.Abs(actual[i] - expected[i])
	}
	return s / float64(len(actual))
}

// madRanges holds the upper ends of the close, acceptable and marginal
// ranges of the MAD (Nigrini 2012, Benford's Law, Wiley; values from
// memory; also listed in docs/design.md):
//
//	test                close      acceptable         marginal           nonconforming
//	first digit         < 0.006    0.006 to 0.012     0.012 to 0.015     > 0.015
//	second digit        < 0.008    0.008 to 0.010     0.010 to 0.012     > 0.012
//	first-two digits    < 0.0012   0.0012 to 0.0018   0.0018 to 0.0022   > 0.0022
//	first-three digits  < 0.00036  0.00036 to 0.00044 0.00044 to 0.00050 > 0.00050
var madRanges = map[Test][3]float64{
	FirstDigit:  {0.006, 0.012, 0.015},
	SecondDigit: {0.008, 0.010, 0.012},
	FirstTwo:    {0.0012, 0.0018, 0.0022},
	FirstThree:  {0.00036, 0.00044, 0.00050},
}

// MADRanges returns the upper ends of the close, acceptable and marginal
// MAD ranges of t, and false if no range is published for t.
func MADRanges(t Test) (r [3]float64, ok bool) {
	r, ok = madRanges[t]
	return r, ok
}

// Conformity classifies a MAD with the published ranges of the first-digit,
// second-digit, first-two digits and first-three digits tests (see
// MADRanges). With the upper ends a < b < c of a test:
//
//	close         mad < a
//	acceptable    a <= mad < b
//	marginal      b <= mad <= c
//	nonconforming mad > c
//
// so a boundary value belongs to the range it opens, as the table reads
// ("0.006 to 0.012" is acceptable, "> 0.015" is nonconforming). For every
// other test it returns NoPublishedRange.
func Conformity(t Test, mad float64) string {
	r, ok := madRanges[t]
	if !ok {
		return NoPublishedRange
	}
	switch {
	case mad < r[0]:
		return Close
	case mad < r[1]:
		return Acceptable
	case mad <= r[2]:
		return Marginal
	}
	return Nonconforming
}

// ExpectedMAD returns the MAD expected under perfect conformity for n
// amounts:
//
//	E[MAD] ≈ (1/K) Σ sqrt(2 p_k (1 - p_k) / (π N))
//
// since E|p̂_k - p_k| ≈ sqrt(2/π) sd(p̂_k) under the normal approximation
// (the idea of judging the MAD against its expectation is published by
// Barney and Schulzke 2016; Cerqueti and Lupi 2022 give the asymptotic
// distribution of the MAD). It returns 0 when n <= 0 and for the summation
// test, whose shares are of amounts, not of counts, so no expectation
// follows from N alone.
func ExpectedMAD(t Test, n int64) float64 {
	if n <= 0 || t == Summation {
		return 0
	}
	p := Expected(t)
	if len(p) == 0 {
		return 0
	}
	N := float64(n)
	var s float64
	for _, pk := range p {
		s += math.Sqrt(2 * pk * (1 - pk) / (math.Pi * N))
	}
	return s / float64(len(p))
}

// MADNull is the MAD's distribution under exact conformity at the test's
// N: the MAD of NullSimulations multinomial draws from the expected
// proportions (the draws of the runs test's null), rescaled from the
// simulated N to N by sqrt(simulated N / N), since the MAD falls as
// 1/sqrt(N). The asymptotic law is in Cerqueti and Lupi, "Severe testing
// of Benford's law" (arXiv:2202.05237): sqrt(N)·MAD tends to
// (1/K) Σ |Z_k| with Z multinormal with the multinomial covariance, whose
// mean is sqrt(N)·ExpectedMAD; the simulation gives its spread and
// percentiles at finite N without approximation.
type MADNull struct {
	Mean        float64 `json:"mean"` // E[MAD] under conformity at N (simulated)
	SD          float64 `json:"sd"`   // its standard deviation
	P95         float64 `json:"p95"`  // 95th percentile
	Z           float64 `json:"z"`    // (MAD - Mean) / SD
	P           float64 `json:"p"`    // share of conforming draws with a MAD at least this one ((count+1)/(draws+1))
	Simulations int     `json:"simulations"`
	SimulatedN  int64   `json:"simulated_n"`
}

// Severity verdicts (Result.Severity): the MAD read against its null at N
// and against the published conformity ranges.
const (
	// WithinChance: conforming populations of this N show a MAD this large
	// in 5% of draws or more.
	WithinChance = "within chance"
	// BeyondChanceImmaterial: beyond chance at this N, but inside the
	// published close or acceptable range: a real deviation, too small to
	// matter (typical at millions of amounts).
	BeyondChanceImmaterial = "beyond chance, immaterial"
	// BeyondChanceMaterial: beyond chance, and in the published marginal or
	// nonconforming range.
	BeyondChanceMaterial = "beyond chance, material"
	// BeyondChance: beyond chance, for a test without published ranges.
	BeyondChance = "beyond chance"
)

// madNullFor returns the MAD's null at N for test t.
func madNullFor(t Test, n int64, mad float64) *MADNull {
	if n <= 0 || t == Summation {
		return nil
	}
	d := runsNullFor(t, n)
	f := math.Sqrt(float64(d.n) / float64(n))
	m := &MADNull{Mean: d.madMean * f, SD: d.madSD * f, Simulations: d.sims, SimulatedN: d.n}
	m.P95 = d.mads[int(math.Ceil(0.95*float64(len(d.mads))))-1] * f
	if m.SD > 0 {
		m.Z = (mad - m.Mean) / m.SD
	}
	// draws at or above mad, at the simulated N
	i := sort.SearchFloat64s(d.mads, mad/f)
	m.P = float64(len(d.mads)-i+1) / float64(len(d.mads)+1)
	return m
}

// Severity reads a MAD against its null at N (beyond chance when fewer
// than 5% of conforming draws reach it) and against the published
// conformity class: see the verdicts above. It returns "" without a null.
func Severity(conformity string, null *MADNull) string {
	if null == nil {
		return ""
	}
	if null.P >= 0.05 {
		return WithinChance
	}
	switch conformity {
	case Close, Acceptable:
		return BeyondChanceImmaterial
	case Marginal, Nonconforming:
		return BeyondChanceMaterial
	}
	return BeyondChance
}
