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
-- Rows whose amount did not parse, with the reason: ? = the amount's
-- column name, ? = file_id.
INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line)
SELECT file_id, line, ?, {{raw_expr}}, {{reason_expr}}, NULL
FROM ledger
WHERE file_id = ? AND amount IS NULL;

-- name: load_reject_dates
-- Rows whose posting date did not parse: ? = the date's column name,
-- ? = the reason, ? = file_id.
INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line)
SELECT file_id, line, ?, {{raw_expr}}, ?, NULL
FROM ledger
WHERE file_id = ? AND amount IS NOT NULL AND posted IS NULL
  AND nullif(trim(CAST({{raw_expr}} AS VARCHAR)), '') IS NOT NULL;

-- name: load_delete_rejected
-- The rows just moved to rejects leave the ledger (? = file_id).
DELETE FROM ledger
WHERE file_id = ?
  AND (amount IS NULL OR (posted IS NULL AND nullif(trim(CAST({{raw_expr}} AS VARCHAR)), '') IS NOT NULL));

-- name: load_delete_rejected_no_date
-- The same without a posting date column (? = file_id).
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
-- Rows of one file (? = file_id) the reader gave, and the last line.
SELECT count(*) AS rows_in_ledger, coalesce(max(line), 0) FROM ledger WHERE file_id = ?;

-- name: load_rejected_count
-- ? = file_id.
SELECT count(*) FROM rejects WHERE file_id = ?;

-- name: load_next_row_id
SELECT coalesce(max(row_id), 0) FROM ledger;

-- name: load_insert_file
-- The file's completeness record, bound in the order of the columns.
INSERT INTO files (file_id, load_id, path, name, format, size_bytes, sha256,
                   rows_read, rows_loaded, rows_rejected, mapping, dialect, loaded_at)
VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?);

-- name: load_insert_load
-- ? = load_id, started, finished, tool version, options as JSON.
INSERT INTO loads (load_id, started_at, finished_at, tool_version, options)
VALUES (?, ?, ?, ?, ?);

-- name: load_forget_ledger
-- --replace takes out an earlier file's rows, rejects and record
-- (? = its file_id), in the load's transaction.
DELETE FROM ledger WHERE file_id = ?;

-- name: load_forget_rejects
DELETE FROM rejects WHERE file_id = ?;

-- name: load_forget_file
DELETE FROM files WHERE file_id = ?;

-- name: entity_totals
-- Control totals per entity and currency over the whole workspace, exact
-- decimals as text. {{currency}} is the ledger's currency column, or NULL
-- for a workspace made before it (engine/load.CurrencyColumn).
SELECT coalesce(entity, '') AS entity,
       coalesce({{currency}}, '') AS currency,
       count(*) AS rows,
       CAST(coalesce(sum(amount) FILTER (WHERE amount > 0), 0) AS VARCHAR) AS positive,
       CAST(coalesce(sum(amount) FILTER (WHERE amount < 0), 0) AS VARCHAR) AS negative,
       CAST(coalesce(sum(amount), 0) AS VARCHAR) AS net
FROM ledger
GROUP BY ALL
ORDER BY entity, currency;

