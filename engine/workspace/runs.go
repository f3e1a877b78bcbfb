package workspace

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/leadline/leadline/queries"
)

// Run is one run to store in the runs table: every command and pack step
// that stores its result does so through SaveRun.
type Run struct {
	// ID is a run id reserved with NextRunID (a pack reserves its own
	// before its steps store theirs), or 0 for the next id.
	ID      int64
	Kind    string    // scan, limits, ranges, duplicates, sensitivity, pack...
	Started time.Time // finished is the time of storing
	// Params and Result are stored as their encoding/json text: Params
	// the options the run was given, Result the document --format json
	// prints (docs/json.md).
	Params, Result any
	// SetID, when given, receives the run's id before Params and Result
	// are encoded, so the result can carry its own id.
	SetID func(id int64)
}

// NextRunID reserves a run id before the run starts, so that results can
// carry it; SaveRun stores the run under it.
func (ws *Workspace) NextRunID(ctx context.Context) (int64, error) {
	var id int64
	err := ws.Conn.QueryRowContext(ctx, queries.Get("next_run_id")).Scan(&id)
	return id, err
}

// SaveRun stores the run and returns its id.
func (ws *Workspace) SaveRun(ctx context.Context, r Run) (int64, error) {
	id := r.ID
	if id == 0 {
		var err error
		if id, err = ws.NextRunID(ctx); err != nil {
			return 0, fmt.Errorf("saving the %s run: %w", r.Kind, err)
		}
	}
	if r.SetID != nil {
		r.SetID(id)
	}
	params, err := json.Marshal(r.Params)
	if err != nil {
		return 0, fmt.Errorf("saving the %s run %d: parameters: %w", r.Kind, id, err)
	}
	result, err := json.Marshal(r.Result)
	if err != nil {
		return 0, fmt.Errorf("saving the %s run %d: result: %w", r.Kind, id, err)
	}
	if _, err := ws.Conn.ExecContext(ctx, queries.Get("insert_run"), id, r.Kind, r.Started.UTC(), time.Now().UTC(), Version, string(params), string(result)); err != nil {
		return 0, fmt.Errorf("saving run %d: %w", id, err)
	}
	return id, nil
}
