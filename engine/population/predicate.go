package population

import "strings"

// Predicate is an SQL boolean expression with its bound values in order.
type Predicate struct {
	SQL  string
	Args []any
}

// And joins predicates; an empty list gives TRUE.
func And(ps ...Predicate) Predicate {
	var parts []string
	var args []any
	for _, p := range ps {
		if strings.TrimSpace(p.SQL) == "" {
			continue
		}
		parts = append(parts, "("+p.SQL+")")
		args = append(args, p.Args...)
	}
	if len(parts) == 0 {
		return Predicate{SQL: "TRUE"}
	}
	return Predicate{SQL: strings.Join(parts, "\n  AND "), Args: args}
}
