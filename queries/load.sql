-- Loading. The reader expression, the column list and the amount type are
-- built by engine/load from validated, quoted identifiers; values are bound.

-- name: load_stage
-- CSV records go first into a temporary table, in file order: its rowid is
-- then the record's position, which numbers lines without a window
-- function (a window over the reader would make the load single-threaded).
CREATE OR REPLACE TEMP TABLE {{stage}} AS SELECT * FROM {{reader}};

-- name: load_insert
-- One pass over the file: every record goes into the ledger with its
-- record number; rows whose amount or date does not parse are moved to
-- rejects by load_move_rejects right after, inside the same transaction.
INSERT INTO ledger BY NAME
SELECT
    {{row_id_base}} + ll_rn AS row_id,
    {{file_id}} AS file_id,
    ll_rn + {{line_offset}} AS line,
    {{amount_expr}} AS amount,
    {{columns}}
FROM (
    SELECT *{{parts}}
    FROM (
        SELECT *, {{row_number}} AS ll_rn{{fast}}
        FROM {{reader}}
    )
);

-- name: load_reject_amounts
INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line)
SELECT file_id, line, ?, {{raw_expr}}, {{reason_expr}}, NULL
FROM ledger
WHERE file_id = ? AND amount IS NULL;

-- name: load_reject_dates
INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line)
SELECT file_id, line, ?, {{raw_expr}}, ?, NULL
FROM ledger
WHERE file_id = ? AND amount IS NOT NULL AND posted IS NULL
  AND nullif(trim(CAST({{raw_expr}} AS VARCHAR)), '') IS NOT NULL;

-- name: load_delete_rejected
DELETE FROM ledger
WHERE file_id = ?
  AND (amount IS NULL OR (posted IS NULL AND nullif(trim(CAST({{raw_expr}} AS VARCHAR)), '') IS NOT NULL));

-- name: load_delete_rejected_no_date
DELETE FROM ledger WHERE file_id = ? AND amount IS NULL;

-- name: load_structural_rejects
-- Records the CSV reader itself could not take (ragged rows, bad quoting,
-- bad encoding), one row per record: its error types and the columns they
-- name, the text the reader kept, whether a quote was left open, and the
-- byte where the record starts.
SELECT line,
       string_agg(DISTINCT error_type, '; ' ORDER BY error_type) AS types,
       string_agg(DISTINCT column_name, ', ' ORDER BY column_name) AS columns,
       any_value(csv_line) AS raw_line,
       bool_or(error_message ILIKE '%unterminated quote%') AS unterminated,
       min(line_byte_position) AS byte_position
FROM {{rejects_table}}
GROUP BY line
ORDER BY line;

-- name: ledger_ddl
-- DuckDB's own CREATE statement for the ledger, and its row count.
SELECT sql, (SELECT count(*) FROM ledger)
FROM duckdb_tables()
WHERE table_name = 'ledger' AND schema_name = 'main' AND database_name = current_database();

-- name: load_file_counts
SELECT count(*) AS rows_in_ledger, coalesce(max(line), 0) FROM ledger WHERE file_id = ?;

-- name: load_rejected_count
SELECT count(*) FROM rejects WHERE file_id = ?;

-- name: load_next_row_id
SELECT coalesce(max(row_id), 0) FROM ledger;

-- name: load_insert_file
INSERT INTO files (file_id, load_id, path, name, format, size_bytes, sha256,
                   rows_read, rows_loaded, rows_rejected, mapping, dialect, loaded_at)
VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?);

-- name: load_insert_load
INSERT INTO loads (load_id, started_at, finished_at, tool_version, options)
VALUES (?, ?, ?, ?, ?);

-- name: load_forget_ledger
DELETE FROM ledger WHERE file_id = ?;

-- name: load_forget_rejects
DELETE FROM rejects WHERE file_id = ?;

-- name: load_forget_file
DELETE FROM files WHERE file_id = ?;

-- name: entity_totals
-- Control totals per entity over the whole workspace, exact decimals as text.
SELECT coalesce(entity, '') AS entity,
       count(*) AS rows,
       CAST(coalesce(sum(amount) FILTER (WHERE amount > 0), 0) AS VARCHAR) AS positive,
       CAST(coalesce(sum(amount) FILTER (WHERE amount < 0), 0) AS VARCHAR) AS negative,
       CAST(coalesce(sum(amount), 0) AS VARCHAR) AS net
FROM ledger
GROUP BY ALL
ORDER BY entity;
