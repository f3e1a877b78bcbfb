-- Amount ranges and the limit clustering probe: counts of the tested
-- amounts between sorted edges, per segment, in one scan.
--
-- Placeholders, all built by leadline itself:
--   {{filter}}          the --where predicate checked by sqlguard, or TRUE
--   {{tested}}          signs and minimum amount (engine/population), values bound with ?
--   {{x}}               the absolute amount under the signs kept
--   {{sign_ok}}         whether ll_amount has the sign kept
--   {{segment_select}}  "expr AS ll_seg_1, ..." (empty without --by)
--   {{segment_names}}   "ll_seg_1, ..." (empty without --by)
--   {{group_by}}        "GROUP BY ll_seg_1, ..." (empty without --by)
--
-- histogram(v, boundaries) puts v in the first boundary b with v <= b (and
-- the values above every boundary under +Inf). Counting -x against the
-- negated edges turns that into half-open ranges [e_j, e_{j+1}) of x: the
-- key -e_j holds the amounts from e_j up to the next edge, and +Inf the
-- amounts below the first edge.

-- name: ranges_summary
-- The whole selection: what the filter keeps, what is tested, and the
-- range of the tested absolute amounts.
WITH base AS (
    SELECT amount AS ll_amount,
           {{x}} AS ll_x,
           ({{tested}}) AS ll_tested
    FROM ledger
    WHERE {{filter}}
)
SELECT count(*) AS n_rows,
       count(*) FILTER (WHERE NOT ll_tested AND ll_amount = 0) AS n_zero,
       count(*) FILTER (WHERE NOT ll_tested AND ll_amount <> 0 AND NOT ({{sign_ok}})) AS n_other_sign,
       count(*) FILTER (WHERE ll_tested) AS n_tested,
       CAST(min(ll_x) FILTER (WHERE ll_tested) AS DOUBLE) AS x_min,
       CAST(max(ll_x) FILTER (WHERE ll_tested) AS DOUBLE) AS x_max
FROM base;

-- name: ranges_counts
-- Per segment: the same counts, and the tested amounts between the edges
-- bound as the second value (a DOUBLE[] of the negated edges, ascending).
WITH base AS (
    SELECT {{segment_select}}
           amount AS ll_amount,
           {{x}} AS ll_x,
           ({{tested}}) AS ll_tested
    FROM ledger
    WHERE {{filter}}
), grouped AS (
    SELECT {{segment_names}}
           count(*) AS n_rows,
           count(*) FILTER (WHERE NOT ll_tested AND ll_amount = 0) AS n_zero,
           count(*) FILTER (WHERE NOT ll_tested AND ll_amount <> 0 AND NOT ({{sign_ok}})) AS n_other_sign,
           count(*) FILTER (WHERE ll_tested) AS n_tested,
           CAST(min(ll_x) FILTER (WHERE ll_tested) AS DOUBLE) AS x_min,
           CAST(max(ll_x) FILTER (WHERE ll_tested) AS DOUBLE) AS x_max,
           histogram(-CAST(ll_x AS DOUBLE), CAST(? AS DOUBLE[])) FILTER (WHERE ll_tested) AS ll_hist
    FROM base
    {{group_by}}
)
SELECT {{segment_names}}
       n_rows, n_zero, n_other_sign, n_tested, x_min, x_max,
       map_keys(ll_hist) AS ll_keys,
       map_values(ll_hist) AS ll_counts
FROM grouped;
