-- The battery's additive counts, written for PostgreSQL (leadline count-sql
-- --engine postgresql). The query runs where the data is; its result (one CSV
-- layout for every engine, see engine/countsql) is read back by
-- `leadline scan --counts`. Integer arithmetic only: {{units}} is the
-- amount as a whole number of units of 10^-scale (bigint), {{first3}} the
-- first three significant digits of a found by comparisons with powers of
-- ten, as in battery.sql.
--
-- Every row of the table gets one code: its first three significant digits
-- (100..999) when tested, or why it was left out: -1 zero, -2 other sign,
-- -3 |amount| below the minimum ({{min_units}} units), -4 NULL amount,
-- -5 dropped by the filter. Tested rows at or above the last-two minimum
-- ({{last2_min}} units: 100.00 at scale 2 unless last_two_all) also count
-- once under kind 'l' (last two digits), as the local scan's last-two test
-- takes them. Sums of |units| are split into sum_hi * 10^9 + sum_lo so
-- that every part fits a 64-bit integer on every engine.

-- name: countsql_postgresql_battery
SELECT {{by_names}}kind, bin, count(*) AS n,
       sum(t / 1000000000) AS sum_hi, sum(t % 1000000000) AS sum_lo
FROM (
    SELECT {{by_names}}k.kind,
           CASE WHEN k.kind = 'f' THEN code ELSE {{last2}} END AS bin,
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
            ) AS r0
        ) AS r1
    ) AS r2
    CROSS JOIN (VALUES ('f'), ('l')) AS k(kind)
    WHERE k.kind = 'f' OR (code >= 100 AND a >= {{last2_min}})
) AS r3
GROUP BY {{by_names}}kind, bin
ORDER BY {{by_names}}kind, bin;
