-- Journal integrity checks of the completeness summary (engine/journal).
-- Each check is one listing statement; the count, the first rows and the
-- command shown to the analyst are all that statement.

-- name: journal_mapped
-- How many ledger rows carry each column a check needs. No bound
-- parameters. Placeholder {{currency_count}}: count(currency) when the
-- ledger has a currency column, else 0.
SELECT count(*), count(entity), count(doc_id), count(line_id), count(posted), {{currency_count}} FROM ledger;

-- name: journal_unbalanced
-- Documents whose amounts do not sum to zero, per entity and document
-- (and currency, when the ledger has one). No bound parameters.
-- Placeholder {{currency_key}}: ", currency" or nothing.
SELECT entity, doc_id{{currency_key}}, count(*) AS lines, sum(amount) AS imbalance FROM ledger WHERE doc_id IS NOT NULL GROUP BY entity, doc_id{{currency_key}} HAVING sum(amount) <> 0 ORDER BY abs(sum(amount)) DESC, entity, doc_id

-- name: journal_out_of_period
-- Postings dated outside the declared period. No bound parameters.
-- Placeholders {{period_from}} and {{period_to}}: DATE literals that
-- leadline wrote from a parsed period.
SELECT row_id, file_id, line, entity, doc_id, line_id, posted, amount FROM ledger WHERE posted < {{period_from}} OR posted > {{period_to}} ORDER BY posted, row_id

-- name: journal_duplicate_keys
-- Line keys (entity, doc_id, line_id) that appear more than once. No
-- bound parameters, no placeholders.
-- Two steps, exact: the keys' 64-bit hashes that occur more than once
-- (every repeated key is among them; a hash collision adds a candidate,
-- never loses one), then the exact GROUP BY over the rows of those hashes
-- only. Grouping every key on its three text columns needed a hash table
-- of one entry per ledger line: at 100,000,000 lines in place it ran out
-- of the default memory limit, where the fixed-width hashes group (and
-- spill) within it.
SELECT entity, doc_id, line_id, count(*) AS copies, min(row_id) AS first_row_id FROM ledger WHERE doc_id IS NOT NULL AND line_id IS NOT NULL AND hash(entity, doc_id, line_id) IN (SELECT ll_k FROM (SELECT hash(entity, doc_id, line_id) AS ll_k FROM ledger WHERE doc_id IS NOT NULL AND line_id IS NOT NULL) GROUP BY ll_k HAVING count(*) > 1) GROUP BY entity, doc_id, line_id HAVING count(*) > 1 ORDER BY copies DESC, entity, doc_id, line_id

-- name: journal_count
-- How many rows a check's listing has, and the ledger rows behind them.
-- No bound parameters. Placeholders {{query}}: a listing statement above;
-- {{weight}}: the column counting ledger rows per listed row, or 1.
SELECT count(*), coalesce(sum({{weight}}), 0) FROM ({{query}});

-- name: journal_first
-- The first rows of a check's listing. Bound: how many. Placeholder
-- {{query}}: a listing statement above.
SELECT * FROM ({{query}}) LIMIT ?;
