-- Parquet files registered in place: the workspace keeps no copy of their
-- rows; the ledger is a view over the files (engine/load/inplace.go), and
-- every open checks the files against their record (engine/workspace).

-- name: inplace_create
-- The record of each file registered in place, and the files table's mode
-- column (copy or in place). No bound parameters, no placeholders.
CREATE TABLE IF NOT EXISTS inplace_files (
    file_id     INTEGER PRIMARY KEY,
    path        VARCHAR NOT NULL,  -- absolute path, as read
    size_bytes  BIGINT NOT NULL,
    mtime_ns    BIGINT NOT NULL,   -- modification time, nanoseconds since 1970 (UTC)
    sha256      VARCHAR NOT NULL,
    footer_rows BIGINT NOT NULL,   -- row count in the file's footer
    row_id_base BIGINT NOT NULL,   -- row_id = row_id_base + row number in the file
    select_sql  VARCHAR NOT NULL   -- the file's kept rows in the ledger's columns
);
ALTER TABLE files ADD COLUMN IF NOT EXISTS mode VARCHAR DEFAULT 'copy';

-- name: inplace_footer_rows
-- The row count a Parquet file's footer declares. Placeholder {{path}}:
-- the quoted, glob-escaped path. No bound parameters.
SELECT coalesce(sum(num_rows), 0) FROM parquet_file_metadata({{path}});

-- name: inplace_select
-- A file's rows as the ledger holds them, before rejected rows are left
-- out: the select of load_insert, reading the file itself. Placeholders
-- as in load_insert ({{reader}} is read_parquet with file_row_number).
-- No bound parameters (the text is stored and becomes part of a view).
SELECT
    CAST({{row_id_base}} + ll_rn AS BIGINT) AS row_id,
    CAST({{file_id}} AS INTEGER) AS file_id,
    CAST(ll_rn AS BIGINT) AS line,
    {{amount_expr}} AS amount,
    {{columns}}
FROM (
    SELECT *{{parts}}
    FROM (
        SELECT *, ll_file_row + 1 AS ll_rn{{fast}}
        FROM {{reader}}
    )
)

-- name: inplace_kept
-- The rows of one file the ledger view shows: {{select}} is an
-- inplace_select, {{keep}} the test a row passes when a copy would have
-- kept it (amount parsed; date parsed or blank). No bound parameters.
SELECT * FROM ({{select}}) WHERE {{keep}}

-- name: inplace_pass
-- The completeness pass, one read of the file: rows read, kept, rounded
-- and the control totals of the kept rows (net = positive + negative,
-- exact). No bound parameters. Placeholders: {{select}}, {{keep}} as in
-- inplace_kept (engine/load's pass forms of them); {{rounded}} built by
-- engine/load as for a copy. The rejected rows are listed by
-- inplace_insert_rejects, run only when the pass kept fewer rows than it
-- read: listing them here (a list() aggregate, even filtered to no rows)
-- cost most of a read of the file again.
CREATE OR REPLACE TEMP TABLE ll_inplace_pass AS
SELECT rows_read, rows_loaded, rows_rounded,
       CAST(positive AS VARCHAR) AS positive,
       CAST(negative AS VARCHAR) AS negative,
       CAST(positive + negative AS VARCHAR) AS net
FROM (
    SELECT count(*) AS rows_read,
           count(*) FILTER (WHERE ll_keep) AS rows_loaded,
           count(*) FILTER (WHERE ll_keep AND ({{rounded}})) AS rows_rounded,
           coalesce(sum(amount) FILTER (WHERE ll_keep AND amount > 0), 0) AS positive,
           coalesce(sum(amount) FILTER (WHERE ll_keep AND amount < 0), 0) AS negative
    FROM (SELECT *, {{keep}} AS ll_keep FROM ({{select}}))
);

-- name: inplace_pass_counts
-- What the pass counted.
SELECT rows_read, rows_loaded, rows_rounded, positive, negative, net
FROM ll_inplace_pass;

-- name: inplace_insert_rejects
-- Every row of the file the ledger leaves out, with its line, column,
-- value and reason, into rejects. Bound: ? = file_id, ? = the amount
-- column's name, ? = the date column's name, ? = the date reason.
-- Placeholders as in inplace_pass, and {{raw_expr}}, {{reason_expr}},
-- {{date_raw}} built by engine/load as for a copy.
INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line)
SELECT ?, line,
       CASE WHEN amount IS NULL THEN CAST(? AS VARCHAR) ELSE CAST(? AS VARCHAR) END,
       CAST(CASE WHEN amount IS NULL THEN CAST({{raw_expr}} AS VARCHAR) ELSE CAST({{date_raw}} AS VARCHAR) END AS VARCHAR),
       CASE WHEN amount IS NULL THEN {{reason_expr}} ELSE CAST(? AS VARCHAR) END,
       NULL
