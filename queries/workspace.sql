-- The workspace schema. Every table is plain DuckDB so that any DuckDB
-- client can open the workspace file and read it.

-- name: create_schema
CREATE TABLE IF NOT EXISTS meta (
    key   VARCHAR PRIMARY KEY,
    value VARCHAR NOT NULL
);
CREATE SEQUENCE IF NOT EXISTS load_seq START 1;
CREATE SEQUENCE IF NOT EXISTS file_seq START 1;
CREATE SEQUENCE IF NOT EXISTS run_seq START 1;
CREATE TABLE IF NOT EXISTS loads (
    load_id      INTEGER PRIMARY KEY,
    started_at   TIMESTAMP NOT NULL,
    finished_at  TIMESTAMP NOT NULL,
    tool_version VARCHAR NOT NULL,
    options      VARCHAR NOT NULL  -- JSON: the load options as given
);
CREATE TABLE IF NOT EXISTS files (
    file_id       INTEGER PRIMARY KEY,
    load_id       INTEGER NOT NULL,
    path          VARCHAR NOT NULL,   -- as given on the command line, made absolute
    name          VARCHAR NOT NULL,   -- base name
    format        VARCHAR NOT NULL,   -- csv or parquet
    size_bytes    BIGINT NOT NULL,
    sha256        VARCHAR NOT NULL,
    rows_read     BIGINT NOT NULL,
    rows_loaded   BIGINT NOT NULL,
    rows_rejected BIGINT NOT NULL,
    mapping       VARCHAR NOT NULL,   -- JSON: canonical column -> original column
    dialect       VARCHAR NOT NULL,   -- JSON: delimiter, encoding, decimal comma, scale...
    loaded_at     TIMESTAMP NOT NULL
);
CREATE TABLE IF NOT EXISTS rejects (
    file_id     INTEGER NOT NULL,
    line        BIGINT,               -- record number in the file, header = 1; NULL when unknown
    column_name VARCHAR,
    raw_value   VARCHAR,
    reason      VARCHAR NOT NULL,
    raw_line    VARCHAR
);
-- Control totals of each loaded file per currency (currency '' when the
-- file names none); for a debit/credit extract also each side's own count
-- and total and the rows with both sides filled. Never summed across
-- currencies.
CREATE TABLE IF NOT EXISTS file_totals (
    file_id     INTEGER NOT NULL,
    currency    VARCHAR NOT NULL,
    rows        BIGINT NOT NULL,
    positive    VARCHAR NOT NULL,     -- exact decimals as text
    negative    VARCHAR NOT NULL,
    net         VARCHAR NOT NULL,
    debit_rows  BIGINT,               -- NULL unless the file maps --debit/--credit
    debit       VARCHAR,
    credit_rows BIGINT,
    credit      VARCHAR,
    both_sides  BIGINT
);
-- The loaded rows of a debit/credit extract with both sides filled
-- (amount = debit - credit, netted but listed here).
CREATE TABLE IF NOT EXISTS both_sides (
    file_id INTEGER NOT NULL,
    line    BIGINT NOT NULL,
    row_id  BIGINT NOT NULL
);
CREATE TABLE IF NOT EXISTS runs (
    run_id      INTEGER PRIMARY KEY,
    kind        VARCHAR NOT NULL,     -- scan, segments, limits, ranges, duplicates, drill, pack...
    started_at  TIMESTAMP NOT NULL,
    finished_at TIMESTAMP NOT NULL,
    tool_version VARCHAR NOT NULL,
    params      VARCHAR NOT NULL,     -- JSON
    result      VARCHAR NOT NULL      -- JSON, the same document --format json prints
);

