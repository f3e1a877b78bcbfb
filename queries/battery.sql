-- The digit battery. Every count-based test (first, second, first-two,
-- first-three and last-two digits, and the summation test) is fed by ONE
-- aggregate scan, battery_scan; the second-order test and number
-- duplication need their own queries (a sort and a GROUP BY amount).
--
-- Digits come from the exact DECIMAL, never from a float: {{units}} is the
-- amount as a whole number of units of 10^-scale (1234.56 at scale 2 ->
-- 123456), built by engine/battery from the ledger's type, and the digits
-- are taken from that integer by integer comparisons and division:
--
--   first three significant digits of u >= 1 with k decimal digits:
--     u * 100 (k = 1), u * 10 (k = 2), u // 10^(k-3) (k >= 3)
--   so 10.00 -> 100, 99.99 -> 999, 0.29 -> 290, 0.10 -> 100, 5.00 -> 500.
--
-- The number of digits is found by a balanced tree of comparisons with
-- powers of ten (five comparisons for a BIGINT), which on DuckDB is faster
-- than log10 on a double and, unlike it, exact at 999999999999999999.

-- name: battery_macros
-- ll_first3_i64(u): first three significant digits (100..999) of a BIGINT
-- u >= 1 (all amounts of a DECIMAL(p,s) with p <= 18 in units).
-- ll_first3_i128(u): the same for a HUGEINT u >= 1 (DECIMAL(p,s), p > 18).
-- Pass a column, not an expression: a macro repeats its argument.
CREATE OR REPLACE TEMP MACRO ll_first3_i64(u) AS
CASE WHEN u < 1000000000
    THEN CASE WHEN u < 100000
        THEN CASE WHEN u < 1000
            THEN CASE WHEN u < 100
                THEN CASE WHEN u < 10
                    THEN u * 100
                    ELSE u * 10 END
                ELSE u END
            ELSE CASE WHEN u < 10000
                THEN u // 10
                ELSE u // 100 END END
        ELSE CASE WHEN u < 10000000
            THEN CASE WHEN u < 1000000
                THEN u // 1000
                ELSE u // 10000 END
            ELSE CASE WHEN u < 100000000
                THEN u // 100000
                ELSE u // 1000000 END END END
    ELSE CASE WHEN u < 100000000000000
        THEN CASE WHEN u < 1000000000000
            THEN CASE WHEN u < 100000000000
                THEN CASE WHEN u < 10000000000
                    THEN u // 10000000
                    ELSE u // 100000000 END
                ELSE u // 1000000000 END
            ELSE CASE WHEN u < 10000000000000
                THEN u // 10000000000
                ELSE u // 100000000000 END END
        ELSE CASE WHEN u < 10000000000000000
            THEN CASE WHEN u < 1000000000000000
                THEN u // 1000000000000
                ELSE u // 10000000000000 END
            ELSE CASE WHEN u < 100000000000000000
                THEN u // 100000000000000
                ELSE u // 1000000000000000 END END END END;
