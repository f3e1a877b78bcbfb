-- Follow-up of exported records: the columns every export carries empty,
-- and the tables that keep what the engagement team wrote in them when a
-- returned file is read back (engine/followup).

-- name: followup_with_columns
-- An export's records with the empty follow-up columns after them.
-- {{query}} is a records statement leadline rendered itself (without its
-- semicolon); its order is kept. Bound parameters: those of the query.
SELECT rec.*,
    CAST(NULL AS VARCHAR) AS followup_status,
    CAST(NULL AS VARCHAR) AS followup_note,
    CAST(NULL AS VARCHAR) AS followup_reviewer,
    CAST(NULL AS VARCHAR) AS followup_reviewed_on
FROM (
{{query}}
) AS rec

-- name: followup_schema
-- The follow-up tables, made when a returned file is first read. One read
-- per returned file: rows_read = rows_stored + rows_refused.
CREATE SEQUENCE IF NOT EXISTS followup_read_seq START 1;
CREATE TABLE IF NOT EXISTS followup_reads (
    read_id      INTEGER PRIMARY KEY,
    read_at      TIMESTAMP NOT NULL,
    path         VARCHAR NOT NULL,   -- the returned file, made absolute
    sheet        VARCHAR,            -- the sheet read, for a workbook
    sha256       VARCHAR NOT NULL,
    rows_read    BIGINT NOT NULL,
    rows_stored  BIGINT NOT NULL,
    rows_refused BIGINT NOT NULL
);
-- Every returned row that matched one ledger record, with what the team
-- wrote (blank follow-up columns are stored too, as blanks).
CREATE TABLE IF NOT EXISTS followup (
    read_id     INTEGER NOT NULL,
    source_line BIGINT NOT NULL,     -- the row's line in the returned file (header = 1), or its sheet row
    row_id      BIGINT NOT NULL,
    file_id     INTEGER NOT NULL,
    line        BIGINT NOT NULL,
    item        VARCHAR,             -- the extract's item, when the file has one
    status      VARCHAR,             -- lower case, trimmed; NULL when left blank
    note        VARCHAR,
    reviewer    VARCHAR,
    reviewed_on VARCHAR              -- as written
);
-- Every returned row that matched no single ledger record, and why.
CREATE TABLE IF NOT EXISTS followup_refused (
    read_id     INTEGER NOT NULL,
    source_line BIGINT NOT NULL,
    file_name   VARCHAR,
    line        VARCHAR,
    reason      VARCHAR NOT NULL
);

-- name: followup_next_read
-- The next read id. No bound parameters.
SELECT nextval('followup_read_seq');

-- name: followup_stage_create
-- The rows of one returned file as read, before they are matched. No
-- bound parameters.
CREATE OR REPLACE TEMP TABLE ll_followup_stage (
    source_line BIGINT,
    file_name   VARCHAR,
    line        VARCHAR,
    item        VARCHAR,
    status      VARCHAR,
    note        VARCHAR,
    reviewer    VARCHAR,
    reviewed_on VARCHAR
);

-- name: followup_stage_insert
-- {{values}}: one "(?, ?, ?, ?, ?, ?, ?, ?)" per row, joined by commas.
-- Bound parameters: the rows' values in the stage's column order.
INSERT INTO ll_followup_stage VALUES {{values}};

-- name: followup_match
-- Each staged row with the ledger records it names by file name and line:
-- how many loaded files of that name hold a record at that line, and the
-- record when exactly one does. No bound parameters.
CREATE OR REPLACE TEMP TABLE ll_followup_matched AS
SELECT s.*,
    TRY_CAST(replace(replace(trim(s.line), ',', ''), ' ', '') AS BIGINT) AS line_no,
    (SELECT count(*) FROM files f WHERE f.name = s.file_name) AS files_named,
    m.matches, m.row_id, m.file_id
FROM ll_followup_stage s
LEFT JOIN LATERAL (
    SELECT count(*) AS matches, min(l.row_id) AS row_id, min(l.file_id) AS file_id
    FROM ledger l JOIN files f ON f.file_id = l.file_id
    WHERE f.name = s.file_name
      AND l.line = TRY_CAST(replace(replace(trim(s.line), ',', ''), ' ', '') AS BIGINT)
) m ON true;

