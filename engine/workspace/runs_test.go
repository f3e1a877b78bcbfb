package workspace

import (
	"context"
	"strconv"
	"testing"
	"time"
)

func TestSaveRun(t *testing.T) {
	ctx := context.Background()
	ws, err := Open(ctx, ":memory:", Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer ws.Close()

	type doc struct {
		RunID int64  `json:"run_id"`
		Note  string `json:"note"`
	}
	// A reserved id is used as given; a later run takes the next one.
	reserved, err := ws.NextRunID(ctx)
	if err != nil {
		t.Fatal(err)
	}
	d := &doc{Note: "a < b & c"}
	id, err := ws.SaveRun(ctx, Run{Kind: "scan", Started: time.Now(), Params: map[string]any{"min": "10"}, Result: d,
		SetID: func(id int64) { d.RunID = id }})
	if err != nil {
		t.Fatal(err)
	}
	if id == reserved || d.RunID != id {
		t.Errorf("new run id %d (reserved %d), result carries %d", id, reserved, d.RunID)
	}
	if _, err := ws.SaveRun(ctx, Run{ID: reserved, Kind: "pack", Started: time.Now(), Params: struct{}{}, Result: []int{1}}); err != nil {
		t.Fatal(err)
	}

	rows, err := ws.Conn.QueryContext(ctx, "SELECT run_id, kind, params, result FROM runs ORDER BY run_id")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var got []string
	for rows.Next() {
		var rid int64
		var kind, params, result string
		if err := rows.Scan(&rid, &kind, &params, &result); err != nil {
			t.Fatal(err)
		}
		got = append(got, kind+" "+params+" "+result)
		if kind == "scan" && rid != id || kind == "pack" && rid != reserved {
			t.Errorf("%s stored under run %d", kind, rid)
		}
	}
	// The stored text is encoding/json's: the result carries its own id.
	want := []string{
		`pack {} [1]`,
		`scan {"min":"10"} {"run_id":` + strconv.FormatInt(id, 10) + `,"note":"a \u003c b \u0026 c"}`,
	}
	if len(got) != 2 || got[0] != want[0] || got[1] != want[1] {
		t.Errorf("stored runs\n got %q\nwant %q", got, want)
	}

	if _, err := ws.SaveRun(ctx, Run{Kind: "bad", Started: time.Now(), Params: func() {}}); err == nil {
		t.Error("a run whose parameters cannot be encoded was stored")
	}
}
