// Package workspace opens the engagement workspace: one DuckDB database file
// that holds the loaded ledger, the load log, the rejected rows and the
// stored results of every run. Any DuckDB client can open the file.
//
// It owns the workspace file: opening it, its schema, the files registered
// in it and the one path that stores runs.
package workspace

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strconv"
	"strings"
	"sync/atomic"

	duckdb "github.com/duckdb/duckdb-go/v2"
	"github.com/duckdb/duckdb-go/v2/mapping"
	"github.com/leadline/leadline/queries"
)

// Version is leadline's version, written into the load log and every run.
var Version = "0.1.0-dev"

// Options tune the embedded database. Zero values keep DuckDB's defaults.
type Options struct {
	ReadOnly    bool   // open without write access (the sql command, reviewers)
	MemoryLimit string // e.g. "4GB"; DuckDB's memory_limit
	Threads     int    // DuckDB worker threads
	TempDir     string // where DuckDB spills when memory runs short
	// MustExist refuses to create a workspace: every command but load
	// works on one that exists, and a mistyped --db must not leave an
	// empty workspace behind.
	MustExist bool
	// DeferFileCheck leaves the check of files registered in place to the
	// caller (a load that may replace them); every other open refuses a
	// workspace whose files changed (CheckFiles).
	DeferFileCheck bool
}

// Workspace is an open workspace. It holds a single connection: DuckDB
// temporary objects (macros, reject tables) live per connection, and one
// writer at a time is all a workspace needs.
type Workspace struct {
	Path string
	DB   *sql.DB
	Conn *sql.Conn
	opts Options

	handle    mapping.Connection // DuckDB's own handle, for Progress
	hasHandle bool
	closed    atomic.Bool
	onClose   []func()
	step      atomic.Pointer[string] // what the workspace is doing, for the progress display (step.go)
}

// OnClose registers a function to run when the workspace closes (before
// the connection goes), such as stopping a progress display.
func (ws *Workspace) OnClose(f func()) { ws.onClose = append(ws.onClose, f) }

// ErrInUse is returned when another process holds the workspace open.
var ErrInUse = errors.New("workspace is in use by another process")

// Open opens (creating if needed, unless read-only or MustExist) the
// workspace at path. ":memory:" gives a workspace that lives only as long
// as the process. An existing file that is not a leadline workspace is
// refused before DuckDB opens it (ErrNotWorkspace).
func Open(ctx context.Context, path string, opts Options) (*Workspace, error) {
	dsn := path
	mustExist := opts.ReadOnly || opts.MustExist
	if path == ":memory:" {
		dsn = ""
		mustExist = false
	} else {
		exists, err := CheckFile(path)
		if err != nil {
			return nil, err
		}
		if !exists && mustExist {
			return nil, noWorkspace(path, "there is no such file")
		}
	}
	params := []string{}
	if opts.ReadOnly && dsn != "" {
		params = append(params, "access_mode=READ_ONLY")
	}
	if len(params) > 0 {
		dsn += "?" + strings.Join(params, "&")
	}
	connector, err := duckdb.NewConnector(dsn, nil)
	if err != nil {
		return nil, classifyOpenError(path, err)
	}
	db := sql.OpenDB(connector)
	db.SetMaxOpenConns(1)
	conn, err := db.Conn(ctx)
	if err != nil {
		db.Close()
		return nil, classifyOpenError(path, err)
	}
	ws := &Workspace{Path: path, DB: db, Conn: conn, opts: opts}
	ws.handle, ws.hasHandle = rawHandle(conn)
	if err := ws.configure(ctx); err != nil {
		ws.Close()
		return nil, err
	}
	empty, err := ws.checkSchema(ctx)
	if err != nil {
		ws.Close()
		return nil, err
	}
	if empty && mustExist {
		ws.Close()
		return nil, noWorkspace(path, "the file is a DuckDB database without any table")
	}
	if !opts.ReadOnly {
		if _, err := conn.ExecContext(ctx, queries.Get("create_schema")); err != nil {
			ws.Close()
			return nil, fmt.Errorf("workspace %s: creating the schema: %w", path, err)
		}
		marked, err := ws.Marked(ctx)
		if err == nil && !marked {
			_, err = conn.ExecContext(ctx, queries.Get("workspace_mark"))
		}
		if err != nil {
			ws.Close()
			return nil, fmt.Errorf("workspace %s: marking it as a leadline workspace: %w", path, err)
		}
	}
	if _, err := conn.ExecContext(ctx, queries.Get("create_amount_macros")); err != nil {
		ws.Close()
		return nil, fmt.Errorf("workspace %s: creating the amount macros: %w", path, err)
	}
	if f, ok := ctx.Value(onOpenKey{}).(func(*Workspace)); ok {
		f(ws)
	}
	if !opts.DeferFileCheck && !empty {
		if _, err := ws.CheckFiles(ctx, false, nil); err != nil {
			ws.Close()
			return nil, fmt.Errorf("workspace %s: %w", path, err)
		}
	}
	return ws, nil
}

