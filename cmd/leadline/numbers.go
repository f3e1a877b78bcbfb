package main

import (
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/ranges"
)

// bandAmount writes a band edge as money: the ledger's decimals, thousands
// separators and at least two decimals (12.59, 1,000,000.00).
func bandAmount(x float64, scale int) string { return numfmt.Money(ranges.AmountText(x, scale)) }
