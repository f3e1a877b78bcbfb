// Package sqlguard decides whether SQL written by a user (the sql command, a
// filter predicate, a pack's extra checks) may run against a workspace. It
// lets through a single SELECT that reads only workspace tables and calls
// no function that reaches files, settings or other databases. The check
// works on DuckDB's own parse tree (json_serialize_sql), not on the text,
// so comments, quoting and case tricks do not get past it.
//
// It owns the decision whether SQL written by a user may run.
package sqlguard

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"strings"

	"github.com/leadline/leadline/queries"
)

// Querier is what the guard needs: a connection to the workspace.
type Querier interface {
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
}

// allowedTableFunctions are table functions that produce values without
// touching anything outside the query.
var allowedTableFunctions = map[string]bool{
	"range": true, "generate_series": true, "unnest": true,
}

// deniedFunctions reach files, the environment, settings or other
// databases, or run SQL text of their own.
var deniedFunctions = map[string]bool{
	"read_text": true, "read_blob": true, "getenv": true, "current_setting": true,
	"query": true, "query_table": true, "sql_auto_complete": true, "json_execute_serialized_sql": true,
	"setseed": true, "nextval": true, "currval": true, "getvariable": true,
	"read_csv": true, "read_csv_auto": true, "read_parquet": true, "parquet_scan": true,
	"read_json": true, "read_json_auto": true, "read_ndjson": true, "glob": true,
}

// Error is a refusal with the reason.
type Error struct{ Reason string }

func (e *Error) Error() string { return e.Reason }

// CheckSelect returns nil when query is one read-only SELECT over the
// workspace's own tables, and an *Error saying why not otherwise.
func CheckSelect(ctx context.Context, q Querier, query string) error {
	var doc string
	if err := q.QueryRowContext(ctx, queries.Get("sqlguard_parse"), query).Scan(&doc); err != nil {
		return fmt.Errorf("checking the SQL: %w", err)
	}
	var parsed struct {
		Error        bool              `json:"error"`
		ErrorType    string            `json:"error_type"`
		ErrorMessage string            `json:"error_message"`
		Statements   []json.RawMessage `json:"statements"`
	}
	if err := json.Unmarshal([]byte(doc), &parsed); err != nil {
		return fmt.Errorf("checking the SQL: %w", err)
	}
	if parsed.Error {
		if strings.Contains(parsed.ErrorMessage, "Only SELECT") {
			return &Error{"only a single read-only SELECT may run here; statements that write, attach, copy, install or change settings are refused"}
		}
		return &Error{"the SQL does not parse: " + parsed.ErrorMessage}
	}
	if len(parsed.Statements) != 1 {
		return &Error{fmt.Sprintf("give exactly one SELECT statement (found %d)", len(parsed.Statements))}
	}
	tables, err := workspaceTables(ctx, q)
	if err != nil {
		return err
	}
	var tree any
	if err := json.Unmarshal(parsed.Statements[0], &tree); err != nil {
		return err
	}
	return walk(tree, tables, map[string]bool{})
}

func workspaceTables(ctx context.Context, q Querier) (map[string]bool, error) {
	rows, err := q.QueryContext(ctx, queries.Get("sqlguard_tables"))
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[string]bool{}
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			return nil, err
		}
		out[n] = true
	}
	return out, rows.Err()
}

// ctesOf returns the CTE names a query node declares. They are visible in
// that node and below it, never outside it: a name declared in one
// subquery must not make the same name elsewhere a CTE (where DuckDB would
// read it as a file).
func ctesOf(x map[string]any) []string {
	var out []string
	cm, ok := x["cte_map"].(map[string]any)
	if !ok {
		return nil
	}
	list, _ := cm["map"].([]any)
	for _, e := range list {
		if em, ok := e.(map[string]any); ok {
			if k, ok := em["key"].(string); ok {
				out = append(out, strings.ToLower(k))
			}
		}
	}
	return out
}

