package workspace

import (
	"database/sql"
	"reflect"
	"unsafe"

	"github.com/duckdb/duckdb-go/v2/mapping"
)

// DuckDB can say how far a running query has come (duckdb_query_progress),
// but duckdb-go does not pass that call on. We keep the C connection handle
// that duckdb-go holds for our single connection and ask DuckDB directly,
// from the progress display's goroutine, while a query runs. If a future
// duckdb-go changes its connection struct, the handle is not found and the
// progress display simply stays off.

// rawHandle digs the DuckDB connection handle out of duckdb-go's driver
// connection. It returns ok = false when the layout is not the one known.
func rawHandle(conn *sql.Conn) (h mapping.Connection, ok bool) {
	_ = conn.Raw(func(dc any) error {
		v := reflect.ValueOf(dc)
		if v.Kind() != reflect.Pointer || v.Elem().Kind() != reflect.Struct {
			return nil
		}
		f := v.Elem().FieldByName("conn")
		if !f.IsValid() || f.Type() != reflect.TypeOf(mapping.Connection{}) {
			return nil
		}
		h = *(*mapping.Connection)(unsafe.Pointer(f.UnsafeAddr()))
		ok = h.Ptr != nil
		return nil
	})
	return h, ok
}

// Progress reports how far the query running on the workspace's connection
// has come, as a fraction from 0 to 1. ok is false when no query is running
// or DuckDB cannot tell.
func (ws *Workspace) Progress() (fraction float64, rows uint64, ok bool) {
	if !ws.hasHandle || ws.closed.Load() {
		return 0, 0, false
	}
	p := mapping.QueryProgress(ws.handle)
	pct, done, _ := mapping.QueryProgressTypeMembers(&p)
	if pct < 0 {
		return 0, 0, false
	}
	return pct / 100, done, true
}
