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
