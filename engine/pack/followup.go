package pack

import (
	"context"

	"github.com/leadline/leadline/engine/followup"
)

// followupStep adds what the team returned of earlier exports (leadline
// followup) to the run: the records by status, by flagged item, each
// record's latest follow-up, the files read and the rows refused. A
// workspace where no returned file was read adds nothing.
func (r *runner) followupStep(ctx context.Context) error {
	tables, st, err := followup.LoadTables(ctx, r.ws)
	if err != nil || st == nil {
		return err
	}
	for _, t := range tables {
		r.add(t)
	}
	r.finding(followup.Section, "followup_items", "%s", followup.Summary(st))
	return nil
}
