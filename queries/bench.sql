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

-- name: bench_year_amount
-- The amount of generated row x of the billion-row benchmark (seed s):
-- 10^(5u) rounded to cents, u uniform on [0, 1) from a hash of the row
-- number and the seed, so amounts run from 1.00 to 99,999.99 and their
-- leading digits follow Benford's law (a log-uniform variable over whole
-- decades does). Exact: the cents are fixed here, as DECIMAL(18,2). A
-- temporary macro of the generating connection. No bound parameters, no
-- placeholders.
CREATE OR REPLACE TEMP MACRO ll_year_amount(x, s) AS
    CAST(round(pow(10, 5.0 * (CAST(hash(x, s) >> 11 AS DOUBLE) / 9007199254740992.0)), 2) AS DECIMAL(18,2));

-- name: bench_year_types
-- The generator's low-cardinality columns as ENUM types: DuckDB writes an
-- ENUM column to Parquet as dictionary-encoded text (read back as
-- VARCHAR) without building a dictionary of its own, several times faster
-- than plain text. No bound parameters, no placeholders.
CREATE TYPE ll_year_entity AS ENUM (SELECT 'E' || CAST(range AS VARCHAR) FROM range(1, 9));
CREATE TYPE ll_year_account AS ENUM (SELECT CAST(range AS VARCHAR) FROM range(4000, 4400));
CREATE TYPE ll_year_counterparty AS ENUM (SELECT CAST(range AS VARCHAR) FROM range(700000, 720000));
CREATE TYPE ll_year_user AS ENUM (SELECT CAST(range AS VARCHAR) FROM range(100, 160));
CREATE TYPE ll_year_source AS ENUM ('GL', 'AP', 'AR', 'PAY', 'INV', 'FA');
CREATE TYPE ll_year_descr AS ENUM ('invoice', 'payment', 'accrual', 'reversal', 'transfer', 'fee', 'payroll', 'depreciation');

-- name: bench_year_generate
-- One Parquet file of the billion-row benchmark, written by DuckDB from
-- range(): rows {{first}} up to {{last}} (exclusive) of a ledger of
-- documents of four lines (document = row / 4). Lines 1 to 3 of a
-- document carry ll_year_amount of their row, line 4 the negated sum of
-- the three, so every complete document balances. Every value is a hash
-- of the row or document number and the seed, so a file is the same
-- whatever the total: the first files of a billion rows are those of a
-- hundred million. The columns are those of the fixtures' Parquet ledger
-- (doc_id, line_id, entity, account, counterparty, posted, user_id,
-- source, descr, amount DECIMAL(18,2)), which load maps by their names;
-- doc_id is written as a BIGINT (text doc_ids took half the generation
-- time), which the ledger reads as text like any typed column.
-- Placeholders {{first}}, {{last}}, {{seed}}: integers leadline wrote;
-- {{path}}: the file, quoted with QuoteString; {{n}}: rows per row group.
-- No bound parameters (COPY takes none).
COPY (
    SELECT
        d + 10000000000 AS doc_id,
        CAST(k + 1 AS INTEGER) AS line_id,
        CAST('E' || CAST(1 + hash(d, {{seed}}, 1) % 8 AS VARCHAR) AS ll_year_entity) AS entity,
        CAST(CAST(4000 + hash(r, {{seed}}, 2) % 400 AS VARCHAR) AS ll_year_account) AS account,
        CAST(CAST(700000 + hash(d, {{seed}}, 3) % 20000 AS VARCHAR) AS ll_year_counterparty) AS counterparty,
        CAST(DATE '2025-01-01' + CAST(hash(d, {{seed}}, 7) % 365 AS INTEGER) AS DATE) AS posted,
        CAST(CAST(100 + hash(d, {{seed}}, 4) % 60 AS VARCHAR) AS ll_year_user) AS user_id,
        CAST(['GL', 'AP', 'AR', 'PAY', 'INV', 'FA'][1 + CAST(hash(d, {{seed}}, 5) % 6 AS BIGINT)] AS ll_year_source) AS source,
        CAST(['invoice', 'payment', 'accrual', 'reversal', 'transfer', 'fee', 'payroll', 'depreciation'][1 + CAST(hash(r, {{seed}}, 6) % 8 AS BIGINT)] AS ll_year_descr) AS descr,
        CASE WHEN k < 3 THEN ll_year_amount(r, {{seed}})
             ELSE -(ll_year_amount(r - 3, {{seed}}) + ll_year_amount(r - 2, {{seed}}) + ll_year_amount(r - 1, {{seed}}))
        END AS amount
    FROM (SELECT range AS r, range // 4 AS d, range % 4 AS k FROM range({{first}}, {{last}}))
) TO {{path}} (FORMAT parquet, COMPRESSION zstd, ROW_GROUP_SIZE {{n}});
