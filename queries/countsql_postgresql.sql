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

-- name: countsql_postgresql_bands
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
            ) AS r0
        ) AS r1
    ) AS r2
) AS r3
GROUP BY {{by_names}}kind, bin
ORDER BY {{by_names}}kind, bin;

-- name: countsql_postgresql_records
-- The records behind one band (the drill-down on counts made elsewhere):
-- {{where}} holds the tested rule, the band's bounds in units and the
-- segment's values, on ll_units ({{units}}). One line, to print.
SELECT * FROM (SELECT *, {{units}} AS ll_units FROM {{table}} WHERE {{filter}}) AS r WHERE {{where}} ORDER BY abs(ll_units), ll_units;
