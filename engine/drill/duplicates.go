package drill

import (
	"context"

	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/workspace"
)

// DuplicateGroup returns the selection of a duplicate group's records
// (a group reference of a stored duplicates run, RUN:TEST:GROUP): the
// run's population narrowed by the group's key.
func DuplicateGroup(ctx context.Context, ws *workspace.Workspace, ref duplicates.Ref) (Selection, *duplicates.Group, error) {
	k, g, err := duplicates.GroupSelection(ctx, ws, ref)
	if err != nil {
		return Selection{}, nil, err
	}
	return Selection{Spec: k.Population, Extra: []population.Predicate{k.Where}, Described: []string{k.Described}}, g, nil
}
