-- name: output_neutral_text
-- A text column of a CSV export with spreadsheet formulas made inert: a
-- value that begins with =, +, -, @, a tab or a carriage return gets a
-- leading single quote, unless the whole value is a plain number (OWASP
-- "CSV Injection"). output.NeutralizeText is the same rule in Go; the two
-- are tested against the same cases. {{col}} is a quoted column name.
CASE
    WHEN regexp_matches({{col}}, '^[=+\-@\t\r]')
     AND NOT regexp_matches({{col}}, '^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?$')
    THEN '''' || {{col}}
    ELSE {{col}}
END

-- name: output_copy_csv
-- The rows of a table (its header is written by leadline) to a CSV file;
-- {{path}} is quoted with QuoteString.
COPY (
{{query}}
) TO {{path}} (FORMAT csv, HEADER false);

-- name: output_copy_parquet
-- The rows of a table to a Parquet file; {{path}} is quoted with QuoteString.
COPY (
{{query}}
) TO {{path}} (FORMAT parquet, COMPRESSION zstd);