-- name: load_separator_evidence
-- What the amount texts of one file say about its decimal mark, by kind
-- (see engine/load/separators.go): how many, the first record holding one
-- and its text; and the same for those of them that a decimal reading
-- would round: the last ? digits (3 minus the scale, at least 0) are not
-- all zero, bound twice. {{texts}} selects (pos, text). Only digits and
-- the two marks are kept (spaces, signs and currencies dropped); texts
-- with digits in more than one run (12,3x4, and exponents: 1.5E+03) say
-- nothing.
--
-- The common shape, one point followed by one or two digits at the end
-- (1234.56), is told without a regular expression: it is most rows, and
-- the expression would cost about as much as reading the file.
WITH t AS (
    SELECT pos, text, strpos(text, '.') AS p
    FROM ({{texts}})
    WHERE contains(text, '.') OR contains(text, ',')
), s AS (
    SELECT pos, text, CASE
        WHEN NOT contains(text, ',') AND length(text) - p IN (1, 2) THEN '0.5'
        ELSE regexp_replace(regexp_extract(text, '^[^0-9]*?([0-9.,][0-9.,'' \x{00A0}\x{202F}]*)[^0-9]*$', 1), '[^0-9.,]', '', 'g')
        END AS s
    FROM t
), k AS (
    SELECT pos, text, s, CASE
        WHEN contains(s, '.') AND contains(s, ',') THEN
            CASE WHEN strpos(reverse(s), '.') < strpos(reverse(s), ',') THEN 'point' ELSE 'comma' END
        WHEN regexp_full_match(s, '[1-9][0-9]{0,2}\.[0-9]{3}') THEN 'ambiguous_point'
        WHEN regexp_full_match(s, '[1-9][0-9]{0,2},[0-9]{3}') THEN 'ambiguous_comma'
        WHEN length(s) - length(replace(s, '.', '')) > 1 THEN 'comma'
        WHEN length(s) - length(replace(s, ',', '')) > 1 THEN 'point'
        WHEN contains(s, '.') THEN 'point'
        WHEN contains(s, ',') THEN 'comma'
        END AS kind
    FROM s
)
SELECT kind, count(*), min(pos), arg_min(text, pos),
       count(*) FILTER (WHERE right(s, ?) <> repeat('0', ?)),
       coalesce(min(pos) FILTER (WHERE right(s, ?) <> repeat('0', ?)), 0),
       coalesce(arg_min(text, pos) FILTER (WHERE right(s, ?) <> repeat('0', ?)), '')
FROM k
WHERE kind IS NOT NULL
GROUP BY kind;

-- name: load_rounded_count
-- Loaded rows of one file (? = file_id) whose amount text had more
-- decimal places than the scale; {{test}} is built by engine/load from
-- the stored text columns of the amount.
SELECT count(*) FROM ledger WHERE file_id = ? AND ({{test}});

-- name: load_file_by_path
-- The latest earlier load of a path (? = the absolute path).
SELECT file_id, load_id, sha256 FROM files WHERE path = ? ORDER BY file_id DESC LIMIT 1;

-- name: load_files_to_replace
-- Files that --replace takes out: the same content ($1 = SHA-256) or the
-- same path ($2 = the absolute path); whether each had the same content.
SELECT file_id, sha256 = $1 FROM files WHERE sha256 = $1 OR path = $2 ORDER BY file_id;

-- name: load_time_zone_known
-- Whether ? names a time zone DuckDB knows.
SELECT count(*) > 0 FROM pg_timezone_names() WHERE name = ?;

-- name: load_input_totals
-- What every load of the workspace read, loaded and rejected.
SELECT count(*), coalesce(sum(rows_read), 0), coalesce(sum(rows_loaded), 0), coalesce(sum(rows_rejected), 0) FROM files;

-- name: load_next_load_id
SELECT nextval('load_seq');

-- name: load_next_file_id
SELECT nextval('file_seq');

-- name: load_drop_new_ledger
-- The ledger a load has just created, still empty, before it is created
-- again with every column of its files (see widenNewLedger).
DROP TABLE ledger;

-- name: load_describe_parquet
-- The columns and types of a Parquet file; {{path}} is the quoted,
-- glob-escaped path.
DESCRIBE SELECT * FROM read_parquet({{path}});

-- name: load_threads
SELECT CAST(current_setting('threads') AS INTEGER);

-- name: load_insertion_order
-- {{keep}} is true or false, decided by engine/load.
SET preserve_insertion_order = {{keep}};

-- name: load_loaded_count
-- Rows of one file (? = file_id) in the ledger.
SELECT count(*) FROM ledger WHERE file_id = ?;