CREATE OR REPLACE TEMP MACRO ll_first3_i128(u) AS
CASE WHEN u < 1000000000000000000
    THEN ll_first3_i64(CAST(u AS BIGINT))
    ELSE CASE WHEN u < 10000000000000000000000000000::HUGEINT
        THEN CASE WHEN u < 100000000000000000000000::HUGEINT
            THEN CASE WHEN u < 1000000000000000000000::HUGEINT
                THEN CASE WHEN u < 100000000000000000000::HUGEINT
                    THEN CASE WHEN u < 10000000000000000000::HUGEINT
                        THEN u // 10000000000000000
                        ELSE u // 100000000000000000 END
                    ELSE u // 1000000000000000000 END
                ELSE CASE WHEN u < 10000000000000000000000::HUGEINT
                    THEN u // 10000000000000000000::HUGEINT
                    ELSE u // 100000000000000000000::HUGEINT END END
            ELSE CASE WHEN u < 100000000000000000000000000::HUGEINT
                THEN CASE WHEN u < 10000000000000000000000000::HUGEINT
                    THEN CASE WHEN u < 1000000000000000000000000::HUGEINT
                        THEN u // 1000000000000000000000::HUGEINT
                        ELSE u // 10000000000000000000000::HUGEINT END
                    ELSE u // 100000000000000000000000::HUGEINT END
                ELSE CASE WHEN u < 1000000000000000000000000000::HUGEINT
                    THEN u // 1000000000000000000000000::HUGEINT
                    ELSE u // 10000000000000000000000000::HUGEINT END END END
        ELSE CASE WHEN u < 1000000000000000000000000000000000::HUGEINT
            THEN CASE WHEN u < 10000000000000000000000000000000::HUGEINT
                THEN CASE WHEN u < 1000000000000000000000000000000::HUGEINT
                    THEN CASE WHEN u < 100000000000000000000000000000::HUGEINT
                        THEN u // 100000000000000000000000000::HUGEINT
                        ELSE u // 1000000000000000000000000000::HUGEINT END
                    ELSE u // 10000000000000000000000000000::HUGEINT END
                ELSE CASE WHEN u < 100000000000000000000000000000000::HUGEINT
                    THEN u // 100000000000000000000000000000::HUGEINT
                    ELSE u // 1000000000000000000000000000000::HUGEINT END END
            ELSE CASE WHEN u < 1000000000000000000000000000000000000::HUGEINT
                THEN CASE WHEN u < 100000000000000000000000000000000000::HUGEINT
                    THEN CASE WHEN u < 10000000000000000000000000000000000::HUGEINT
                        THEN u // 10000000000000000000000000000000::HUGEINT
                        ELSE u // 100000000000000000000000000000000::HUGEINT END
                    ELSE u // 1000000000000000000000000000000000::HUGEINT END
                ELSE CASE WHEN u < 10000000000000000000000000000000000000::HUGEINT
                    THEN u // 10000000000000000000000000000000000::HUGEINT
                    ELSE u // 100000000000000000000000000000000000::HUGEINT END END END END END;

-- name: battery_scan
-- One pass over the ledger. The filter and the sign tested are pushed into
-- the scan ({{sign_where}} keeps zeros, so that they are counted, and drops
-- NULL amounts, which a committed ledger never holds); {{abs}} is |amount|
-- in units for the signs read. Each row read gets a code: its first three
-- significant digits (100..999) when it is tested, or why it was left out:
--   -1 zero, -3 |amount| below the minimum.
-- Rows of the other sign and rows the filter drops are not read here;
-- engine/battery counts them from the ledger's row count (and, with a
-- filter, the rows it keeps: population_kept_rows).
-- Two grouping sets share the pass: (segment..., first three digits) and
-- (segment..., last two digits); ll_l2 repeats the exclusion code for rows
-- left out, so they stay apart. Counts and sums of |amount| (in units) per
-- group are additive: segments, files and partitions merge by addition.
-- Sums are exact integers in the aggregate, returned as DOUBLE (the
-- summation test works on shares of the total).
-- Parameter: the minimum |amount| in units, at least 1 (so that zero is
-- below it).
SELECT {{segment_names}}ll_f3, ll_l2, count(*) AS ll_n, CAST(sum(ll_a) AS DOUBLE) AS ll_sum
FROM (
    SELECT {{segment_names}}ll_a, ll_f3,
           CASE WHEN ll_f3 > 0 THEN {{last2}} ELSE ll_f3 END AS ll_l2
    FROM (
        SELECT {{segment_names}}ll_a,
               CASE WHEN ll_a < ? THEN (CASE WHEN ll_a = 0 THEN -1 ELSE -3 END)
                    ELSE {{first3}}(ll_a) END AS ll_f3
        FROM (
            SELECT {{segment_names}}{{abs}} AS ll_a
            FROM (
                SELECT {{segment_select}}{{units}} AS ll_u
                FROM ledger
                WHERE {{filter}} AND {{sign_where}}
            )
        )
    )
)
GROUP BY GROUPING SETS (({{segment_names}}ll_f3), ({{segment_names}}ll_l2));

-- name: battery_scan_segments
-- battery_scan grouped on the segment columns as stored (cheap to hash);
-- this folds the groups into segments as the drill-down reads them
-- (blank text, NULL, empty or spaces, is one segment; months are YYYY-MM)
-- and returns ONE row per segment: its groups packed in one text,
--   f<first three digits or exclusion code> <count> <sum>,l<last two digits> <count> <sum>,...
-- Handing some 900,000 (segment, digits) rows to Go one by one cost more
-- than the scan itself at 1,000 segments; a packed text per segment is
-- read in one step. Segments that fold together may repeat a group: the
-- reader adds them up. The sum is a DOUBLE written in its shortest exact
-- form, which reads back to the same DOUBLE.
SELECT {{segment_normal}}string_agg(
    CASE WHEN ll_f3 IS NOT NULL THEN 'f' || ll_f3 ELSE 'l' || ll_l2 END
        || ' ' || ll_n || ' ' || coalesce(ll_sum, 0), ',') AS ll_bins
