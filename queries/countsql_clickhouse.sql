-- The battery's additive counts, written for ClickHouse (leadline
-- count-sql --engine clickhouse); the same codes, layout and integer
-- arithmetic as countsql_duckdb_battery. ClickHouse spells integer
-- division intDiv and repeats each row for the two kinds of bin with
-- ARRAY JOIN. Run it on a Distributed table to count the whole cluster
-- at once, or on each shard's local table and let leadline add the files.

-- name: countsql_clickhouse_battery
SELECT {{by_names}}kind, bin, count(*) AS n,
       sum(intDiv(t, 1000000000)) AS sum_hi, sum(t % 1000000000) AS sum_lo
FROM (
    SELECT {{by_names}}kind,
           CASE WHEN kind = 'f' THEN code ELSE {{last2}} END AS bin,
           CASE WHEN code >= 100 THEN a ELSE 0 END AS t
    FROM (
        SELECT {{by_names}}a,
               CASE WHEN kept = 0 THEN -5
                    WHEN u IS NULL THEN -4
                    WHEN u = 0 THEN -1
                    WHEN {{other_sign}} THEN -2
                    WHEN a < {{min_units}} THEN -3
                    ELSE {{first3}} END AS code
        FROM (
            SELECT {{by_names}}kept, u, abs(u) AS a
            FROM (
                SELECT {{by_select}}CASE WHEN {{filter}} THEN 1 ELSE 0 END AS kept,
                       {{units}} AS u
                FROM {{table}}
            )
        )
    )
    ARRAY JOIN ['f', 'l'] AS kind
    WHERE kind = 'f' OR (code >= 100 AND a >= {{last2_min}})
)
GROUP BY {{by_names}}kind, bin
ORDER BY {{by_names}}kind, bin
