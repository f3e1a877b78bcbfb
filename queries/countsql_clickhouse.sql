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

-- name: countsql_clickhouse_bands
-- The limit probe's or the range bands' additive counts (leadline
-- count-sql --test limits|ranges), read back by `leadline limits --counts`
-- and `leadline ranges --counts`. Every row gets one code: kind 'b', bin
-- {{band}}, the number of the band thresholds (in units, from the spec on
-- the query's first line) at or below |units|, for the rows the local
-- population tests ({{tested}}: the sign kept, |units| at or above the
-- minimum); kind 'x' with the reason a row was left out: -1 zero, -2 other
-- sign, -3 below the minimum, -4 NULL amount, -5 dropped by the filter.
-- lo and hi are the smallest and largest |units| of the rows counted
-- (the range of the tested amounts). Integer arithmetic only.
SELECT {{by_names}}kind, bin, count(*) AS n, min(a) AS lo, max(a) AS hi
FROM (
    SELECT {{by_names}}CASE WHEN code >= 0 THEN 'b' ELSE 'x' END AS kind, code AS bin, a
    FROM (
        SELECT {{by_names}}a,
               CASE WHEN kept = 0 THEN -5
                    WHEN u IS NULL THEN -4
                    WHEN {{tested}} THEN {{band}}
                    WHEN u = 0 THEN -1
                    WHEN {{other_sign}} THEN -2
                    ELSE -3 END AS code
        FROM (
            SELECT {{by_names}}kept, u, abs(u) AS a
            FROM (
                SELECT {{by_select}}CASE WHEN {{filter}} THEN 1 ELSE 0 END AS kept,
                       {{units}} AS u
                FROM {{table}}
            )
        )
    )
)
GROUP BY {{by_names}}kind, bin
ORDER BY {{by_names}}kind, bin

-- name: countsql_clickhouse_records
-- The records behind one band (the drill-down on counts made elsewhere):
-- {{where}} holds the tested rule, the band's bounds in units and the
-- segment's values, on ll_units ({{units}}). One line, to print.
SELECT * FROM (SELECT *, {{units}} AS ll_units FROM {{table}} WHERE {{filter}}) AS r WHERE {{where}} ORDER BY abs(ll_units), ll_units
