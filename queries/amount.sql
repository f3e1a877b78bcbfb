-- Amount parsing, as ledgers really write amounts. The grammar (after
-- spaces between digits become a thousands mark and other white space is
-- dropped; white space is every Unicode White_Space character, as Go's
-- unicode.IsSpace):
--
--   [ "(" ] [sign] [currency] [sign] number [exponent] [currency] ["-"] ["CR"|"DR"] [ ")" ]
--
-- with at most one sign marker in all (a leading or trailing minus, a plus,
-- parentheses, or a CR/DR suffix where CR means negative), at most one
-- currency marker (an ISO code of three capital letters or a symbol), and a
-- number whose thousands marks sit where thousands marks belong. The
-- reference implementation in Go (engine/amount) states the same grammar and
-- is checked against this one by a differential test and a fuzzer.
--
-- A group of digits before the first thousands mark does not start with 0
-- (0,001 is no thousands-grouped number: it is a decimal comma read without
-- --decimal-comma, and is rejected rather than read as 1).
--
-- Spaces between digits become a mark in two passes: one pass of the
-- pattern consumes the digit after a run, so in '1 0 00' the run after the
-- 0 is left for the second (found by FuzzAmount: it read 1000).
--
-- The exponent is applied here, by moving the decimal point in the text,
-- and DuckDB casts plain decimal text only: its own cast of exponent text
-- rounds wrongly when the value lies below the last kept place (it reads
-- '5e-4' as 0.01 at two places).

-- name: create_amount_macros
CREATE OR REPLACE TEMP MACRO ll_amount_parts(s) AS regexp_extract(
    regexp_replace(
        regexp_replace(regexp_replace(s, '([0-9])[ \t\x{00A0}\x{202F}\x{2007}\x{2009}]+([0-9])', '\1''\2', 'g'),
            '([0-9])[ \t\x{00A0}\x{202F}\x{2007}\x{2009}]+([0-9])', '\1''\2', 'g'),
        '[\t\n\x{000B}\f\r \x{0085}\x{00A0}\x{1680}\x{2000}-\x{200A}\x{2028}\x{2029}\x{202F}\x{205F}\x{3000}]+', '', 'g'),
    '^(\()?([+-])?([A-Z]{3}|[$€£¥₹])?([+-])?([0-9][0-9.,'']*|[.,][0-9]+)([eE][+-]?[0-9]+)?([A-Z]{3}|[$€£¥₹])?(-)?(CR|DR|Cr|Dr|cr|dr)?(\))?$',
    ['lp', 's1', 'c1', 's2', 'num', 'ex', 'c2', 's3', 'cd', 'rp']);
CREATE OR REPLACE TEMP MACRO ll_amount_signs(p) AS
    (p.s1 <> '')::INTEGER + (p.s2 <> '')::INTEGER + (p.s3 <> '')::INTEGER
    + (p.lp <> '')::INTEGER + (p.cd <> '')::INTEGER;
CREATE OR REPLACE TEMP MACRO ll_amount_negative(p) AS
    p.s1 = '-' OR p.s2 = '-' OR p.s3 = '-' OR p.lp = '(' OR upper(p.cd) = 'CR';
CREATE OR REPLACE TEMP MACRO ll_amount_grouping_ok(num, dc) AS
    regexp_matches(num, '[0-9]') AND CASE WHEN dc
        THEN regexp_full_match(num, '([1-9][0-9]{0,2}([.''][0-9]{3})+|[0-9]*)(,[0-9]*)?')
        ELSE regexp_full_match(num, '([1-9][0-9]{0,2}(,[0-9]{3})+|[1-9][0-9]?(,[0-9]{2})+,[0-9]{3}|[1-9][0-9]{0,2}(''[0-9]{3})+|[0-9]*)(\.[0-9]*)?')
    END;
CREATE OR REPLACE TEMP MACRO ll_amount_digits(num, dc) AS CASE WHEN dc
    THEN replace(regexp_replace(num, '[.'']', '', 'g'), ',', '.')
    ELSE regexp_replace(num, '[,'']', '', 'g') END;
CREATE OR REPLACE TEMP MACRO ll_amount_shape_ok(p, dc) AS
    p.num <> ''
    AND ll_amount_signs(p) <= 1
    AND (p.lp = '') = (p.rp = '')
    AND (p.c1 = '' OR p.c2 = '')
    AND ll_amount_grouping_ok(p.num, dc);
