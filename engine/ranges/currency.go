package ranges

import (
	"context"

	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// OneCurrency is population.OneCurrency for this selection: a band is an
// amount range in one currency.
func (p *Population) OneCurrency(ctx context.Context, ws *workspace.Workspace, why string) (string, error) {
	return population.OneCurrency(ctx, ws, p.pop, why)
}
