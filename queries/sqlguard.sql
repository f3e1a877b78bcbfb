-- The SQL guard's own statements. {{predicate}} is the user's filter
-- wrapped in parentheses; the probes built from it are never run, only
-- parsed by json_serialize_sql (sqlguard_parse) or bound with LIMIT 0.

-- name: sqlguard_parse
-- DuckDB's parse tree of one statement, as JSON. Parameter: the statement.
SELECT CAST(json_serialize_sql(CAST(? AS VARCHAR)) AS VARCHAR)

-- name: sqlguard_tables
-- The workspace's own tables, lower case.
SELECT lower(table_name) FROM information_schema.tables WHERE table_catalog = current_database() AND table_schema = 'main'

-- name: sqlguard_column_count
-- Whether the ledger has a column of this name (any case). Parameter: the name.
SELECT count(*) FROM information_schema.columns WHERE table_name = 'ledger' AND table_schema = 'main' AND lower(column_name) = lower(?)

-- name: sqlguard_filter_probe
-- Parsed only: the filter as the one expression of a SELECT from ledger.
SELECT {{predicate}} AS ll_predicate FROM ledger

-- name: sqlguard_filter_bind
-- Bound, returns nothing: the filter's columns and types resolve.
SELECT 1 FROM ledger WHERE {{predicate}} LIMIT 0

-- name: sqlguard_filter_operand
-- Parsed only: the filter stays one operand under a comparison.
SELECT 1 FROM ledger WHERE {{predicate}} IS NOT DISTINCT FROM TRUE