-- name: create_ledger
-- {{amount_type}} is DECIMAL(p,s), fixed by the first load of the workspace.
CREATE TABLE IF NOT EXISTS ledger (
    row_id       BIGINT NOT NULL,
    file_id      INTEGER NOT NULL,
    line         BIGINT NOT NULL,
    amount       {{amount_type}},     -- never NULL once a load commits: unparseable rows move to rejects
    entity       VARCHAR,
    account      VARCHAR,
    counterparty VARCHAR,
    doc_id       VARCHAR,
    line_id      VARCHAR,
    posted       DATE,
    user_id      VARCHAR,
    "source"     VARCHAR,
    descr        VARCHAR,
    currency     VARCHAR              -- mapped, or the marker of the amount text (EUR 12.00, $12.00); NULL when neither
);
-- A workspace created before the currency column gets it.
ALTER TABLE ledger ADD COLUMN IF NOT EXISTS currency VARCHAR;

-- name: ledger_columns
SELECT column_name, data_type
FROM information_schema.columns
WHERE table_name = 'ledger' AND table_schema = 'main'
ORDER BY ordinal_position;

-- name: meta_get
SELECT value FROM meta WHERE key = ?;

-- name: meta_set
INSERT OR REPLACE INTO meta (key, value) VALUES (?, ?);

-- name: file_by_sha
SELECT file_id, path FROM files WHERE sha256 = ?;

-- name: next_run_id
SELECT nextval('run_seq');

-- name: insert_run
INSERT INTO runs (run_id, kind, started_at, finished_at, tool_version, params, result)
VALUES (?, ?, ?, ?, ?, ?, ?);

-- name: describe_table
SELECT column_name, data_type, is_nullable
FROM information_schema.columns
WHERE table_schema = 'main' AND lower(table_name) = ?
ORDER BY ordinal_position;

-- name: workspace_tables
-- Every table and view of the opened database file (not of the system
-- catalogs): what decides whether an existing file is a leadline workspace.
SELECT table_name
FROM information_schema.tables
WHERE table_catalog = current_database()
  AND table_schema NOT IN ('information_schema', 'pg_catalog')
ORDER BY table_name;

-- name: input_paths
-- The loaded input files: an output written by leadline must never replace one.
SELECT DISTINCT path FROM files ORDER BY path;

-- name: workspace_marker
-- The mark that makes a database file a leadline workspace: the comment on
-- its meta table (a comment, so that the mark adds no row to any table).
SELECT coalesce(comment, '') FROM duckdb_tables()
WHERE database_name = current_database() AND schema_name = 'main' AND table_name = 'meta';

-- name: workspace_mark
COMMENT ON TABLE meta IS 'leadline workspace';

-- name: workspace_progress
-- DuckDB tracks query progress only with its progress bar on; its own
-- drawing stays off (it would write to standard output) and leadline draws
-- its bar on standard error. No bound parameters, no placeholders.
SET enable_progress_bar = true;
SET enable_progress_bar_print = false;
SET progress_bar_time = 500;

-- name: workspace_memory_limit
-- No bound parameters: DuckDB takes no bound value in SET. Placeholder
-- {{memory_limit}}: the limit as given (e.g. '2GB'), quoted with
-- queries.QuoteString; DuckDB checks its form.
SET memory_limit = {{memory_limit}};

-- name: workspace_threads
-- No bound parameters: DuckDB takes no bound value in SET. Placeholder
-- {{threads}}: a positive whole number written by leadline (%d).
SET threads = {{threads}};

-- name: workspace_temp_directory
-- No bound parameters: DuckDB takes no bound value in SET. Placeholder
-- {{temp_directory}}: the directory, quoted with queries.QuoteString.
SET temp_directory = {{temp_directory}};

-- name: ledger_exists
-- Whether anything has been loaded: 1 when the ledger table exists, else 0.
-- No bound parameters, no placeholders.
SELECT count(*) FROM information_schema.tables WHERE table_name = 'ledger' AND table_schema = 'main';

-- name: duckdb_version
-- The embedded DuckDB's version. No bound parameters, no placeholders.
SELECT version();
