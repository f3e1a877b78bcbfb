package population

import "math/big"

// Readings of the last-two digits test, shared by the digit battery, the
// drill-down and the counting queries for other engines.
const (
	// LastTwoScale reads the two rightmost digits of the amount written at
	// the ledger's scale: 1234.56 -> 56, 1200.00 -> 00, and at scale 0
	// 1234 -> 34. This is the default.
	LastTwoScale = "scale"
	// LastTwoUnits reads the two rightmost digits of the whole-currency
	// part: 1234.56 -> 34, 1200.00 -> 00. Practitioners often apply the
	// last-two digits test to whole amounts, where invented numbers end in
	// round figures.
	LastTwoUnits = "units"
)

// LastTwoMinDigits: the last-two digits test takes only whole numbers
// (amounts in units of the scale, or their whole-currency part with the
// units reading) of at least this many digits, so that the two digits read
// are the fourth significant digit or later, where Benford-distributed
// amounts have them close to uniform.
const LastTwoMinDigits = 5

// LastTwoMinUnits returns the smallest |amount|, in units of the scale,
// that the last-two digits test takes under a reading: 10^4 units, or
// 10^(4+scale) with the units reading.
func LastTwoMinUnits(reading string, at AmountType) *big.Int {
	e := LastTwoMinDigits - 1
	if reading == LastTwoUnits {
		e += at.Scale
	}
	return Pow10(e)
}
