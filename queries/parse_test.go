package queries_test

import (
	"context"
	"database/sql"
	"path/filepath"
	"strings"
	"testing"

	_ "github.com/duckdb/duckdb-go/v2"

	"github.com/leadline/leadline/queries"
)

// fragments holds one representative text for every placeholder, of the
// kind the engine puts there. The segment placeholders come in two forms:
// with one segment column and without any.
func fragments(dir string, segmented bool) map[string]string {
	f := map[string]string{
		"abs":            "abs(ll_u)",
		"amount_expr":    `TRY_CAST("amt" AS DECIMAL(18,2))`,
		"amount_type":    "DECIMAL(18,2)",
		"base":           "amount > 0",
		"by_names":       "",
		"by_select":      "",
		"column_defs":    `"descr" VARCHAR, "amount" VARCHAR`,
		"columns":        `"ent" AS entity`,
		"currency":       "currency",
		"debit":          `TRY_CAST(ll_amount_canonical("dr", false) AS DECIMAL(18,2))`,
		"credit":         `TRY_CAST(ll_amount_canonical("cr", false) AS DECIMAL(18,2))`,
		"fast":           ", 1 AS ll_fast",
		"file_col":       `"file"`,
		"file_id":        "1",
		"filter":         "descr <> '{{filter}}'",
		"first3":         "ll_first3",
		"group_by":       "",
		"group_expr":     "entity",
		"ids":            "1, 2",
		"exclude":        "ll_pos",
		"last2":          "ll_a % 100",
		"limit":          "LIMIT 10",
		"line_offset":    "1",
		"memory_limit":   "'1GB'",
		"options":        "FORMAT csv, HEADER",
		"order":          "row_id",
		"partition":      "",
		"window":         "50",
		"steps":          "50",
		"parts":          ", 1 AS ll_parts",
		"predicate":      "(descr = 'x'\n)",
		"col":            `"descr"`,
		"column":         `"client_ref"`,
		"keep":           "false",
		"ranges":         "(0, 10, 1), (10, 20, 2)",
		"values":         "(5, 'amount', '=A1', 'formula without a cached value'), (7, NULL, NULL, 'empty row')",
		"lines":          "5, 7",
		"test":           "length(descr) > 2",
		"texts":          "SELECT 1 AS pos, '1.234' AS text",
		"n":              "1",
		"records":        "SELECT * FROM ledger",
		"table":          `"ll_extract"`,
		"items":          "SELECT 1 AS ll_item_no, 'a' AS item, 1 AS row_id",
		"label":          `"group"`,
		"path":           queries.QuoteString(filepath.Join(dir, "out.csv")),
		"query":          "SELECT 1 AS one",
		"raw_expr":       `"amt"`,
		"reader":         "read_csv(" + queries.QuoteString(filepath.Join(dir, "missing.csv")) + ")",
		"reason_expr":    "'not an amount'",
		"rejects_table":  `"ll_rejects"`,
		"row_id_base":    "0",
		"row_number":     "row_number() OVER ()",
		"scan":           "SELECT 1 AS ll_f3, 2 AS ll_l2, 3 AS ll_n, 4.0 AS ll_sum",
		"segment_names":  "",
		"segment_normal": "",
		"segment_select": "",
		"sign_ok":        "ll_u > 0",
		"sign_where":     "amount IS NOT NULL",
		"other_sign":     "u < 0",
		"min_units":      "1000",
		"last2_min":      "10000",
		"band":           "CASE WHEN a < 100000 THEN 0 ELSE 1 END",
		"stage":          `"ll_stage"`,
		"temp_directory": queries.QuoteString(dir),
		"tested":         "ll_amount > 0",
		"threads":        "2",
		"units":          "CAST(amount * 100 AS BIGINT)",
		"where":          "descr = 'x'",
		"wide_type":      "DECIMAL(38,2)",
		"wide":           "DECIMAL(38,2)",
		"x":              "abs(amount)",
		"key_select":     "trim(coalesce(CAST(entity AS VARCHAR), '')) AS ll_k1, ",
		"currency_count": "0",
		"currency_key":   "",
		"period_from":    "DATE '2025-01-01'",
		"period_to":      "DATE '2025-12-31'",
		"weight":         "copies",
		// files in place (inplace.sql)
		"select":   "SELECT 1 AS row_id, 1 AS line, 2.5 AS amount, DATE '2025-01-01' AS posted, '1' AS amt",
		"rounded":  "false",
		"date_raw": `"amt"`,
		"union":    "SELECT 1 AS row_id",
		// the billion-row benchmark's generator (bench.sql)
		"first": "0",
		"last":  "8",
		"seed":  "2025",
	}
	if segmented {
		f["group_by"] = "GROUP BY ll_s1"
		f["by_names"] = `"by_entity", `
		f["by_select"] = `CAST(entity AS VARCHAR) AS "by_entity", `
		f["partition"] = "PARTITION BY ll_s1 "
		f["segment_names"] = "ll_s1, "
		f["segment_normal"] = "ll_s1, "
		f["segment_select"] = "strftime(posted, '%Y-%m') AS ll_s1, "
	}
	return f
}

// expressions are named fragments that are not statements of their own:
// the test parses each as the one expression of a SELECT.
var expressions = map[string]bool{"output_neutral_text": true}

// TestEveryStatementParses renders every named statement with representative
// fragments (with and without segments) and runs it on an empty workspace
// schema in a transaction that is rolled back. Errors of binding or
// execution are expected for some (missing files, bound values not given);
// a parser error is a broken template and fails the test.
func TestEveryStatementParses(t *testing.T) {
	ctx := context.Background()
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	db.SetMaxOpenConns(1)
	for _, setup := range []string{
		queries.Get("create_schema"),
		queries.Render("create_ledger", map[string]string{"amount_type": "DECIMAL(18,2)"}),
	} {
		if _, err := db.ExecContext(ctx, setup); err != nil {
			t.Fatal(err)
		}
	}
	dir := t.TempDir()
	names := queries.Names()
	if len(names) < 50 {
		t.Fatalf("only %d named statements found", len(names))
	}
	prepared := 0
	for _, name := range names {
		if strings.HasPrefix(name, "countsql_clickhouse_") {
			// ClickHouse's own syntax (ARRAY JOIN): engine/countsql runs
			// it on a ClickHouse server.
			continue
		}
		for _, segmented := range []bool{false, true} {
			all := fragments(dir, segmented)
			repl := map[string]string{}
			for _, k := range queries.Placeholders(name) {
				v, ok := all[k]
				if !ok {
					t.Fatalf("%s: no representative fragment for {{%s}}: add one here", name, k)
				}
				repl[k] = v
			}
			q := queries.Render(name, repl)
			if expressions[name] {
				q = "SELECT " + q + " FROM ledger"
			}
			tx, err := db.BeginTx(ctx, nil)
			if err != nil {
				t.Fatal(err)
			}
			_, err = tx.ExecContext(ctx, q)
			tx.Rollback()
			switch {
			case err == nil:
				prepared++
			case strings.Contains(err.Error(), "Parser Error"):
				t.Errorf("%s (segmented %v) does not parse: %v\n%s", name, segmented, err, q)
			default:
				t.Logf("%s (segmented %v): parsed; %v", name, segmented, firstLine(err.Error()))
			}
		}
	}
	t.Logf("%d statements, %d ran without error on the empty schema", len(names), prepared/2)
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}
