package battery

import (
	"fmt"
	"math"
	"strconv"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
)

// lastTwoMinUnits returns the smallest |amount|, in units of 10^-scale,
// whose last two digits the test reads ("": every amount). The rule is
// population.LastTwoMinUnits, shared with the drill-down: the two digits read
// must be the fourth significant digit or later. The third significant
// digit of Benford-distributed amounts runs from 10.2% for 0 to 9.8% for 9
// (Hill 1995, from memory), which a few million amounts detect: at scale 2
// the cents of 10.00 to 99.99 are the third and fourth significant digits
// (measured in engine/benford TestLastTwoNeedsFourthDigit).
func lastTwoMinUnits(o Options, at population.AmountType) string {
	if o.LastTwoAll {
		return ""
	}
	return population.LastTwoMinUnits(o.LastTwo, at).String()
}

// lastTwoSQL returns the SQL over ll_a (|amount| in units) of the last-two
// bin, or -4 for an amount below the test's minimum: the scan's reader
// skips negative last-two codes, so those amounts stay in every other test
// and are left out of this one only.
func lastTwoSQL(o Options, at population.AmountType) string {
	bin := "ll_a % 100"
	if o.LastTwo == LastTwoUnits && at.Scale > 0 {
		bin = fmt.Sprintf("(ll_a // %s) %% 100", pow10Text(at.Scale))
	}
	min := lastTwoMinUnits(o, at)
	if min == "" {
		return bin
	}
	return fmt.Sprintf("(CASE WHEN ll_a >= %s THEN %s ELSE -4 END)", min, bin)
}

// LastTwoMin returns the smallest |amount| the last-two digits test takes,
// as the ledger writes it ("100.00" at scale 2), or "" when it takes all.
func LastTwoMin(o Options, at population.AmountType) string {
	u := lastTwoMinUnits(o, at)
	if u == "" {
		return ""
	}
	if at.Scale == 0 {
		return u
	}
	for len(u) <= at.Scale {
		u = "0" + u
	}
	return u[:len(u)-at.Scale] + "." + u[len(u)-at.Scale:]
}

// noteLastTwo adds to a last-two result the note saying which amounts it
// took; tested is the population's N for the other tests.
func noteLastTwo(r *benford.Result, min string, tested int64) {
	if min == "" {
		return
	}
	r.Notes = append(r.Notes, fmt.Sprintf(
		"last-two digits: only amounts of at least %s are tested, whose two digits read are the fourth significant digit or later (uniform there); %s of %s amounts are smaller and left out of this test only (--last-two-all tests them all)",
		min, numfmt.Int(tested-r.N), numfmt.Int(tested)))
}

// secondOrderInUnits analyses the second-order bins against the shares
// expected of amounts held in whole units of the ledger's scale: their
// differences are whole units, so differences of 1 to 9 units pile on
// bins 10, 20, ..., 90 and small differences are rounded. The expectation
// reads each difference against its own local spacing (the histogram the
// second-order query returns: benford.SecondOrderExpectedSpacing), so a
// population whose amounts are not log-uniform is read against its own
// density; without the histogram (counts made elsewhere) the null model
// is Benford's law over this population's range (its minimum and mean
// |amount|: benford.SecondOrderExpectedScaled). A note says which, and how
// many bins Benford's law itself would have flagged.
func secondOrderInUnits(c *Counts, o Options, nc noteCtx) (benford.Result, error) {
	counts := c.Bins(benford.SecondOrder)
	plain := benford.FlaggedBins(benford.SecondOrder, counts, o.Flagging())
	var diffs int64
	for _, v := range counts {
		diffs += v
	}
	if diffs == 0 {
		return benford.AnalyzeWith(benford.SecondOrder, counts, o.Flagging())
	}
	n := c.N()
	unit := math.Pow10(-nc.scale)
	var exp []float64
	var how string
	if len(c.Spacing) > 0 {
		exp = benford.SecondOrderExpectedSpacing(c.Spacing)
		how = fmt.Sprintf("the expected shares are those of differences in whole units with each difference's own local spacing (the mean difference of the %d sorted amounts on either side of it: the population's own density, not a model of it), so what stands out is spacing that density does not explain, such as amounts a fixed step apart", benford.SpacingWindow)
	} else {
		var total float64
		for _, v := range c.FirstThreeSum {
			total += v
		}
		sc := benford.Scale{N: n, Min: minAmount(o, nc.scale), Mean: total / float64(max(n, 1)), Unit: unit}
		exp = benford.SecondOrderExpectedScaled(sc)
		d, _ := benford.FitDecades(sc.Min, sc.Mean)
		how = fmt.Sprintf("the expected shares are those of %s amounts following Benford's law from %s over %.1f decades (the range whose mean is this population's mean |amount|) held in whole units",
			numfmt.Int(n), strconv.FormatFloat(sc.Min, 'f', -1, 64), d)
	}
	r, err := benford.AnalyzeExpected(benford.SecondOrder, counts, o.Flagging(), exp)
	if err != nil {
		return r, err
	}
	r.Notes = append(r.Notes, fmt.Sprintf(
		"second-order test: amounts are whole units of %s, so their differences are discrete (differences of 1 to 9 units fill bins 10, 20, ..., 90; small differences are rounded): %s; against Benford's law itself %d bins would have been flagged",
		strconv.FormatFloat(unit, 'f', -1, 64), how, plain))
	return r, nil
}
