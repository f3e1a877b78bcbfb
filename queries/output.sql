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
