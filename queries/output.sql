-- name: output_neutral_text
-- A text column of a CSV export with spreadsheet formulas made inert: a
-- value that begins with =, +, -, @, a tab or a carriage return gets a
-- leading single quote, unless the whole value is a plain number (OWASP
-- "CSV Injection"). output.NeutralizeText is the same rule in Go; the two
-- are tested against the same cases. The col placeholder is a quoted
-- column name.
CASE
    WHEN regexp_matches({{col}}, '^[=+\-@\t\r]')
     AND NOT regexp_matches({{col}}, '^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?$')
    THEN '''' || {{col}}
    ELSE {{col}}
END

-- name: output_copy_csv
-- The rows of a table (its header is written by leadline) to a CSV file;
-- the path is quoted with QuoteString.
COPY (
{{query}}
) TO {{path}} (FORMAT csv, HEADER false);

-- name: output_copy_parquet
-- The rows of a table to a Parquet file; the path is quoted with QuoteString.
COPY (
{{query}}
) TO {{path}} (FORMAT parquet, COMPRESSION zstd);

-- name: extract_item
-- One item of a pack extract: its records (the drill's records query)
-- under the item's number and its label (bound).
SELECT {{n}} AS ll_item_no, CAST(? AS VARCHAR) AS item, rec.*
FROM (
{{records}}
) AS rec

-- name: extract_stage
-- Every record of a pack extract, numbered in the extract's order (by item,
-- then file order), kept for the run in a temporary table so that the CSV,
-- Parquet, workbook and sample read it without selecting again. The items
-- are extract_item statements joined with UNION ALL.
CREATE OR REPLACE TEMP TABLE {{table}} AS
SELECT row_number() OVER (ORDER BY ll_item_no, row_id) - 1 AS ll_pos, *
FROM (
{{items}}
);

-- name: output_single_thread
-- The private database that writes Parquet files runs on one thread, which
-- keeps row groups, and so the file's bytes, the same on every run. No bound
-- parameters, no placeholders.
SET threads = 1;

-- name: output_query_columns
-- No rows, only the names and types of the columns a query returns.
-- Placeholder {{query}}: the query (a statement leadline built or a checked
-- pack query); its own bound parameters, if any, are passed unchanged.
SELECT * FROM (
{{query}}
) AS src LIMIT 0

-- name: output_select_columns
-- A query's rows with its columns renamed (and, for CSV, text neutralised).
-- Placeholders: {{columns}}, the select list leadline built from quoted
-- column names (src."name" AS "label", or output_neutral_text); {{query}},
-- the query whose rows are written. Bound parameters: those of the query.
SELECT {{columns}} FROM (
{{query}}
) AS src

-- name: output_source_rows
-- Every row of a table's source query, or the first few. Placeholders:
-- {{query}}, the source query; {{limit}}, empty or "LIMIT ?". Bound
-- parameters: those of the query, then the limit when there is one.
SELECT * FROM (
{{query}}
) AS src {{limit}}

-- name: output_stage_create
-- The table of text columns that a table's rows are appended to before
-- COPY writes them as Parquet. Placeholder {{column_defs}}: quoted column
-- names each followed by VARCHAR. No bound parameters.
CREATE OR REPLACE TABLE ll_out ({{column_defs}});

-- name: output_stage_rows
-- The appended rows with each column cast to its type (the query that
-- output_copy_parquet writes). Placeholder {{columns}}: the casts leadline
-- built from quoted column names and DuckDB type names. No bound parameters.
SELECT {{columns}} FROM ll_out

-- name: output_stage_drop
-- No bound parameters, no placeholders.
DROP TABLE IF EXISTS ll_out;
