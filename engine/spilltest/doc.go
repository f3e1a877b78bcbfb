// Package spilltest holds one test: the battery, the duplicate tests and a
// drill run under a small DuckDB memory limit, so that DuckDB spills to
// disk, and must give exactly the results they give without the limit.
// It has no code of its own.
//
// It owns the check that results stay the same when DuckDB spills to disk.
package spilltest