-- name: load_file_sums
-- Control totals of one file (? = file_id), exact decimals as text.
SELECT CAST(coalesce(sum(amount) FILTER (WHERE amount > 0), 0) AS VARCHAR),
       CAST(coalesce(sum(amount) FILTER (WHERE amount < 0), 0) AS VARCHAR),
       CAST(coalesce(sum(amount), 0) AS VARCHAR)
FROM ledger WHERE file_id = ?;

-- name: load_stage_first
-- The first rowid of a stage table.
SELECT coalesce(min(rowid), 0) FROM {{stage}};

-- name: load_drop_temp
-- A stage or reader-rejects table of the load.
DROP TABLE IF EXISTS {{table}};

-- name: load_insert_structural_reject
-- A record the CSV reader could not take: file_id, line, the columns it
-- names, the reason, the record's text as the reader kept it.
INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line) VALUES (?, ?, ?, NULL, ?, ?);

-- name: load_renumber_lines
-- Good rows after the i-th rejected record move down by i: {{ranges}} are
-- (lo, hi, i) rows built by engine/load, lines of good rows (less the
-- header) in (lo, hi]; ? = file_id.
UPDATE ledger SET line = ledger.line + r.j
FROM (VALUES {{ranges}}) AS r(lo, hi, j)
WHERE ledger.file_id = ? AND ledger.line - 1 > r.lo AND ledger.line - 1 <= r.hi;

-- name: load_add_column
-- A ledger column for an original column, kept as text.
ALTER TABLE ledger ADD COLUMN {{column}} VARCHAR;

-- name: load_file_reasons
-- Rejected rows of one file (? = file_id) by reason, with the first line.
SELECT reason, count(*), min(line) FROM rejects WHERE file_id = ? GROUP BY reason ORDER BY count(*) DESC, reason;

-- name: load_rejected_lines
-- The lines of the records the CSV reader rejected while staging.
SELECT DISTINCT line FROM {{rejects_table}} ORDER BY line;

-- name: load_sheet_rejects
-- Sheet rows the workbook reader refused (an empty row inside the table,
-- a formula without a cached value, a value in a column with no header):
-- ? = file_id; {{values}} = (line, column, raw value, reason) tuples that
-- leadline built and quoted itself.
INSERT INTO rejects (file_id, line, column_name, raw_value, reason, raw_line)
SELECT ?, v.line, v.col, v.raw, v.reason, NULL
FROM (VALUES {{values}}) AS v(line, col, raw, reason);

-- name: load_sheet_rejects_delete
-- Those rows leave the ledger: ? = file_id; {{lines}} = their line numbers.
DELETE FROM ledger WHERE file_id = ? AND line IN ({{lines}});
-- name: load_currency_markers
-- What the amount texts of one file say about their currency: texts with a
-- marker (EUR 12.00, 12.00 USD, € 12,00) against texts with digits and
-- none, each with its count, first record and text, and the codes seen.
-- {{texts}} selects (pos, text). A text of digits, marks, signs and
-- spaces only has no marker, told without the grammar's expression (most
-- rows); texts that are no amount count on neither side, and nor does an
-- unmarked zero (the empty side of a debit/credit row written 0.00): it
-- adds nothing to any currency's total.
WITH m AS (
    SELECT pos, text, CASE
        WHEN NOT regexp_matches(text, '[^0-9.,'' \t+-]') THEN CASE WHEN regexp_matches(text, '[0-9]') THEN '' END
        ELSE ll_amount_currency(ll_amount_parts(text))
        END AS cur
    FROM ({{texts}})
    WHERE text IS NOT NULL
), c AS (
    SELECT pos, text, CASE WHEN cur = '' AND NOT regexp_matches(text, '[1-9]') THEN NULL ELSE cur END AS cur
    FROM m
)
SELECT count(*) FILTER (WHERE cur <> ''),
       coalesce(min(pos) FILTER (WHERE cur <> ''), 0),
       coalesce(arg_min(text, pos) FILTER (WHERE cur <> ''), ''),
       count(*) FILTER (WHERE cur = ''),
       coalesce(min(pos) FILTER (WHERE cur = ''), 0),
       coalesce(arg_min(text, pos) FILTER (WHERE cur = ''), ''),
       coalesce(string_agg(DISTINCT cur, ', ' ORDER BY cur) FILTER (WHERE cur <> ''), '')
