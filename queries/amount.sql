-- Amount parsing, as ledgers really write amounts. The grammar (after
-- spaces between digits become a thousands mark and other white space is
-- dropped):
--
--   [ "(" ] [sign] [currency] [sign] number [exponent] [currency] ["-"] ["CR"|"DR"] [ ")" ]
--
-- with at most one sign marker in all (a leading or trailing minus, a plus,
-- parentheses, or a CR/DR suffix where CR means negative), at most one
-- currency marker (an ISO code of three capital letters or a symbol), and a
-- number whose thousands marks sit where thousands marks belong. The
-- reference implementation in Go (engine/amount) states the same grammar and
-- is checked against this one by a differential test and a fuzzer.

-- name: create_amount_macros
CREATE OR REPLACE TEMP MACRO ll_amount_parts(s) AS regexp_extract(
    regexp_replace(
        regexp_replace(s, '([0-9])[ \t\x{00A0}\x{202F}\x{2007}\x{2009}]+([0-9])', '\1''\2', 'g'),
        '[\s\x{00A0}\x{202F}\x{2007}\x{2009}]+', '', 'g'),
    '^(\()?([+-])?([A-Z]{3}|[$€£¥₹])?([+-])?([0-9][0-9.,'']*|[.,][0-9]+)([eE][+-]?[0-9]+)?([A-Z]{3}|[$€£¥₹])?(-)?(CR|DR|Cr|Dr|cr|dr)?(\))?$',
    ['lp', 's1', 'c1', 's2', 'num', 'ex', 'c2', 's3', 'cd', 'rp']);
CREATE OR REPLACE TEMP MACRO ll_amount_signs(p) AS
    (p.s1 <> '')::INTEGER + (p.s2 <> '')::INTEGER + (p.s3 <> '')::INTEGER
    + (p.lp <> '')::INTEGER + (p.cd <> '')::INTEGER;
CREATE OR REPLACE TEMP MACRO ll_amount_negative(p) AS
    p.s1 = '-' OR p.s2 = '-' OR p.s3 = '-' OR p.lp = '(' OR upper(p.cd) = 'CR';
CREATE OR REPLACE TEMP MACRO ll_amount_grouping_ok(num, dc) AS
    regexp_matches(num, '[0-9]') AND CASE WHEN dc
        THEN regexp_full_match(num, '([0-9]{1,3}([.''][0-9]{3})+|[0-9]*)(,[0-9]*)?')
        ELSE regexp_full_match(num, '([0-9]{1,3}(,[0-9]{3})+|[0-9]{1,2}(,[0-9]{2})+,[0-9]{3}|[0-9]{1,3}(''[0-9]{3})+|[0-9]*)(\.[0-9]*)?')
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
CREATE OR REPLACE TEMP MACRO ll_amount_canonical_parts(p, dc) AS CASE WHEN ll_amount_shape_ok(p, dc)
    THEN (CASE WHEN ll_amount_negative(p) THEN '-' ELSE '' END) || ll_amount_digits(p.num, dc) || p.ex
    END;
-- No subquery here: a subquery in a macro is planned as a join over every
-- row, even inside a CASE branch that few rows reach.
CREATE OR REPLACE TEMP MACRO ll_amount_canonical(s, dc) AS ll_amount_canonical_parts(ll_amount_parts(s), dc);
CREATE OR REPLACE TEMP MACRO ll_amount_reason_parts(s, p, dc) AS CASE
        WHEN s IS NULL OR trim(s) = '' THEN 'blank amount'
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
