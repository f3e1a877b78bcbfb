-- Duplicate tests. {{base}} is the population predicate leadline built
-- (filter checked by sqlguard, signs, minimum bound with ?); {{wide}} is
-- DECIMAL(38,s) for sums that must not overflow. Every query returns the
-- top groups (LIMIT ?) with, on every row, the number of groups and of
-- records in all groups kept, and of those left out by reason: below the
-- floor (the last ? before LIMIT, bound as exact decimal text: groups whose
-- amounts are all smaller in absolute value) and, for same_doc, lines of
-- documents that net to zero. Rows of groups left out come after the kept
-- ones (column keep false), so that the counts arrive even when no group is
-- kept (one such row is enough: QUALIFY drops the others); the caller
-- reads the counts from any row and the groups from the kept rows only.
-- The counts are sums of CASE over the whole result (a windowed count
-- with FILTER over () is computed row by row: minutes on 74,000 groups). Records whose key columns are blank (NULL or '') take no
-- part in a test that needs those columns.
--
-- Speed: grouping tens of millions of rows by text columns is the cost, so
-- most tests first group by 64-bit hashes of the text columns (DuckDB's
-- hash()) to find candidate keys, then count the candidates' records on
-- the text itself. Where that first step can only let through too much
-- (two names with one hash fall into one candidate, which the second step
-- splits again), the result is exact. Only the spread test counts distinct
-- counterparties by hash; two names of one amount sharing a 64-bit hash
-- would count once (for n names, a chance below n^2 / 2^65).

-- name: dup_columns
-- Which key columns the ledger has at all (a column that is never filled
-- was not mapped). Each scan stops at the first filled value.
SELECT EXISTS (SELECT 1 FROM ledger WHERE counterparty <> '') AS counterparty,
       EXISTS (SELECT 1 FROM ledger WHERE doc_id <> '')       AS doc_id,
       EXISTS (SELECT 1 FROM ledger WHERE posted IS NOT NULL) AS posted;

-- name: dup_records_tested
SELECT count(*) FROM ledger WHERE {{base}};

