-- Drill-down: the records behind a flagged bin, range, segment or
-- duplicate group. {{where}} is a predicate leadline built itself (bin
-- ranges, validated column names, the sqlguard-checked filter) whose values
-- are bound with ?; {{order}} and {{group_expr}} are validated, quoted
-- column names.

-- name: drill_summary
SELECT count(*) AS records,
       CAST(coalesce(sum(amount), 0) AS VARCHAR) AS total
FROM ledger
WHERE {{where}};

-- name: drill_records
-- Every ledger column (the canonical ones and every original column as the
-- client sent it) plus the name of the file the record came from.
WITH sel AS (
    SELECT * FROM ledger
    WHERE {{where}}
)
SELECT sel.*, f.name AS {{file_col}}
FROM sel LEFT JOIN files f ON f.file_id = sel.file_id
ORDER BY {{order}}
{{limit}};

-- name: drill_records_first
-- The first records in file order. No ORDER BY inside: the scan stops as
-- soon as LIMIT records are found (DuckDB keeps insertion order, which is
-- row_id order).
WITH sel AS (
    SELECT * FROM ledger
    WHERE {{where}}
    LIMIT ?
)
SELECT sel.*, f.name AS {{file_col}}
FROM sel LEFT JOIN files f ON f.file_id = sel.file_id
ORDER BY sel.row_id;

-- name: drill_record_ids
-- Sorted records, first step: the row_ids of the first LIMIT records in
-- the order asked, reading only the columns the predicate and the order
-- need (the second step fetches the rows: reading every column of every
-- row to sort them would cost far more).
SELECT row_id FROM ledger
WHERE {{where}}
ORDER BY {{order}}
LIMIT ?;

-- name: drill_records_by_id
-- Sorted records, second step: the rows of the row_ids found.
WITH sel AS (
    SELECT * FROM ledger
    WHERE row_id IN ({{ids}})
)
SELECT sel.*, f.name AS {{file_col}}
FROM sel LEFT JOIN files f ON f.file_id = sel.file_id
ORDER BY {{order}};

-- name: drill_groups
-- Per group: records, total amount, distinct amounts and the most repeated
-- amounts ("1847.23×312; 250.00×40"), only amounts seen at least twice.
WITH sel AS (
    SELECT {{group_expr}} AS grp, amount
    FROM ledger
    WHERE {{where}}
),
per_amount AS (
    SELECT grp, amount, count(*) AS n
    FROM sel
    GROUP BY grp, amount
),
ranked AS (
    SELECT grp, amount, n,
           row_number() OVER (PARTITION BY grp ORDER BY n DESC, abs(amount) DESC, amount DESC) AS r
    FROM per_amount
),
grouped AS (
    SELECT grp,
           sum(n) AS records,
           sum(CAST(amount AS {{wide_type}}) * n) AS total,
           count(*) AS distinct_amounts,
           string_agg(CAST(amount AS VARCHAR) || '×' || n, '; ' ORDER BY r) FILTER (WHERE r <= ? AND n > 1) AS repeated
    FROM ranked
    GROUP BY grp
)
SELECT grp,
       CAST(records AS BIGINT) AS records,
       CAST(total AS VARCHAR) AS total,
       distinct_amounts,
       coalesce(repeated, '') AS repeated,
       count(*) OVER () AS groups_total
FROM grouped
ORDER BY records DESC, abs(total) DESC, grp NULLS LAST
LIMIT ?;

-- name: drill_copy
-- Export to a file the user named: {{path}} is quoted with QuoteString,
-- {{options}} is one of leadline's own format clauses.
COPY (
{{query}}
) TO {{path}} ({{options}});

-- name: drill_export_text_amounts
-- An export to CSV or XLSX keeps each amount's exact text. {{query}} is a
-- drill statement leadline rendered itself (without its semicolon).
SELECT * REPLACE (CAST(amount AS VARCHAR) AS amount) FROM (
{{query}}
)

-- name: drill_export_groups
-- A grouped selection for export, the group column named by {{label}} (a
-- quoted identifier); {{query}} is drill_groups, rendered.
SELECT grp AS {{label}}, records, total, distinct_amounts, repeated AS repeated_amounts FROM (
{{query}}
)
