package amount

// symbolCodes names the ISO 4217 code a currency symbol of the grammar
// stands for. "$" is read as USD and "¥" as JPY: a ledger in another
// dollar or in yuan carries a currency column (or an ISO code) instead.
var symbolCodes = map[string]string{"$": "USD", "€": "EUR", "£": "GBP", "¥": "JPY", "₹": "INR"}

// Currency returns the currency an amount text names with its marker (a
// three-letter code as written, or the code of a symbol), and whether the
// text matches the grammar's shape at all (a number is present). A text
// without a marker gives "", true; a text that is no amount gives "", false.
// The SQL macro ll_amount_currency states the same rule.
func Currency(s string) (string, bool) {
	p, ok := split(normalizeSpace(s))
	if !ok {
		return "", false
	}
	m := p.c1
	if m == "" {
		m = p.c2
	}
	if c, ok := symbolCodes[m]; ok {
		return c, true
	}
	return m, true
}

// CurrencyOfSymbol gives the code a symbol stands for ("" for none).
func CurrencyOfSymbol(sym string) string { return symbolCodes[sym] }
