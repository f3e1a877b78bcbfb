-- Inspecting a file before it is loaded: what its sampled values say about
-- the load options. {{reader}} is the file's reader (engine/load builds
-- it), {{column}} a column of it, quoted by queries.QuoteIdent.

-- name: inspect_amount_marks
-- Of a sample of a text amount column: values, how many read with a
-- decimal point and with a decimal comma, and how many of each reading are
-- 10^16 or more (beyond DECIMAL(18,2)).
SELECT count(*),
       count(TRY_CAST(ll_amount_canonical(v, false) AS DECIMAL(38,6))),
       count(TRY_CAST(ll_amount_canonical(v, true) AS DECIMAL(38,6))),
       count(*) FILTER (WHERE abs(TRY_CAST(ll_amount_canonical(v, false) AS DOUBLE)) >= 1e16),
       count(*) FILTER (WHERE abs(TRY_CAST(ll_amount_canonical(v, true) AS DOUBLE)) >= 1e16)
FROM (SELECT CAST({{column}} AS VARCHAR) AS v FROM {{reader}} LIMIT 200000);

-- name: inspect_date_formats
-- Of a sample of the posting dates: the non-blank values, how many the
-- load reads without a format (YYYY-MM-DD), and how many each of twelve
-- strptime formats reads (? = the twelve formats), as load_insert does;
-- then the first value without a format, and the first each format does
-- not read.
SELECT count(v),
       count(TRY_CAST(v AS DATE)),
       count(CAST(TRY_STRPTIME(v, ?) AS DATE)), count(CAST(TRY_STRPTIME(v, ?) AS DATE)),
       count(CAST(TRY_STRPTIME(v, ?) AS DATE)), count(CAST(TRY_STRPTIME(v, ?) AS DATE)),
       count(CAST(TRY_STRPTIME(v, ?) AS DATE)), count(CAST(TRY_STRPTIME(v, ?) AS DATE)),
       count(CAST(TRY_STRPTIME(v, ?) AS DATE)), count(CAST(TRY_STRPTIME(v, ?) AS DATE)),
       count(CAST(TRY_STRPTIME(v, ?) AS DATE)), count(CAST(TRY_STRPTIME(v, ?) AS DATE)),
       count(CAST(TRY_STRPTIME(v, ?) AS DATE)), count(CAST(TRY_STRPTIME(v, ?) AS DATE)),
       coalesce(min(v) FILTER (WHERE TRY_CAST(v AS DATE) IS NULL), '')
FROM (SELECT nullif(trim(CAST({{column}} AS VARCHAR)), '') AS v FROM {{reader}} LIMIT 200000);

-- name: inspect_currency_markers
-- Of a sample of an amount column: texts that name their currency with a
-- marker (EUR 12.00, $12.00), texts with a non-zero number and none, and
-- the codes seen; the rule of load_currency_markers.
WITH m AS (
    SELECT v, CASE
        WHEN NOT regexp_matches(v, '[^0-9.,'' \t+-]') THEN CASE WHEN regexp_matches(v, '[0-9]') THEN '' END
        ELSE ll_amount_currency(ll_amount_parts(v))
        END AS cur
    FROM (SELECT CAST({{column}} AS VARCHAR) AS v FROM {{reader}} LIMIT 200000)
    WHERE v IS NOT NULL
)
SELECT count(*) FILTER (WHERE cur <> ''),
       count(*) FILTER (WHERE cur = '' AND regexp_matches(v, '[1-9]')),
       coalesce(string_agg(DISTINCT cur, ', ' ORDER BY cur) FILTER (WHERE cur <> ''), '')
FROM m;
