-- name: bench_first_two
-- The floor the battery is measured against: one hand-written first-two
-- digits GROUP BY over the positive amounts of at least 10, digits taken
-- from the exact decimal (the amount in cents as an integer, cut to its
-- first two digits). Returns the number of amounts and of bins.
SELECT sum(n), count(*) FROM (
    SELECT CAST(CAST(amount * 100 AS BIGINT) // CAST(10 ** (floor(log10(CAST(amount * 100 AS BIGINT))) - 1) AS BIGINT) AS INTEGER) AS d, count(*) AS n
    FROM ledger
    WHERE amount >= 10
    GROUP BY d
);

-- name: bench_read_csv
-- DuckDB's floor for reading a CSV file. No bound parameters: DuckDB takes
-- none as a table-function argument here. Placeholder {{path}}: the file,
-- quoted with QuoteString.
SELECT count(*), sum(amount) FROM read_csv({{path}});

-- name: bench_read_parquet
-- DuckDB's floor for reading a Parquet file. Placeholder {{path}}: the file,
-- quoted with QuoteString. No bound parameters.
SELECT count(*), sum(amount) FROM read_parquet({{path}});

-- name: bench_copy_table
-- DuckDB's own copy of every column into the workspace file: the floor of
-- any load. Placeholder {{reader}}: read_csv or read_parquet of the file,
-- its path quoted with QuoteString. No bound parameters.
CREATE TABLE bench_copy AS SELECT * FROM {{reader}};

-- name: bench_copy_totals
-- Rows and total of the copied table. No bound parameters, no placeholders.
SELECT count(*), sum(CAST(amount AS DECIMAL(18,2))) FROM bench_copy;

-- name: bench_ledger_rows
-- Rows in the ledger. No bound parameters, no placeholders.
SELECT count(*) FROM ledger;
