package drill

import (
	"fmt"
	"math/big"

	"github.com/duckdb/duckdb-go/v2"
	"github.com/leadline/leadline/engine/population"
)

// DecimalText renders a DECIMAL scanned from DuckDB with all its decimal
// places ("5.00", not "5"), so that amounts print as the ledger holds them.
func DecimalText(d duckdb.Decimal) string { return population.DecimalText(d) }

// parseDecimal reads an amount of --amount or --range in the population's
// one grammar of plain decimal text ("1847.23", "-250", ".5") into an
// exact rational.
func parseDecimal(s string) (*big.Rat, error) {
	r, ok := population.ParseDecimal(s)
	if !ok {
		return nil, fmt.Errorf("%q is not a plain decimal number (write e.g. 1847.23, without thousands separators, exponent or other base)", s)
	}
	return r, nil
}

func pow10(n int) *big.Int { return population.Pow10(n) }
