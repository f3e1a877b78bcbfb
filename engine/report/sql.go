package report

import "github.com/leadline/leadline/queries"

// stmt returns the report's named statement from queries/report.sql.
func stmt(name string) string { return queries.Get(name) }
