-- Statements of packs (engine/pack). The extract statements are in
-- output.sql.

-- name: pack_input_files
-- Per loaded file: its rows read, loaded and rejected and its control
-- totals (positive, negative, net). No bound parameters, no placeholders.
SELECT f.file_id, f.sha256, f.format, f.size_bytes, f.rows_read, f.rows_loaded, f.rows_rejected,
       coalesce(sum(l.amount) FILTER (WHERE l.amount > 0), 0),
       coalesce(sum(l.amount) FILTER (WHERE l.amount < 0), 0),
       coalesce(sum(l.amount), 0)
FROM files f LEFT JOIN ledger l ON l.file_id = f.file_id
GROUP BY ALL ORDER BY f.file_id;

-- name: pack_ledger_totals
-- The workspace's totals, exact: positive, negative, net. No bound
-- parameters, no placeholders.
SELECT coalesce(sum(amount) FILTER (WHERE amount > 0), 0),
       coalesce(sum(amount) FILTER (WHERE amount < 0), 0),
       coalesce(sum(amount), 0)
FROM ledger;

-- name: pack_rejects_by_file
-- Rejected rows per file and reason, with the first line of each. No bound
-- parameters, no placeholders.
SELECT sha256, reason, count(*) AS rows, min(line) AS first_line
FROM rejects JOIN files USING (file_id)
GROUP BY file_id, sha256, reason
ORDER BY file_id, rows DESC, reason;

-- name: pack_check_count
-- Every row a check returns, counted when max_rows cut its table short.
-- Placeholder {{query}}: the check's statement, already checked by
-- engine/sqlguard. Bound parameters: the check's own.
SELECT count(*) FROM (
{{query}}
)

-- name: pack_extract_rows
-- Every record of an extract, in its order. Placeholder {{table}}: the
-- stage table of extract_stage, quoted with QuoteIdent. No bound parameters.
SELECT * EXCLUDE (ll_item_no, ll_pos) FROM {{table}} ORDER BY ll_pos

-- name: pack_parquet_columns
-- The column names of a Parquet input, for checking a pack without a
-- workspace. No bound parameters: DuckDB takes none as a table-function
-- argument here. Placeholder {{path}}: the file, its glob characters
-- escaped (load.ExactPath) and quoted with QuoteString.
SELECT column_name FROM (DESCRIBE SELECT * FROM read_parquet({{path}}));

-- name: pack_shape_add_column
-- A text column added to the empty ledger that pack checks are tried on.
-- Placeholder {{column}}: a column name quoted with QuoteIdent. No bound
-- parameters.
ALTER TABLE ledger ADD COLUMN {{column}} VARCHAR;

-- name: pack_serialize_sql
-- A statement's parse tree as JSON (to see whether it ends with ORDER BY).
-- Bound parameter: the statement text. No placeholders.
SELECT CAST(json_serialize_sql(CAST(? AS VARCHAR)) AS VARCHAR);

-- name: pack_workspace_files
-- The files loaded into a workspace, by content, in load order. No bound
-- parameters, no placeholders.
SELECT sha256, path FROM files ORDER BY file_id;
