package main

import (
	"context"
	"io"
	"os"
	"time"

	"github.com/leadline/leadline/engine/jsondoc"
	"github.com/leadline/leadline/engine/progress"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

func version() string { return workspace.Version }

// dbFlags are the workspace flags every workspace command takes.
type dbFlags struct {
	path    string
	memory  string
	threads int
	tempDir string
}

func (d *dbFlags) add(fs *pflag.FlagSet) {
	fs.StringVar(&d.path, "db", "leadline.duckdb", "workspace file (a DuckDB database; :memory: for a throwaway one)")
	// 1280MB keeps every step under 2 GiB of resident memory at 50,000,000
	// rows: DuckDB allocates a few hundred MB beyond its limit, and with
	// 1536MB the duplicate tests once peaked at 2,100 MB (1,443 MB with
	// 1280MB, 45 s against 40 to 50 s); DuckDB's own default, 80% of RAM,
	// took 3.5 GB for a 20,000,000-row CSV load. Comfortable on a 16 GiB
	// laptop; DuckDB spills to --temp-dir beyond it; raise it on a big machine.
	fs.StringVar(&d.memory, "memory-limit", "1280MB", "DuckDB memory limit; beyond it DuckDB spills to --temp-dir (e.g. 8GB on a big machine)")
	fs.IntVar(&d.threads, "threads", 0, "DuckDB worker threads (default: one per core)")
	fs.StringVar(&d.tempDir, "temp-dir", "", "folder where DuckDB spills when memory runs short (default: beside the workspace)")
}

// open opens the existing workspace (every command but load: a mistyped
// --db must never leave an empty workspace behind).
func (d *dbFlags) open(ctx context.Context, readOnly bool) (*workspace.Workspace, error) {
	return d.openWith(ctx, workspace.Options{ReadOnly: readOnly, MustExist: true})
}

// openOrCreate opens the workspace, creating it when there is none (load;
// the load checks the files registered in place itself, leaving out those
// it replaces).
func (d *dbFlags) openOrCreate(ctx context.Context) (*workspace.Workspace, error) {
	return d.openWith(ctx, workspace.Options{DeferFileCheck: true})
}

func (d *dbFlags) openWith(ctx context.Context, o workspace.Options) (*workspace.Workspace, error) {
	o.MemoryLimit, o.Threads, o.TempDir = d.memory, d.threads, d.tempDir
	return workspace.Open(withProgress(ctx), d.path, o)
}

// withProgress draws a bar on standard error for queries that run longer
// than a second on every workspace opened under the context, only when
// standard error is a terminal: scripts see nothing.
func withProgress(ctx context.Context) context.Context {
	if !isTerminal(os.Stderr) || os.Getenv("LEADLINE_NO_PROGRESS") != "" {
		return ctx
	}
	return workspace.WithOnOpen(ctx, func(ws *workspace.Workspace) {
		ws.OnClose(progress.Watch(ws, os.Stderr, "working", time.Second))
	})
}

// formatFlag is --format text|csv|json.
type formatFlag struct{ value string }

func (f *formatFlag) add(fs *pflag.FlagSet) {
	fs.StringVar(&f.value, "format", "text", "output format: text, csv or json")
}

func (f *formatFlag) check() error { return tabular.CheckFormat(f.value) }

// writeJSON writes a command's JSON document.
func writeJSON(w io.Writer, v any) error { return jsondoc.Write(w, v) }

func writeTable(w io.Writer, format string, t *tabular.Table) error {
	switch format {
	case "csv":
		return t.WriteCSV(w)
	case "json":
		return t.WriteJSON(w)
	}
	return t.WriteText(w, 60)
}
