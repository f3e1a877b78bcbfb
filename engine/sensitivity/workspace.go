package sensitivity

import (
	"context"
	"fmt"
	"math"
	"math/big"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/limits"
	popn "github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// FromWorkspace reads the population's counts once, with the same
// population rules as the scan (base): the digit bins from the battery's
// one aggregate scan, the band counts of the round limits (and of
// o.Limit) from the limit probe's scan, and the most frequent amounts from
// the number duplication query. Nothing is written to the workspace.
func FromWorkspace(ctx context.Context, ws *workspace.Workspace, base popn.Spec, o Options) (Population, error) {
	var pop Population
	plan, err := battery.Prepare(ctx, ws, battery.Options{Spec: base, Tests: []benford.Test{benford.FirstTwo, benford.LastTwo}})
	if err != nil {
		return pop, err
	}
	counts, _, err := plan.Scan(ctx, ws)
	if err != nil {
		return pop, err
	}
	pop.FirstThree = counts.FirstThree
	pop.LastTwo = counts.LastTwo
	if pop.N() == 0 {
		return pop, fmt.Errorf("no amounts to test in this population")
	}
	if o.Kind == BelowLimit {
		rep, err := limits.Run(ctx, ws, limits.Options{Spec: base, Width: o.Width})
		if err != nil {
			return pop, err
		}
		for _, r := range rep.Rows {
			if r.Segment == nil && r.Rank > 0 {
				pop.Limits = append(pop.Limits, LimitCounts{Limit: r.Limit, Below: r.Below, Above: r.Above, Flanked: r.Flanked, Left: r.Left, Right: r.Right})
			}
		}
	}
	if o.Kind == Repeated {
		dup, err := plan.Duplicates(ctx, ws, pop.N(), 50)
		if err != nil {
			return pop, err
		}
		pop.Extra = map[int64]int64{}
		target := int64(math.Round(o.Amount * 100))
		for _, d := range dup.Top {
			r, ok := new(big.Rat).SetString(d.Amount)
			if !ok {
				continue
			}
			r.Mul(r, big.NewRat(100, 1))
			f, _ := r.Float64()
			c := int64(math.Round(math.Abs(f)))
			pop.TopAmounts = append(pop.TopAmounts, AmountCount{Cents: c, Count: d.Count})
			if c == target {
				pop.Extra[c] = d.Count
			}
		}
	}
	return pop, nil
}
