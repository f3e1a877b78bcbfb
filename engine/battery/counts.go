package battery

import (
	"fmt"

	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/population"
)

// Counts is the bin-count table of one population (the whole selection or
// one segment): everything the digit tests need, and nothing about rows.
// Counts are additive: the table of a union of disjoint populations is the
// sum of their tables (Add), so tables computed over partitions, files or
// by another engine can be merged and then tested.
//
// The first three significant digits of an amount determine its first
// digit, second digit and first two digits, so FirstThree feeds the first,
// second, first-two and first-three digits tests, and FirstThreeSum (sums
// of |amount| per first-three bin) the summation test.
type Counts struct {
	FirstThree    []int64   // count of amounts per first-three bin, bins 100..999 at index bin-100
	FirstThreeSum []float64 // sum of |amount| (currency units) per first-three bin
	LastTwo       []int64   // count per last-two bin, 00..99
	SecondOrder   []int64   // first-two digits of the differences between sorted amounts, bins 10..99; nil when not run
	// Spacing is the histogram of the differences' local mean spacing
	// (benford.SpacingHistogram: bucket -> differences), the second-order
	// test's expectation; nil when not run.
	Spacing map[int]int64
	Left    Left // amounts left out, and why
}

// Left counts the rows of a population that were not tested, by reason
// (population.Left). Filtered and OtherSign are counted for the whole
// selection only (the scan does not read those rows).
type Left = population.Left

// NewCounts returns an empty table.
func NewCounts() *Counts {
	return &Counts{FirstThree: make([]int64, 900), FirstThreeSum: make([]float64, 900), LastTwo: make([]int64, 100)}
}

// N is the number of amounts tested.
func (c *Counts) N() int64 {
	var n int64
	for _, v := range c.FirstThree {
		n += v
	}
	return n
}

// Add adds the counts of o (a disjoint population) to c.
func (c *Counts) Add(o *Counts) {
	for i := range c.FirstThree {
		c.FirstThree[i] += o.FirstThree[i]
		c.FirstThreeSum[i] += o.FirstThreeSum[i]
	}
	for i := range c.LastTwo {
		c.LastTwo[i] += o.LastTwo[i]
	}
	if o.SecondOrder != nil {
		if c.SecondOrder == nil {
			c.SecondOrder = make([]int64, 90)
		}
		for i := range c.SecondOrder {
			c.SecondOrder[i] += o.SecondOrder[i]
		}
	}
	for b, n := range o.Spacing {
		if c.Spacing == nil {
			c.Spacing = map[int]int64{}
		}
		c.Spacing[b] += n
	}
	c.Left.Add(o.Left)
}

// Bins returns the bin counts of test t, derived from the table: counts[i]
// is the count of bin lo+i where lo, _ := t.Bins(). For the summation test
// it returns the first-two counts (the sums come from SummationSums). It
// returns nil for the second-order test when it was not run.
func (c *Counts) Bins(t benford.Test) []int64 {
	switch t {
	case benford.FirstThree:
		return append([]int64(nil), c.FirstThree...)
	case benford.FirstDigit:
		out := make([]int64, 9)
		for i, v := range c.FirstThree {
			out[(100+i)/100-1] += v
		}
		return out
	case benford.SecondDigit:
		out := make([]int64, 10)
		for i, v := range c.FirstThree {
			out[((100+i)/10)%10] += v
		}
		return out
	case benford.FirstTwo, benford.Summation:
		out := make([]int64, 90)
		for i, v := range c.FirstThree {
			out[(100+i)/10-10] += v
		}
		return out
	case benford.LastTwo:
		return append([]int64(nil), c.LastTwo...)
	case benford.SecondOrder:
		if c.SecondOrder == nil {
			return nil
		}
		return append([]int64(nil), c.SecondOrder...)
	}
	return nil
}

// SummationSums returns the sum of |amount| per first-two bin (10..99).
func (c *Counts) SummationSums() []float64 {
	out := make([]float64, 90)
	for i, v := range c.FirstThreeSum {
		out[(100+i)/10-10] += v
	}
	return out
}

// Analyze runs test t on the table.
func (c *Counts) Analyze(t benford.Test) (benford.Result, error) {
	if t == benford.Summation {
		return benford.AnalyzeSummation(c.SummationSums(), c.Bins(benford.FirstTwo))
	}
	b := c.Bins(t)
	if b == nil {
		return benford.Result{}, fmt.Errorf("battery: no counts for the %s", t.Name())
	}
	return benford.Analyze(t, b)
}

// FirstThreeOf returns the first three significant digits (100..999) of a
// positive whole number of units: u*100 for one digit, u*10 for two, and
// u / 10^(k-3) for k >= 3 digits. It is the Go statement of the SQL macro
// ll_first3_i64, used by the tests and for merging counts from elsewhere.
func FirstThreeOf(u uint64) int {
	if u == 0 {
		return 0
	}
	switch {
	case u < 10:
		return int(u * 100)
	case u < 100:
		return int(u * 10)
	}
	for u >= 1000 {
		u /= 10
	}
	return int(u)
}