func noWorkspace(path, why string) error {
	return fmt.Errorf("%w at %s (%s): check the --db path, or create the workspace by loading files with `leadline load --db %s FILE...`", ErrNoWorkspace, path, why, path)
}

func classifyOpenError(path string, err error) error {
	msg := err.Error()
	if strings.Contains(msg, "Could not set lock") || strings.Contains(msg, "Conflicting lock") {
		return fmt.Errorf("%w: %s (close the other leadline or DuckDB session, or use another --db): %v", ErrInUse, path, firstLine(msg))
	}
	return fmt.Errorf("opening workspace %s: %w", path, err)
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

func (ws *Workspace) configure(ctx context.Context) error {
	// DuckDB tracks query progress only with its progress bar on; we keep
	// its own drawing off (it would write to standard output) and draw our
	// own bar on standard error from Progress. DuckDB takes no bound value
	// in SET: the memory limit and directory are quoted, threads is a
	// whole number.
	stmts := []string{queries.Get("workspace_progress")}
	if ws.opts.MemoryLimit != "" {
		stmts = append(stmts, queries.Render("workspace_memory_limit", map[string]string{"memory_limit": queries.QuoteString(ws.opts.MemoryLimit)}))
	}
	if ws.opts.Threads > 0 {
		stmts = append(stmts, queries.Render("workspace_threads", map[string]string{"threads": strconv.Itoa(ws.opts.Threads)}))
	}
	if ws.opts.TempDir != "" {
		stmts = append(stmts, queries.Render("workspace_temp_directory", map[string]string{"temp_directory": queries.QuoteString(ws.opts.TempDir)}))
	}
	for _, s := range stmts {
		if _, err := ws.Conn.ExecContext(ctx, s); err != nil {
			return fmt.Errorf("workspace setting %q: %w", s, err)
		}
	}
	return nil
}

// Close releases the connection and the database.
func (ws *Workspace) Close() error {
	for _, f := range ws.onClose {
		f()
	}
	ws.onClose = nil
	ws.closed.Store(true)
	var first error
	if ws.Conn != nil {
		first = ws.Conn.Close()
	}
	if err := ws.DB.Close(); err != nil && first == nil {
		first = err
	}
	return first
}

// Meta reads a workspace setting; ok is false when it is not set.
func (ws *Workspace) Meta(ctx context.Context, key string) (value string, ok bool, err error) {
	err = ws.Conn.QueryRowContext(ctx, queries.Get("meta_get"), key).Scan(&value)
	if errors.Is(err, sql.ErrNoRows) {
		return "", false, nil
	}
	if err != nil && strings.Contains(err.Error(), "does not exist") {
		return "", false, nil
	}
	return value, err == nil, err
}

// SetMeta stores a workspace setting.
func (ws *Workspace) SetMeta(ctx context.Context, key, value string) error {
	_, err := ws.Conn.ExecContext(ctx, queries.Get("meta_set"), key, value)
	return err
}

// HasLedger reports whether anything has been loaded.
func (ws *Workspace) HasLedger(ctx context.Context) (bool, error) {
	var n int
	err := ws.Conn.QueryRowContext(ctx, queries.Get("ledger_exists")).Scan(&n)
	return n > 0, err
}

// Column is one column of the ledger table.
type Column struct {
	Name string
	Type string
}

// LedgerColumns lists the ledger's columns in table order.
func (ws *Workspace) LedgerColumns(ctx context.Context) ([]Column, error) {
	rows, err := ws.Conn.QueryContext(ctx, queries.Get("ledger_columns"))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var cols []Column
	for rows.Next() {
		var c Column
		if err := rows.Scan(&c.Name, &c.Type); err != nil {
			return nil, err
		}
		cols = append(cols, c)
	}
	return cols, rows.Err()
}

// DuckDBVersion returns the embedded DuckDB's version string.
func (ws *Workspace) DuckDBVersion(ctx context.Context) (string, error) {
	var v string
	err := ws.Conn.QueryRowContext(ctx, queries.Get("duckdb_version")).Scan(&v)
	return v, err
}
