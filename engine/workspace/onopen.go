package workspace

import "context"

type onOpenKey struct{}

// WithOnOpen returns a context under which Open calls f with every
// workspace it opens, before the workspace is used: the command line
// draws its progress bar this way on the workspaces a pack run opens
// itself (the one it loads, the one it analyses).
func WithOnOpen(ctx context.Context, f func(*Workspace)) context.Context {
	return context.WithValue(ctx, onOpenKey{}, f)
}