-- name: dup_exact
-- Exact duplicates: same amount, counterparty, posted date and document,
-- two records or more. Ranked by the excess amount, |amount| x (records - 1).
-- The floor leaves out amounts below it.
WITH base AS (
    SELECT amount, counterparty, posted, doc_id FROM ledger
    WHERE {{base}} AND counterparty <> '' AND doc_id <> '' AND posted IS NOT NULL
),
k AS (
    SELECT amount, hash(counterparty) AS hc, hash(doc_id) AS hd, posted
    FROM base
    GROUP BY ALL
    HAVING count(*) >= 2
),
g AS (
    SELECT b.amount, b.counterparty, b.posted, b.doc_id, count(*) AS records
    FROM base b JOIN k
      ON b.amount = k.amount AND b.posted = k.posted AND hash(b.counterparty) = k.hc AND hash(b.doc_id) = k.hd
    GROUP BY ALL
    HAVING count(*) >= 2
),
r AS (
    SELECT *, CAST(abs(amount) AS {{wide}}) * (records - 1) AS excess,
           CAST(amount AS {{wide}}) * records AS total,
           abs(amount) < CAST(? AS {{wide}}) AS below_floor
    FROM g
)
SELECT CAST(amount AS VARCHAR), counterparty, CAST(posted AS VARCHAR), doc_id, records,
       CAST(excess AS VARCHAR), CAST(total AS VARCHAR),
       NOT below_floor AS keep,
       CAST(sum(CASE WHEN NOT below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS groups_total,
       CAST(sum(CASE WHEN NOT below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS records_total,
       CAST(sum(CASE WHEN below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS floor_groups,
       CAST(sum(CASE WHEN below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS floor_records,
       0 AS balanced_groups, CAST(0 AS BIGINT) AS balanced_records
FROM r
QUALIFY keep OR row_number() OVER (PARTITION BY keep) = 1
ORDER BY keep DESC, excess DESC, records DESC, amount DESC, counterparty, posted, doc_id
LIMIT ?;

-- name: dup_same_amount
-- Same amount and counterparty under two or more documents (possible
-- double payments). Ranked by the excess amount, |amount| x (documents - 1).
-- The floor leaves out amounts below it.
-- Candidates: (amount, counterparty) seen twice or more; then their
-- documents, counted without DISTINCT.
WITH base AS (
    SELECT amount, counterparty, posted, doc_id FROM ledger
    WHERE {{base}} AND counterparty <> '' AND doc_id <> ''
),
k AS (
    SELECT amount, hash(counterparty) AS hc
    FROM base
    GROUP BY ALL
    HAVING count(*) >= 2
),
d AS (
    SELECT b.amount, b.counterparty, b.doc_id, count(*) AS n, min(b.posted) AS first_posted, max(b.posted) AS last_posted
    FROM base b JOIN k ON b.amount = k.amount AND hash(b.counterparty) = k.hc
    GROUP BY ALL
),
g AS (
    SELECT amount, counterparty, sum(n) AS records, count(*) AS documents,
           min(first_posted) AS first_posted, max(last_posted) AS last_posted
    FROM d
    GROUP BY amount, counterparty
    HAVING count(*) >= 2
),
r AS (
    SELECT *, CAST(abs(amount) AS {{wide}}) * (documents - 1) AS excess,
           CAST(amount AS {{wide}}) * records AS total,
           abs(amount) < CAST(? AS {{wide}}) AS below_floor
    FROM g
)
SELECT CAST(amount AS VARCHAR), counterparty, CAST(records AS BIGINT), documents,
       CAST(first_posted AS VARCHAR), CAST(last_posted AS VARCHAR),
       CAST(excess AS VARCHAR), CAST(total AS VARCHAR),
       NOT below_floor AS keep,
       CAST(sum(CASE WHEN NOT below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS groups_total,
       CAST(sum(CASE WHEN NOT below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS records_total,
       CAST(sum(CASE WHEN below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS floor_groups,
       CAST(sum(CASE WHEN below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS floor_records,
       0 AS balanced_groups, CAST(0 AS BIGINT) AS balanced_records
FROM r
QUALIFY keep OR row_number() OVER (PARTITION BY keep) = 1
ORDER BY keep DESC, excess DESC, records DESC, amount DESC, counterparty
LIMIT ?;

-- name: dup_same_amount_window
-- The same within a window of days: the records of one amount and
-- counterparty, in date order, fall into clusters where each record is at
-- most ? days after the one before; a cluster that holds two or more
-- documents is a group. Every pair of records of different documents
-- within the window lies in one group, and each group holds such a pair.
WITH base AS (
    SELECT amount, counterparty, posted, doc_id FROM ledger
    WHERE {{base}} AND counterparty <> '' AND doc_id <> '' AND posted IS NOT NULL
),
k AS (
    SELECT amount, hash(counterparty) AS hc
    FROM base
    GROUP BY ALL
    HAVING count(*) >= 2
),
s AS (
    SELECT b.*,
           CASE WHEN b.posted - lag(b.posted) OVER (PARTITION BY b.amount, b.counterparty ORDER BY b.posted) > ? THEN 1 ELSE 0 END AS brk
    FROM base b JOIN k ON b.amount = k.amount AND hash(b.counterparty) = k.hc
),
c AS (
    -- RANGE framing (the default) counts every record of the same date
    -- together, so records of one date always share a cluster.
    SELECT *, sum(brk) OVER (PARTITION BY amount, counterparty ORDER BY posted) AS cluster FROM s
),
d AS (
    SELECT amount, counterparty, cluster, doc_id, count(*) AS n, min(posted) AS first_posted, max(posted) AS last_posted
    FROM c
    GROUP BY ALL
),
g AS (
    SELECT amount, counterparty, cluster, sum(n) AS records, count(*) AS documents,
           min(first_posted) AS first_posted, max(last_posted) AS last_posted
    FROM d
    GROUP BY amount, counterparty, cluster
    HAVING count(*) >= 2
),
r AS (
    SELECT *, CAST(abs(amount) AS {{wide}}) * (documents - 1) AS excess,
           CAST(amount AS {{wide}}) * records AS total,
           abs(amount) < CAST(? AS {{wide}}) AS below_floor
    FROM g
)
SELECT CAST(amount AS VARCHAR), counterparty, CAST(records AS BIGINT), documents,
       CAST(first_posted AS VARCHAR), CAST(last_posted AS VARCHAR),
       CAST(excess AS VARCHAR), CAST(total AS VARCHAR),
       NOT below_floor AS keep,
       CAST(sum(CASE WHEN NOT below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS groups_total,
       CAST(sum(CASE WHEN NOT below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS records_total,
       CAST(sum(CASE WHEN below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS floor_groups,
       CAST(sum(CASE WHEN below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS floor_records,
       0 AS balanced_groups, CAST(0 AS BIGINT) AS balanced_records
FROM r
QUALIFY keep OR row_number() OVER (PARTITION BY keep) = 1
ORDER BY keep DESC, excess DESC, records DESC, amount DESC, counterparty, first_posted
LIMIT ?;

-- name: dup_same_doc
-- Same document and counterparty with two or more different amounts.
-- Candidates: (document, counterparty) whose smallest and largest amounts
-- differ; then their amounts, counted without DISTINCT. A group whose
-- lines all belong to documents (entity, doc_id) that net to zero over the
-- whole ledger (every line, whatever the population) is left out: the
-- lines of one balanced document differ by design. Ranked by the money at
-- stake, the sum of absolute amounts beyond the largest line (what the
-- document holds besides its main line). The floor leaves out groups whose
-- amounts are all below it.
WITH base AS (
    SELECT entity, amount, counterparty, posted, doc_id FROM ledger
    WHERE {{base}} AND counterparty <> '' AND doc_id <> ''
),
k AS (
    SELECT hash(doc_id) AS hd, hash(counterparty) AS hc
    FROM base
    GROUP BY ALL
    HAVING min(amount) <> max(amount)
),
docs AS (
    SELECT coalesce(entity, '') AS entity, doc_id, sum(amount) = 0 AS balanced
    FROM ledger
    WHERE doc_id <> ''
    GROUP BY ALL
),
d AS (
    SELECT b.doc_id, b.counterparty, b.amount, count(*) AS n, min(b.posted) AS first_posted, max(b.posted) AS last_posted,
           bool_and(coalesce(docs.balanced, FALSE)) AS balanced
    FROM base b JOIN k ON hash(b.doc_id) = k.hd AND hash(b.counterparty) = k.hc
    LEFT JOIN docs ON docs.entity = coalesce(b.entity, '') AND docs.doc_id = b.doc_id
    GROUP BY b.doc_id, b.counterparty, b.amount
),
g AS (
    SELECT doc_id, counterparty, sum(n) AS records, count(*) AS amounts,
           min(amount) AS min_amount, max(amount) AS max_amount,
           min(first_posted) AS first_posted, max(last_posted) AS last_posted,
           sum(CAST(amount AS {{wide}}) * n) AS total,
           sum(CAST(abs(amount) AS {{wide}}) * n) AS abs_total,
           max(abs(amount)) AS largest,
           bool_and(balanced) AS balanced
    FROM d
    GROUP BY doc_id, counterparty
    HAVING count(*) >= 2
),
r AS (
    SELECT *, abs_total - largest AS excess,
           NOT balanced AND largest < CAST(? AS {{wide}}) AS below_floor
    FROM g
)
SELECT doc_id, counterparty, CAST(records AS BIGINT), amounts,
       CAST(min_amount AS VARCHAR), CAST(max_amount AS VARCHAR),
       CAST(first_posted AS VARCHAR), CAST(last_posted AS VARCHAR),
       CAST(excess AS VARCHAR), CAST(total AS VARCHAR),
       NOT balanced AND NOT below_floor AS keep,
       CAST(sum(CASE WHEN NOT balanced AND NOT below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS groups_total,
       CAST(sum(CASE WHEN NOT balanced AND NOT below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS records_total,
       CAST(sum(CASE WHEN below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS floor_groups,
       CAST(sum(CASE WHEN below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS floor_records,
       CAST(sum(CASE WHEN balanced THEN 1 ELSE 0 END) OVER () AS BIGINT) AS balanced_groups,
       CAST(sum(CASE WHEN balanced THEN records ELSE 0 END) OVER () AS BIGINT) AS balanced_records
FROM r
QUALIFY keep OR row_number() OVER (PARTITION BY keep) = 1
ORDER BY keep DESC, excess DESC, abs_total DESC, amounts DESC, doc_id, counterparty
LIMIT ?;

-- name: dup_spread
-- One amount spread across many counterparties (at least ? of them).
-- Ranked by the money at stake, |amount| x (counterparties - 1), then
-- counterparties and records. The floor leaves out amounts below it.
-- Counterparties are told apart by the hash of their name (see the note at
-- the top).
WITH p AS (
    SELECT amount, hash(counterparty) AS hc, count(*) AS n
    FROM ledger
    WHERE {{base}} AND counterparty <> ''
    GROUP BY ALL
),
g AS (
    SELECT amount, count(*) AS counterparties, sum(n) AS records
    FROM p
    GROUP BY amount
    HAVING count(*) >= ?
),
r AS (
    SELECT *, CAST(abs(amount) AS {{wide}}) * (counterparties - 1) AS excess,
           abs(amount) < CAST(? AS {{wide}}) AS below_floor
    FROM g
)
SELECT CAST(amount AS VARCHAR), counterparties, CAST(records AS BIGINT),
       CAST(excess AS VARCHAR), CAST(CAST(amount AS {{wide}}) * records AS VARCHAR),
       NOT below_floor AS keep,
       CAST(sum(CASE WHEN NOT below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS groups_total,
       CAST(sum(CASE WHEN NOT below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS records_total,
       CAST(sum(CASE WHEN below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS floor_groups,
       CAST(sum(CASE WHEN below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS floor_records,
       0 AS balanced_groups, CAST(0 AS BIGINT) AS balanced_records
FROM r
QUALIFY keep OR row_number() OVER (PARTITION BY keep) = 1
ORDER BY keep DESC, excess DESC, counterparties DESC, records DESC, abs(amount) DESC, amount DESC
LIMIT ?;

-- name: dup_rsf
-- Relative size factor (Nigrini 2012): per counterparty with at least ?
-- records, the largest absolute amount divided by the second largest (the
-- second largest record, which may equal the largest). Ranked by the
-- factor. The floor leaves out counterparties whose largest amount is
-- below it.
WITH base AS (
    SELECT amount, counterparty FROM ledger WHERE {{base}}
),
g AS (
    SELECT counterparty, count(*) AS records, max(abs(amount), 2) AS top2,
           sum(CAST(amount AS {{wide}})) AS total
    FROM base
    WHERE counterparty <> ''
    GROUP BY counterparty
    HAVING count(*) >= ?
),
h AS (
    SELECT counterparty, records, top2[1] AS largest, top2[2] AS second, total,
           CAST(top2[1] AS DOUBLE) / CAST(top2[2] AS DOUBLE) AS rsf
    FROM g
    WHERE top2[2] > 0
)
SELECT counterparty, records, CAST(largest AS VARCHAR), CAST(second AS VARCHAR), rsf, CAST(total AS VARCHAR),
       NOT below_floor AS keep,
       CAST(sum(CASE WHEN NOT below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS groups_total,
       CAST(sum(CASE WHEN NOT below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS records_total,
       CAST(sum(CASE WHEN below_floor THEN 1 ELSE 0 END) OVER () AS BIGINT) AS floor_groups,
       CAST(sum(CASE WHEN below_floor THEN records ELSE 0 END) OVER () AS BIGINT) AS floor_records,
       0 AS balanced_groups, CAST(0 AS BIGINT) AS balanced_records
FROM (SELECT *, largest < CAST(? AS {{wide}}) AS below_floor FROM h)
QUALIFY keep OR row_number() OVER (PARTITION BY keep) = 1
ORDER BY keep DESC, rsf DESC, largest DESC, counterparty
LIMIT ?;

-- name: dup_run_by_id
SELECT run_id, kind, result FROM runs WHERE run_id = ?;

-- name: dup_run_latest
SELECT run_id, kind, result FROM runs WHERE kind = 'duplicates' ORDER BY run_id DESC LIMIT 1;