FROM (
{{scan}}
)
GROUP BY ALL;

-- name: battery_amount_range
-- The smallest and largest amount (DuckDB answers from its column
-- statistics): when every amount is small enough for amount * 10^scale
-- to stay within the amount's width, the scan uses the plain product.
SELECT CAST(min(amount) AS VARCHAR), CAST(max(amount) AS VARCHAR) FROM ledger;

-- name: battery_second_order
-- Second-order test (Nigrini and Miller 2009): sort the tested amounts
-- (|amount|, per segment), take the differences between neighbours, drop
-- zeros, and count the first two significant digits of the differences.
-- The same pass gives the expectation's input: each difference's local
-- mean spacing, (last - first)/(amounts - 1) over the {{window}} sorted
-- amounts on either side of it, as a histogram of
-- round(log10(spacing) * {{steps}}) (benford.SpacingHistogram says the
-- same in Go). Two grouping sets: ll_set 0 rows count the differences by
-- first two digits (NULL: zero differences, not tested), ll_set 1 rows
-- count every difference by its spacing bucket (NULL: all the amounts
-- around it equal).
-- Parameter: the minimum |amount| in units.
SELECT {{segment_names}}ll_f2, ll_mu, grouping(ll_f2) AS ll_set, count(*) AS ll_n
FROM (
    SELECT {{segment_names}}
           CASE WHEN ll_d > 0 THEN {{first3}}(ll_d) // 10 END AS ll_f2,
           CASE WHEN ll_span > 0 THEN CAST(round(log10(ll_span / (ll_cnt - 1)) * {{steps}}) AS INTEGER) END AS ll_mu
    FROM (
        SELECT {{segment_names}}ll_a - lag(ll_a) OVER ll_w AS ll_d,
               last_value(ll_a) OVER ll_near - first_value(ll_a) OVER ll_near AS ll_span,
               count(*) OVER ll_near AS ll_cnt
        FROM (
            SELECT {{segment_names}}ll_u, abs(ll_u) AS ll_a
            FROM (
                SELECT {{segment_select}}{{units}} AS ll_u
                FROM ledger
                WHERE {{filter}}
            )
        )
        WHERE ll_u <> 0 AND ({{sign_ok}}) AND ll_a >= ?
        WINDOW ll_w AS ({{partition}}ORDER BY ll_a),
               ll_near AS ({{partition}}ORDER BY ll_a ROWS BETWEEN {{window}} PRECEDING AND {{window}} FOLLOWING)
    )
    WHERE ll_d IS NOT NULL
)
GROUP BY GROUPING SETS (({{segment_names}}ll_f2), ({{segment_names}}ll_mu));

-- name: battery_duplicates
-- Number duplication: the most frequent exact amounts among those tested,
-- with the number of distinct amounts. Parameters: the minimum |amount| in
-- units, the number of amounts listed.
SELECT CAST(ll_amount AS VARCHAR) AS amount, ll_n, count(*) OVER () AS ll_distinct
FROM (
    SELECT amount AS ll_amount, count(*) AS ll_n
    FROM (
        SELECT amount, ll_u, abs(ll_u) AS ll_a
        FROM (SELECT amount, {{units}} AS ll_u FROM ledger WHERE {{filter}})
    )
    WHERE ll_u <> 0 AND ({{sign_ok}}) AND ll_a >= ?
    GROUP BY amount
)
ORDER BY ll_n DESC, ll_amount
LIMIT ?;

-- name: battery_bench_first_two
-- The benchmark's reference: one hand-written first-two digits GROUP BY
-- over the positive amounts of at least 10.00 of a DECIMAL(18,2) ledger
-- below 10^14 (what the generated ledger holds), with the same exact digit
-- rule as the battery. leadline-bench bench-battery times the battery against it.
SELECT ll_first3_i64(ll_u) // 10 AS first_two, count(*) AS n
FROM (SELECT CAST(amount * 100 AS BIGINT) AS ll_u FROM ledger WHERE amount >= 10)
GROUP BY 1;
