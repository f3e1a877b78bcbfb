package battery

import (
	"context"
	"fmt"
	"strings"

	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// currencyNote states that the amounts tested are in several currencies
// and pooled, unless the run is split by currency already. Pooling is
// sound for the digit tests (Benford's law is scale invariant, so a
// change of unit leaves the expected digit shares as they are), but the
// analyst should know, and can split.
func currencyNote(ctx context.Context, ws *workspace.Workspace, p *Plan) (string, error) {
	for _, b := range p.Options.By {
		if strings.EqualFold(strings.TrimSpace(b), "currency") {
			return "", nil
		}
	}
	curs, err := population.Currencies(ctx, ws, p.pop)
	if err != nil || len(curs) < 2 {
		return "", err
	}
	return fmt.Sprintf("amounts in %d currencies pooled (the digit tests are scale invariant); split with --by currency", len(curs)), nil
}