-- name: followup_store
-- The matched rows of one read into followup. Bound parameter: the read id.
INSERT INTO followup
SELECT ?, source_line, row_id, file_id, line_no, nullif(trim(item), ''),
    nullif(lower(trim(status)), ''), nullif(trim(note), ''), nullif(trim(reviewer), ''), nullif(trim(reviewed_on), '')
FROM ll_followup_matched
WHERE matches = 1
ORDER BY source_line;

-- name: followup_refuse
-- The rows of one read that name no single record, with the reason. Bound
-- parameter: the read id.
INSERT INTO followup_refused
SELECT ?, source_line, file_name, line,
    CASE
        WHEN coalesce(trim(file_name), '') = '' THEN 'no file name (the file_name column is blank)'
        WHEN line_no IS NULL THEN 'the line is not a whole number: "' || coalesce(line, '') || '"'
        WHEN files_named = 0 THEN 'no loaded file is named "' || file_name || '"'
        WHEN matches = 0 THEN 'file "' || file_name || '" has no loaded record at line ' || CAST(line_no AS VARCHAR)
        ELSE 'file name "' || file_name || '" and line ' || CAST(line_no AS VARCHAR) || ' name ' || CAST(matches AS VARCHAR) || ' records (several loaded files share the name)'
    END
FROM ll_followup_matched
WHERE coalesce(matches, 0) <> 1
ORDER BY source_line;

-- name: followup_counts
-- Rows stored, refused, and stored with a status or note entered, by one
-- read. Bound parameters: the read id, three times.
SELECT (SELECT count(*) FROM followup WHERE read_id = ?),
       (SELECT count(*) FROM followup_refused WHERE read_id = ?),
       (SELECT count(*) FROM followup WHERE read_id = ? AND (status IS NOT NULL OR note IS NOT NULL));

-- name: followup_refused_first
-- The first refused rows of one read. Bound parameters: the read id, the
-- most rows.
SELECT source_line, reason FROM followup_refused WHERE read_id = ? ORDER BY source_line LIMIT ?;

-- name: followup_insert_read
-- One returned file read. Bound parameters: read id, time, path, sheet
-- (NULL for a CSV), SHA-256, rows read, stored, refused.
INSERT INTO followup_reads VALUES (?, ?, ?, ?, ?, ?, ?, ?);

-- name: followup_has_tables
-- Whether the workspace holds the follow-up tables (a workspace where no
-- returned file was read has none).
SELECT count(*) FROM information_schema.tables
WHERE table_schema = 'main' AND table_name IN ('followup', 'followup_reads', 'followup_refused');

-- name: followup_latest
-- Per ledger record returned, its latest follow-up: the latest row whose
-- status or note is filled, else the latest row (a record returned blank).
-- With the record's file name, line and amount as text. No bound parameters.
WITH ranked AS (
    SELECT fu.*, row_number() OVER (
        PARTITION BY fu.file_id, fu.line
        ORDER BY (fu.status IS NOT NULL OR fu.note IS NOT NULL) DESC, fu.read_id DESC, fu.source_line DESC) AS k
    FROM followup fu
)
SELECT r.item, f.name AS file_name, r.line, CAST(l.amount AS VARCHAR) AS amount,
    r.status, r.note, r.reviewer, r.reviewed_on, rd.path AS returned_file, r.source_line AS returned_line
FROM ranked r
JOIN files f ON f.file_id = r.file_id
LEFT JOIN ledger l ON l.row_id = r.row_id
JOIN followup_reads rd ON rd.read_id = r.read_id
WHERE r.k = 1
ORDER BY r.item NULLS LAST, f.name, r.line;

-- name: followup_reads_list
-- Every returned file read, oldest first. No bound parameters.
SELECT read_id, read_at, path, coalesce(sheet, ''), sha256, rows_read, rows_stored, rows_refused
FROM followup_reads ORDER BY read_id;

-- name: followup_refused_list
-- Every refused row with its returned file. Bound parameter: the most rows.
SELECT rd.path, x.source_line, coalesce(x.file_name, ''), coalesce(x.line, ''), x.reason
FROM followup_refused x JOIN followup_reads rd ON rd.read_id = x.read_id
ORDER BY x.read_id, x.source_line
LIMIT ?;

-- name: followup_statuses
-- The distinct statuses one read stored. Bound parameter: the read id.
SELECT DISTINCT status FROM followup WHERE read_id = ? AND status IS NOT NULL ORDER BY status;