FROM c;

-- name: load_currency_totals
-- Control totals of one file (? = file_id) per currency ('' for none),
-- exact decimals as text.
SELECT coalesce(currency, '') AS cur, count(*),
       CAST(coalesce(sum(amount) FILTER (WHERE amount > 0), 0) AS VARCHAR),
       CAST(coalesce(sum(amount) FILTER (WHERE amount < 0), 0) AS VARCHAR),
       CAST(coalesce(sum(amount), 0) AS VARCHAR)
FROM ledger WHERE file_id = ?
GROUP BY cur ORDER BY cur;

-- name: load_debit_credit_totals
-- Each side of a debit/credit extract on its own, per currency, over the
-- loaded rows of one file (? = file_id): the rows whose debit (credit) is
-- neither blank nor zero and their total, the rows with both, and the net
-- loaded. {{debit}} and {{credit}} are the sides' values, built by
-- engine/load from the stored text columns.
SELECT cur,
       count(*) FILTER (WHERE d <> 0), CAST(coalesce(sum(d), 0) AS VARCHAR),
       count(*) FILTER (WHERE c <> 0), CAST(coalesce(sum(c), 0) AS VARCHAR),
       count(*) FILTER (WHERE d <> 0 AND c <> 0),
       CAST(coalesce(sum(amount), 0) AS VARCHAR)
FROM (
    SELECT coalesce(currency, '') AS cur, amount, coalesce({{debit}}, 0) AS d, coalesce({{credit}}, 0) AS c
    FROM ledger WHERE file_id = ?
)
GROUP BY cur ORDER BY cur;

-- name: load_insert_both_sides
-- The rows of one file (? = file_id) with both sides filled, kept for
-- drill (see load_debit_credit_totals for {{debit}} and {{credit}}).
INSERT INTO both_sides (file_id, line, row_id)
SELECT file_id, line, row_id FROM ledger
WHERE file_id = ? AND coalesce({{debit}}, 0) <> 0 AND coalesce({{credit}}, 0) <> 0;

-- name: load_both_sides_first
-- The first lines of one file (? = file_id) with both sides filled
-- (? = how many).
SELECT line FROM both_sides WHERE file_id = ? ORDER BY line LIMIT ?;

-- name: load_insert_file_totals
-- One file's totals in one currency, bound in the order of the columns.
INSERT INTO file_totals (file_id, currency, rows, positive, negative, net,
                         debit_rows, debit, credit_rows, credit, both_sides)
VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?);

-- name: load_forget_file_totals
-- --replace takes out an earlier file's totals (? = its file_id).
DELETE FROM file_totals WHERE file_id = ?;

-- name: load_forget_both_sides
DELETE FROM both_sides WHERE file_id = ?;

-- name: file_totals_all
-- Every file's totals per currency, for the report and packs.
SELECT file_id, currency, rows, positive, negative, net,
       debit_rows, debit, credit_rows, credit, both_sides
FROM file_totals ORDER BY file_id, currency;

-- name: workspace_table_exists
-- Whether the workspace has a table named ? (a workspace made before the
-- table was added, opened read-only, has not).
SELECT count(*) > 0 FROM information_schema.tables WHERE table_schema = 'main' AND table_name = ?;

-- name: ledger_currencies
-- The currencies of the ledger ('' for rows without one), their rows and
-- control totals, exact decimals as text; {{currency}} as in entity_totals.
SELECT coalesce({{currency}}, '') AS cur, count(*),
       CAST(coalesce(sum(amount) FILTER (WHERE amount > 0), 0) AS VARCHAR),
       CAST(coalesce(sum(amount) FILTER (WHERE amount < 0), 0) AS VARCHAR),
       CAST(coalesce(sum(amount), 0) AS VARCHAR)
FROM ledger GROUP BY cur ORDER BY cur;
