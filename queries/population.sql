-- The population: which rows of the ledger a test reads (engine/population).
--
-- Placeholders, all built by leadline itself:
--   {{filter}}  the filter checked by sqlguard, or TRUE
--   {{tested}}  the signs and minimum over amount, the minimum bound with ?
--   {{sign_ok}}    whether amount has a sign kept (TRUE for both signs)

-- name: population_rows
-- Rows of the ledger (a count DuckDB answers from its metadata).
SELECT count(*) FROM ledger;

-- name: population_kept_rows
-- Rows the filter keeps (run only when there is a filter).
SELECT count(*) FROM ledger WHERE {{filter}};

-- name: population_left_out
-- Every row under one reason, the first that applies: left out by the
-- filter (false or NULL), NULL amount, tested, zero, of the other sign,
-- below the minimum. Parameters: the minimum, when the population has one.
SELECT CASE
           WHEN NOT coalesce(({{filter}}), FALSE) THEN 'filtered'
           WHEN amount IS NULL THEN 'no_amount'
           WHEN ({{tested}}) THEN 'tested'
           WHEN amount = 0 THEN 'zero'
           WHEN NOT ({{sign_ok}}) THEN 'other_sign'
           ELSE 'below_min'
       END AS reason,
       count(*) AS n
FROM ledger
GROUP BY ALL;

-- name: population_currencies
-- The currencies of the rows a population tests ('' for rows without
-- one) and their rows. {{currency}}: the ledger's currency column or a
-- NULL text (engine/load.CurrencyColumn); {{where}} the population's
-- predicate, its values bound with ?.
SELECT coalesce({{currency}}, '') AS cur, count(*) FROM ledger WHERE {{where}} GROUP BY cur ORDER BY cur;