func walk(n any, tables, ctes map[string]bool) error {
	switch x := n.(type) {
	case map[string]any:
		if names := ctesOf(x); len(names) > 0 {
			return walkWithCTEs(x, names, tables, ctes)
		}
		typ, _ := x["type"].(string)
		switch typ {
		case "BASE_TABLE":
			name, _ := x["table_name"].(string)
			cat, _ := x["catalog_name"].(string)
			schema, _ := x["schema_name"].(string)
			lname := strings.ToLower(name)
			if cat != "" && !strings.EqualFold(cat, "memory") || (schema != "" && !strings.EqualFold(schema, "main")) {
				return &Error{fmt.Sprintf("table %s.%s: only the workspace's own tables may be read", schema, name)}
			}
			if !tables[lname] && !ctes[lname] {
				return &Error{fmt.Sprintf("%q is not a table of this workspace (tables: ledger, files, rejects, loads, runs, meta); files and other databases cannot be read here", name)}
			}
		case "TABLE_FUNCTION":
			fn, _ := x["function"].(map[string]any)
			name, _ := fn["function_name"].(string)
			if !allowedTableFunctions[strings.ToLower(name)] {
				return &Error{fmt.Sprintf("table function %s() is not allowed here: it may read outside the workspace", name)}
			}
		case "FUNCTION":
			name, _ := x["function_name"].(string)
			if deniedFunctions[strings.ToLower(name)] {
				return &Error{fmt.Sprintf("function %s() is not allowed here", name)}
			}
		}
		for _, v := range x {
			if err := walk(v, tables, ctes); err != nil {
				return err
			}
		}
	case []any:
		for _, v := range x {
			if err := walk(v, tables, ctes); err != nil {
				return err
			}
		}
	}
	return nil
}

// Filter checks a WHERE predicate written over the ledger's columns and
// returns it ready to paste after WHERE (wrapped in parentheses). An empty
// predicate gives "TRUE".
func Filter(ctx context.Context, q Querier, predicate string) (string, error) {
	p := strings.TrimSpace(predicate)
	if p == "" {
		return "TRUE", nil
	}
	wrapped := "(" + p + "\n)"
	probe := queries.Render("sqlguard_filter_probe", map[string]string{"predicate": wrapped})
	if err := CheckSelect(ctx, q, probe); err != nil {
		return "", fmt.Errorf("filter %q: %w", predicate, err)
	}
	if err := singleExpression(ctx, q, probe); err != nil {
		return "", fmt.Errorf("filter %q: %w", predicate, err)
	}
	if err := staysInside(ctx, q, wrapped); err != nil {
		return "", fmt.Errorf("filter %q: %w", predicate, err)
	}
	rows, err := q.QueryContext(ctx, queries.Render("sqlguard_filter_bind", map[string]string{"predicate": wrapped}))
	if err != nil {
		return "", fmt.Errorf("filter %q: %s", predicate, firstLine(err.Error()))
	}
	rows.Close()
	return wrapped, nil
}

