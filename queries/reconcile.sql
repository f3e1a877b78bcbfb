-- The reconciliation of the ledger against a control file (engine/reconcile).

-- name: reconcile_loaded
-- The ledger's totals per key: rows, the sum of positive amounts (debit),
-- the sum of negative amounts as a positive number (credit) and the net,
-- as exact decimal text. No bound parameters. Placeholder {{key_select}}:
-- one trimmed text column per key (ll_k1, ll_k2, ...) followed by a comma,
-- or nothing for the grand total; leadline builds it from entity, account
-- and currency, quoted.
SELECT {{key_select}}
       count(*) AS ll_rows,
       CAST(coalesce(sum(amount) FILTER (WHERE amount > 0), 0) AS VARCHAR) AS ll_debit,
       CAST(coalesce(-sum(amount) FILTER (WHERE amount < 0), 0) AS VARCHAR) AS ll_credit,
       CAST(coalesce(sum(amount), 0) AS VARCHAR) AS ll_net
FROM ledger
GROUP BY ALL
ORDER BY ALL;

-- name: reconcile_create
-- The stored reconciliations: one row each (with the whole result as JSON)
-- and one row per key and measure. No bound parameters, no placeholders.
CREATE TABLE IF NOT EXISTS ll_reconciliation (
    reconciliation_id INTEGER PRIMARY KEY,
    created_at        TIMESTAMP NOT NULL,
    control_path      VARCHAR NOT NULL,
    control_name      VARCHAR NOT NULL,
    control_sha256    VARCHAR NOT NULL,
    control_bytes     BIGINT NOT NULL,
    shape             VARCHAR NOT NULL,   -- totals or trial_balance
    keys              VARCHAR NOT NULL,   -- JSON: the key columns
    keys_compared     INTEGER NOT NULL,
    keys_differing    INTEGER NOT NULL,
    only_in_control   INTEGER NOT NULL,
    only_in_ledger    INTEGER NOT NULL,
    ties              BOOLEAN NOT NULL,
    accepted          BOOLEAN NOT NULL,
    verdict           VARCHAR NOT NULL,
    result            VARCHAR NOT NULL    -- JSON, the document --format json prints
);
CREATE TABLE IF NOT EXISTS ll_reconciliation_rows (
    reconciliation_id INTEGER NOT NULL,
    seq               INTEGER NOT NULL,
    entity            VARCHAR,            -- NULL when not a key of the control file
    account           VARCHAR,
    currency          VARCHAR,
    measure           VARCHAR NOT NULL,   -- rows, debit, credit or net
    expected          VARCHAR,            -- exact decimal text; NULL when the key is only in the ledger
    loaded            VARCHAR NOT NULL,
    difference        VARCHAR NOT NULL,   -- loaded - expected
    status            VARCHAR NOT NULL,
    control_line      BIGINT              -- the control file's line of the key
);

-- name: reconcile_next_id
SELECT coalesce(max(reconciliation_id), 0) + 1 FROM ll_reconciliation;

-- name: reconcile_insert
-- Bound: id, created_at, path, name, sha256, bytes, shape, keys JSON,
-- compared, differing, only in control, only in ledger, ties, accepted,
-- verdict, result JSON. No placeholders.
INSERT INTO ll_reconciliation VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?);

-- name: reconcile_insert_row
-- Bound: id, seq, entity, account, currency, measure, expected, loaded,
-- difference, status, control line. No placeholders.
INSERT INTO ll_reconciliation_rows VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?);

-- name: reconcile_exists
-- Whether any reconciliation is stored: 1 when the table exists. No bound
-- parameters, no placeholders.
SELECT count(*) FROM information_schema.tables WHERE table_name = 'll_reconciliation' AND table_schema = 'main';

-- name: reconcile_latest
-- The latest stored reconciliation's result document. No bound
-- parameters, no placeholders.
SELECT result FROM ll_reconciliation ORDER BY reconciliation_id DESC LIMIT 1;

-- name: reconcile_currencies
-- The currencies of a ledger that has a currency column: how many, and
-- the first few. No bound parameters, no placeholders.
SELECT count(DISTINCT currency), coalesce(string_agg(DISTINCT currency, ', ' ORDER BY currency), '') FROM ledger;
