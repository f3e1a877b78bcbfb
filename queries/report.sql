-- The report's reads of the workspace. Read-only; values are bound.
-- (Kept beside the package that runs them; the loader is in sql.go.)

-- name: report_files
-- Every loaded file with its load-log counts and the control totals of its
-- rows in the ledger now, exact decimals as text.
SELECT f.file_id, f.load_id, f.path, f.name, f.format, f.size_bytes, f.sha256,
       f.rows_read, f.rows_loaded, f.rows_rejected, f.loaded_at,
       count(l.amount) AS in_ledger,
       CAST(coalesce(sum(l.amount) FILTER (WHERE l.amount > 0), 0) AS VARCHAR) AS positive,
       CAST(coalesce(sum(l.amount) FILTER (WHERE l.amount < 0), 0) AS VARCHAR) AS negative,
       CAST(coalesce(sum(l.amount), 0) AS VARCHAR) AS net
FROM files f LEFT JOIN ledger l ON l.file_id = f.file_id
GROUP BY ALL
ORDER BY f.file_id;

-- name: report_files_no_ledger
SELECT f.file_id, f.load_id, f.path, f.name, f.format, f.size_bytes, f.sha256,
       f.rows_read, f.rows_loaded, f.rows_rejected, f.loaded_at,
       CAST(0 AS BIGINT) AS in_ledger, '0' AS positive, '0' AS negative, '0' AS net
FROM files f
ORDER BY f.file_id;

-- name: report_reject_reasons
SELECT r.file_id, coalesce(f.name, ''), r.reason, count(*) AS rows, coalesce(min(r.line), 0) AS first_line
FROM rejects r LEFT JOIN files f ON f.file_id = r.file_id
GROUP BY ALL
ORDER BY r.file_id, rows DESC, r.reason;

-- name: report_reject_samples
-- The first rejected rows of each file, as examples.
SELECT coalesce(f.name, ''), coalesce(r.line, 0), coalesce(r.column_name, ''),
       coalesce(r.raw_value, ''), r.reason
FROM (
    SELECT *, row_number() OVER (PARTITION BY file_id ORDER BY line NULLS LAST) AS k
    FROM rejects
) r LEFT JOIN files f ON f.file_id = r.file_id
WHERE r.k <= ?
ORDER BY r.file_id, r.line NULLS LAST;

-- name: report_loads
SELECT load_id, started_at, finished_at, tool_version FROM loads ORDER BY load_id;

-- name: report_ledger_rows
SELECT count(*) FROM ledger;

-- name: report_run_list
-- Every run with its parameters (the report chooses its set from them).
SELECT run_id, kind, started_at, finished_at, tool_version, params
FROM runs
ORDER BY run_id;

-- name: report_run_docs
SELECT params, result FROM runs WHERE run_id = ?;

-- name: report_latest_load
SELECT max(finished_at) FROM loads;
