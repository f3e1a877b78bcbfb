-- The comparison of two digit-test count sets.

-- name: compare_run
-- A stored run's kind, parameters and result (compare --runs).
-- Bound: run_id.
SELECT kind, params, result FROM runs WHERE run_id = ?;