// Column checks that name is a column of the ledger and returns it quoted.
func Column(ctx context.Context, q Querier, name string) (string, error) {
	var n int
	if err := q.QueryRowContext(ctx, queries.Get("sqlguard_column_count"), name).Scan(&n); err != nil {
		return "", err
	}
	if n == 0 {
		return "", &Error{fmt.Sprintf("no column %q in the ledger (see: leadline sql \"DESCRIBE ledger\")", name)}
	}
	return queries.QuoteIdent(name), nil
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// singleExpression checks that probe parsed as one plain SELECT of one
// expression from ledger, with nothing else: a predicate that closes our
// parenthesis and opens a clause of its own (a UNION, another column, a
// WHERE) changes that shape and is refused.
func singleExpression(ctx context.Context, q Querier, probe string) error {
	var doc string
	if err := q.QueryRowContext(ctx, queries.Get("sqlguard_parse"), probe).Scan(&doc); err != nil {
		return err
	}
	var parsed struct {
		Statements []struct {
			Node struct {
				Type        string            `json:"type"`
				SelectList  []json.RawMessage `json:"select_list"`
				WhereClause json.RawMessage   `json:"where_clause"`
				GroupExprs  []json.RawMessage `json:"group_expressions"`
				Having      json.RawMessage   `json:"having"`
				Modifiers   []json.RawMessage `json:"modifiers"`
				FromTable   struct {
					Type      string `json:"type"`
					TableName string `json:"table_name"`
				} `json:"from_table"`
			} `json:"node"`
		} `json:"statements"`
	}
	if err := json.Unmarshal([]byte(doc), &parsed); err != nil {
		return err
	}
	bad := &Error{"not a single predicate over the ledger's columns"}
	if len(parsed.Statements) != 1 {
		return bad
	}
	n := parsed.Statements[0].Node
	isNull := func(r json.RawMessage) bool { return len(r) == 0 || string(r) == "null" }
	if n.Type != "SELECT_NODE" || len(n.SelectList) != 1 || !isNull(n.WhereClause) || len(n.GroupExprs) != 0 ||
		!isNull(n.Having) || len(n.Modifiers) != 0 || n.FromTable.Type != "BASE_TABLE" || !strings.EqualFold(n.FromTable.TableName, "ledger") {
		return bad
	}
	return nil
}

func with(base map[string]bool, names ...string) map[string]bool {
	out := make(map[string]bool, len(base)+len(names))
	for k := range base {
		out[k] = true
	}
	for _, k := range names {
		out[k] = true
	}
	return out
}

// walkWithCTEs walks a query node that declares CTEs. Each CTE's own
// definition sees the CTEs declared before it, and itself only when it is
// recursive: in a plain CTE its own name means the outer table or, to
// DuckDB, a file of that name. The rest of the node sees them all.
func walkWithCTEs(x map[string]any, names []string, tables, ctes map[string]bool) error {
	cm, _ := x["cte_map"].(map[string]any)
	list, _ := cm["map"].([]any)
	for i, e := range list {
		em, _ := e.(map[string]any)
		vis := with(ctes, names[:min(i, len(names))]...)
		if recursiveCTE(em["value"]) && i < len(names) {
			vis[names[i]] = true
		}
		if err := walk(em["value"], tables, vis); err != nil {
			return err
		}
	}
	all := with(ctes, names...)
	for k, v := range x {
		if k == "cte_map" {
			continue
		}
		if err := walk(v, tables, all); err != nil {
			return err
		}
	}
	return nil
}

func recursiveCTE(v any) bool {
	m, _ := v.(map[string]any)
	q, _ := m["query"].(map[string]any)
	n, _ := q["node"].(map[string]any)
	t, _ := n["type"].(string)
	return t == "RECURSIVE_CTE_NODE"
}

// staysInside checks that the wrapped predicate stays one operand when an
// operator is put in front of it, as the commands AND it with their own
// conditions: a predicate such as "1=1) OR (1=1" closes our parenthesis
// early and would otherwise turn "x AND (1=1) OR (1=1)" into an OR that
// widens the selection. The probe is a comparison, which binds tighter than
// AND and OR and which the parser does not flatten the way it flattens
// nested ANDs or double NOTs.
func staysInside(ctx context.Context, q Querier, wrapped string) error {
	var doc string
	if err := q.QueryRowContext(ctx, queries.Get("sqlguard_parse"), queries.Render("sqlguard_filter_operand", map[string]string{"predicate": wrapped})).Scan(&doc); err != nil {
		return err
	}
	var parsed struct {
		Statements []struct {
			Node struct {
				Where struct {
					Type string `json:"type"`
				} `json:"where_clause"`
			} `json:"node"`
		} `json:"statements"`
	}
	if err := json.Unmarshal([]byte(doc), &parsed); err != nil {
		return err
	}
	if len(parsed.Statements) != 1 || parsed.Statements[0].Node.Where.Type != "COMPARE_NOT_DISTINCT_FROM" {
		return &Error{"not a single predicate: it closes its parentheses early"}
	}
	return nil
}