FROM ({{select}})
WHERE NOT ({{keep}})
ORDER BY line;

-- name: inplace_drop_pass
DROP TABLE IF EXISTS ll_inplace_pass;

-- name: inplace_insert_file
-- ? = file_id, path, size, mtime_ns, sha256, footer rows, row_id base,
-- the kept rows' select.
INSERT INTO inplace_files (file_id, path, size_bytes, mtime_ns, sha256, footer_rows, row_id_base, select_sql)
VALUES (?, ?, ?, ?, ?, ?, ?, ?);

-- name: inplace_set_mode
-- ? = file_id.
UPDATE files SET mode = 'in place' WHERE file_id = ?;

-- name: inplace_forget
-- --replace takes out an earlier file's record (? = its file_id).
DELETE FROM inplace_files WHERE file_id = ?;

-- name: inplace_next_row_base
-- The row_id base of the next file: after every row of the files so far.
SELECT coalesce(max(row_id_base + footer_rows), 0) FROM inplace_files;

-- name: inplace_selects
-- Every registered file's kept rows, in file order.
SELECT select_sql FROM inplace_files ORDER BY file_id;

-- name: inplace_view
-- The ledger as a view. Placeholder {{union}}: the files' inplace_kept
-- selects joined by UNION ALL BY NAME. No bound parameters.
CREATE OR REPLACE VIEW ledger AS {{union}};

-- name: inplace_ledger_type
-- What the ledger is: BASE TABLE (copied rows), VIEW (files in place), or
-- no row when nothing has been loaded.
SELECT table_type FROM information_schema.tables
WHERE table_catalog = current_database() AND table_schema = 'main' AND table_name = 'ledger';

-- name: inplace_table_exists
-- 1 when the workspace has files registered in place (the table exists).
SELECT count(*) FROM information_schema.tables
WHERE table_catalog = current_database() AND table_schema = 'main' AND table_name = 'inplace_files';

-- name: inplace_registered
-- Every file registered in place, as recorded.
SELECT file_id, path, size_bytes, mtime_ns, sha256 FROM inplace_files ORDER BY file_id;

-- name: inplace_touch
-- A file whose modification time changed but whose content did not:
-- ? = the new time, ? = file_id.
UPDATE inplace_files SET mtime_ns = ? WHERE file_id = ?;

-- name: verify_files
-- Every file's completeness record beside the rows the ledger holds for
-- it now (for files in place, a pass over the files' amount and date
-- columns). No bound parameters, no placeholders.
SELECT f.file_id, f.path, f.rows_read, f.rows_loaded, f.rows_rejected,
       (SELECT count(*) FROM rejects r WHERE r.file_id = f.file_id) AS rejects_stored,
       coalesce(l.n, 0) AS in_ledger
FROM files f
LEFT JOIN (SELECT file_id, count(*) AS n FROM ledger GROUP BY file_id) l ON l.file_id = f.file_id
ORDER BY f.file_id;