-- The exponent of 'e-0005' as a number; one too long for BIGINT stands
-- for any exponent beyond the reach of the shift below.
CREATE OR REPLACE TEMP MACRO ll_amount_exponent(ex) AS coalesce(TRY_CAST(substr(ex, 2) AS BIGINT),
    CASE WHEN substr(ex, 2, 1) = '-' THEN -1000000 ELSE 1000000 END);
-- m * 10^k as plain decimal text, for a digit string m: '0' when m is zero
-- or the value lies below 10^-40 (it rounds to zero at any scale), a text
-- no cast takes when it lies beyond 10^40 (out of range for any DECIMAL).
CREATE OR REPLACE TEMP MACRO ll_amount_pad(m, k) AS repeat('0', greatest(0, 1 - k - length(m))::INTEGER) || m;
CREATE OR REPLACE TEMP MACRO ll_amount_shift_digits(m, k) AS CASE
    WHEN NOT regexp_matches(m, '[1-9]') THEN '0'
    WHEN k > 40 THEN 'out of range'
    WHEN k >= 0 THEN m || repeat('0', k::INTEGER)
    WHEN -k > length(m) + 40 THEN '0'
    ELSE left(ll_amount_pad(m, k), (length(ll_amount_pad(m, k)) + k)::INTEGER) || '.' || right(ll_amount_pad(m, k), (-k)::INTEGER)
    END;
-- d (digits with at most one decimal point) times 10 to the exponent ex.
CREATE OR REPLACE TEMP MACRO ll_amount_shift(d, ex) AS CASE WHEN ex = '' THEN d
    ELSE ll_amount_shift_digits(replace(d, '.', ''),
        ll_amount_exponent(ex) - CASE WHEN contains(d, '.') THEN length(d) - strpos(d, '.') ELSE 0 END)
    END;
CREATE OR REPLACE TEMP MACRO ll_amount_canonical_parts(p, dc) AS CASE WHEN ll_amount_shape_ok(p, dc)
    THEN (CASE WHEN ll_amount_negative(p) THEN '-' ELSE '' END) || ll_amount_shift(ll_amount_digits(p.num, dc), p.ex)
    END;
-- No subquery here: a subquery in a macro is planned as a join over every
-- row, even inside a CASE branch that few rows reach.
CREATE OR REPLACE TEMP MACRO ll_amount_canonical(s, dc) AS ll_amount_canonical_parts(ll_amount_parts(s), dc);
-- A text that is missing or white space only.
CREATE OR REPLACE TEMP MACRO ll_amount_blank(s) AS
    s IS NULL OR regexp_full_match(s, '[\t\n\x{000B}\f\r \x{0085}\x{00A0}\x{1680}\x{2000}-\x{200A}\x{2028}\x{2029}\x{202F}\x{205F}\x{3000}]*');
CREATE OR REPLACE TEMP MACRO ll_amount_reason_parts(s, p, dc) AS CASE
        WHEN ll_amount_blank(s) THEN 'blank amount'
        WHEN p.num = '' THEN 'not a number'
        WHEN ll_amount_signs(p) > 1 THEN 'more than one sign marker'
        WHEN (p.lp = '') <> (p.rp = '') THEN 'unbalanced parentheses'
        WHEN p.c1 <> '' AND p.c2 <> '' THEN 'two currency markers'
        WHEN NOT ll_amount_grouping_ok(p.num, dc) THEN
            CASE WHEN dc THEN 'digit grouping does not fit a decimal comma'
                 ELSE 'misplaced thousands separator or decimal point (is it a decimal comma?)' END
        ELSE 'out of range'
        END;
CREATE OR REPLACE TEMP MACRO ll_amount_reason(s, dc) AS ll_amount_reason_parts(s, ll_amount_parts(s), dc);
-- The currency an amount text's marker names: a three-letter code as
-- written, the code of a symbol ($ USD, € EUR, £ GBP, ¥ JPY, ₹ INR), ''
-- for a text without a marker, NULL for a text that is no amount at all.
-- engine/amount.Currency states the same rule.
CREATE OR REPLACE TEMP MACRO ll_amount_currency_of(m) AS CASE m
    WHEN '$' THEN 'USD' WHEN '€' THEN 'EUR' WHEN '£' THEN 'GBP' WHEN '¥' THEN 'JPY' WHEN '₹' THEN 'INR'
    ELSE m END;
CREATE OR REPLACE TEMP MACRO ll_amount_currency(p) AS CASE WHEN p.num <> ''
    THEN ll_amount_currency_of(CASE WHEN p.c1 <> '' THEN p.c1 ELSE p.c2 END) END;
