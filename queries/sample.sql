-- Reproducible samples of records (engine/drill DrawSample, used by pack
-- extracts and drill --sample).

-- name: sample_sizes
-- The absolute amount of every record of a sample's population, in its
-- order, as exact text (the sizes a monetary sample is drawn by).
-- Placeholder {{table}}: the stage table (records numbered by ll_pos),
-- quoted with QuoteIdent. No bound parameters.
SELECT CAST(abs(amount) AS VARCHAR) FROM {{table}} ORDER BY ll_pos;

-- name: sample_rows
-- The records a sample drew, by their position in the population.
-- Placeholders: {{table}}, the stage table quoted with QuoteIdent;
-- {{exclude}}, the stage's own columns left out (ll_pos and others, each
-- quoted with QuoteIdent); {{ids}}, one "?" per position (NULL when none).
-- Bound parameters: the positions.
SELECT * EXCLUDE ({{exclude}}) FROM {{table}} WHERE ll_pos IN ({{ids}}) ORDER BY ll_pos;

-- name: sample_stage_drill
-- The records of a drill selection numbered in file order (ll_pos from 0),
-- kept in a temporary table for the sample drawn from them. Placeholders:
-- {{table}}, the stage table quoted with QuoteIdent; {{query}}, the drill's
-- records query in file order (rendered by leadline). Bound parameters:
-- those of the records query.
CREATE OR REPLACE TEMP TABLE {{table}} AS
SELECT row_number() OVER (ORDER BY row_id) - 1 AS ll_pos, *
FROM (
{{query}}
) AS rec;
