package countsql

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math/big"
	"regexp"
	"strings"

	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/queries"
)

// Engines that count: each is tested against a real server of its kind
// (see the package's tests); any other engine is refused.
var Engines = []string{"duckdb", "postgresql", "clickhouse"}

// Segment is one segment column of the counting query: the name the
// counts give it (the CSV column by_NAME) and the table's column it reads.
// Month, Quarter and Year format a date column as YYYY-MM, YYYY-Qn and
// YYYY, as the local --by month, quarter and year do (at most one is set).
type Segment struct {
	Name    string `json:"name"`
	Column  string `json:"column"`
	Month   bool   `json:"month,omitempty"`
	Quarter bool   `json:"quarter,omitempty"`
	Year    bool   `json:"year,omitempty"`
}

// Spec says what to count and where: everything the query needs, and
// everything `scan --counts` needs to read its result. It is written into
// the query's first line, so that the query text carries its own spec.
type Spec struct {
	Engine  string    `json:"engine"`
	Table   string    `json:"table"`
	Amount  string    `json:"amount"` // the amount column
	Scale   int       `json:"scale"`  // decimal places: units = amount * 10^scale
	By      []Segment `json:"by,omitempty"`
	Where   string    `json:"where,omitempty"` // a predicate in the engine's own SQL, as the user wrote it
	Signs   string    `json:"signs"`
	Min     string    `json:"min"`
	LastTwo string    `json:"last_two"`
	// LastTwoAll counts the last two digits of every tested amount, not
	// only of those at or above the local scan's last-two minimum
	// (scan --last-two-all).
	LastTwoAll bool `json:"last_two_all"`

	// Test is what the query counts: "" for the digit battery, "limits"
	// for the limit probe's bands, "ranges" for the range bands.
	Test string `json:"test,omitempty"`
	// Limits (limits: nil for the round values within the amounts) and
	// Width (limits: the band's fraction of the limit).
	Limits []float64 `json:"limits,omitempty"`
	Width  float64   `json:"width,omitempty"`
	// Layout is the range bands' layout (ranges).
	Layout *ranges.Layout `json:"layout,omitempty"`
	// Grid is where the band query cuts the amounts, in units (filled by
	// Query from the test's options).
	Grid *Grid `json:"grid,omitempty"`
}

// header starts the first line of every emitted query.
const header = "-- leadline count-sql "

var ident = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

// WithDefaults fills the population's defaults (those of the local scan).
func (s Spec) WithDefaults() Spec {
	if s.Signs == "" {
		s.Signs = population.DefaultSigns
	}
	if s.Min == "" {
		s.Min = population.DefaultMin
	}
	if s.LastTwo == "" {
		s.LastTwo = "scale"
	}
	s.Engine = strings.ToLower(strings.TrimSpace(s.Engine))
	if s.Engine == "postgres" {
		s.Engine = "postgresql"
	}
	return s.bandDefaults()
}

// Check validates the spec (after WithDefaults).
func (s Spec) Check() error {
	d := dialects[s.Engine]
	if d == nil {
		return fmt.Errorf("--engine %q: give one of %s (the engines leadline is tested against)", s.Engine, strings.Join(Engines, ", "))
	}
	if err := checkName(s.Table, true); err != nil {
		return fmt.Errorf("--table %q: %w", s.Table, err)
	}
	if err := checkName(s.Amount, false); err != nil {
		return fmt.Errorf("--map amount=%q: %w", s.Amount, err)
	}
	if s.Scale < 0 || s.Scale > 9 {
		return fmt.Errorf("--scale %d: give the amount's decimal places, 0 to 9", s.Scale)
	}
	seen := map[string]bool{}
	for _, b := range s.By {
		if !ident.MatchString(b.Name) {
			return fmt.Errorf("--by %q: a segment's name is letters, digits and _", b.Name)
		}
		if seen[strings.ToLower(b.Name)] {
			return fmt.Errorf("--by %s is given twice", b.Name)
		}
		seen[strings.ToLower(b.Name)] = true
		if err := checkName(b.Column, false); err != nil {
			return fmt.Errorf("--by %s=%s: %w", b.Name, b.Column, err)
		}
		if (b.Month && b.Quarter) || (b.Month && b.Year) || (b.Quarter && b.Year) {
			return fmt.Errorf("--by %s=%s: one period of a date: year, quarter or month", b.Name, b.Column)
		}
	}
	if err := population.CheckSigns(s.Signs); err != nil {
		return err
	}
	if _, err := s.MinUnits(); err != nil {
		return err
	}
	if s.LastTwo != "scale" && s.LastTwo != "units" {
		return fmt.Errorf("--last-two %q: give scale or units", s.LastTwo)
	}
	if err := s.checkTest(); err != nil {
		return err
	}
	return checkWhere(s.Where)
}

// checkName accepts a plain identifier (table: schema-qualified with dots).
func checkName(n string, dotted bool) error {
	parts := []string{n}
	if dotted {
		parts = strings.Split(n, ".")
	}
	for _, p := range parts {
		if !ident.MatchString(p) {
			return fmt.Errorf("give a plain name (letters, digits and _%s)", map[bool]string{true: "; schema.table for a schema", false: ""}[dotted])
		}
	}
	return nil
}

// checkWhere keeps the user's predicate inside its parentheses: it is the
// engine's SQL, printed for the user to run there, never run by leadline,
// but it must not end the statement, open a comment or unbalance the
// query around it.
func checkWhere(w string) error {
	if strings.TrimSpace(w) == "" {
		return nil
	}
	depth := 0
	var quote rune
	for _, r := range w {
		switch {
		case quote != 0:
			if r == quote {
				quote = 0
			}
		case r == '\'' || r == '"' || r == '`':
			quote = r
		case r == '(':
			depth++
		case r == ')':
			depth--
			if depth < 0 {
				return fmt.Errorf("--where %q: a ')' without its '('", w)
			}
		case r == ';':
			return fmt.Errorf("--where %q: one predicate, without ';'", w)
		}
	}
	if quote != 0 || depth != 0 {
		return fmt.Errorf("--where %q: unbalanced quotes or parentheses", w)
	}
	if strings.Contains(w, "--") || strings.Contains(w, "/*") || strings.ContainsAny(w, "\n\r") {
		return fmt.Errorf("--where %q: one line, without comments", w)
	}
	return nil
}

// MinUnits is the smallest |amount| tested, in units: ceil(min * 10^scale),
// and at least 1 (zero is counted apart).
func (s Spec) MinUnits() (int64, error) {
	r, ok := new(big.Rat).SetString(strings.TrimSpace(s.Min))
	if !ok || strings.ContainsAny(s.Min, "/eE") {
		return 0, fmt.Errorf("--min %q: give a plain decimal number such as 10 or 0.01", s.Min)
	}
	if r.Sign() < 0 {
		return 0, fmt.Errorf("--min %s: the minimum is on absolute amounts; give 0 or more (choose the sign with --signs)", s.Min)
	}
	v := new(big.Rat).Mul(r, new(big.Rat).SetInt(pow10(s.Scale)))
	q, m := new(big.Int).DivMod(v.Num(), v.Denom(), new(big.Int))
	if m.Sign() != 0 {
		q.Add(q, big.NewInt(1))
	}
	if !q.IsInt64() || q.Int64() > maxUnits {
		return 0, fmt.Errorf("--min %s is above the largest amount counted (%d units)", s.Min, int64(maxUnits))
	}
	return max(q.Int64(), 1), nil
}

// maxUnits: |units| is a 64-bit integer.
const maxUnits = 1<<63 - 1

func pow10(n int) *big.Int { return new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(n)), nil) }

// dialect is what differs between engines: quoting, integer division,
// casts and text functions. The statement itself is in queries/.
type dialect struct {
	stmt    string
	quote   func(string) string
	div     func(x, n string) string // integer division of a non-negative integer
	int64   func(x string) string    // the value as a 64-bit integer (a no-op where types already agree)
	units   func(col string, scale int) string
	text    func(col string) string // segment value as text, NULL for blank
	month   func(col string) string // YYYY-MM of a date
	quarter func(col string) string // YYYY-Qn of a date
	year    func(col string) string // YYYY of a date
	lit     func(v string) string   // a string literal
}

// sqlString is a standard SQL string literal (quotes doubled).
func sqlString(v string) string { return "'" + strings.ReplaceAll(v, "'", "''") + "'" }

var dialects = map[string]*dialect{
	"duckdb": {
		stmt:  "countsql_duckdb_battery",
		quote: queries.QuoteIdent,
		div:   func(x, n string) string { return x + " // " + n },
		int64: func(x string) string { return x },
		units: func(c string, s int) string {
			return fmt.Sprintf("CAST(CAST(%s AS DECIMAL(38,%d)) * %s AS BIGINT)", c, s, pow10(s))
		},
		text: func(c string) string {
			return fmt.Sprintf("CASE WHEN nullif(trim(CAST(%[1]s AS VARCHAR)), '') IS NULL THEN NULL ELSE CAST(%[1]s AS VARCHAR) END", c)
		},
		month: func(c string) string { return fmt.Sprintf("strftime(CAST(%s AS DATE), '%%Y-%%m')", c) },
		quarter: func(c string) string {
			return fmt.Sprintf("strftime(CAST(%[1]s AS DATE), '%%Y') || '-Q' || CAST(quarter(CAST(%[1]s AS DATE)) AS VARCHAR)", c)
		},
		year: func(c string) string { return fmt.Sprintf("strftime(CAST(%s AS DATE), '%%Y')", c) },
		lit:  sqlString,
	},
	"postgresql": {
		stmt:  "countsql_postgresql_battery",
		quote: queries.QuoteIdent,
		div:   func(x, n string) string { return x + " / " + n },
		int64: func(x string) string { return x },
		units: func(c string, s int) string {
			return fmt.Sprintf("CAST(CAST(%s AS numeric(38,%d)) * %s AS bigint)", c, s, pow10(s))
		},
		text: func(c string) string {
			return fmt.Sprintf("CASE WHEN btrim(CAST(%[1]s AS text)) = '' THEN NULL ELSE CAST(%[1]s AS text) END", c)
		},
		month:   func(c string) string { return fmt.Sprintf("to_char(CAST(%s AS date), 'YYYY-MM')", c) },
		quarter: func(c string) string { return fmt.Sprintf("to_char(CAST(%s AS date), 'YYYY-\"Q\"Q')", c) },
		year:    func(c string) string { return fmt.Sprintf("to_char(CAST(%s AS date), 'YYYY')", c) },
		lit:     sqlString, // with standard_conforming_strings on, PostgreSQL's default since 9.1
	},
	"clickhouse": {
		stmt:  "countsql_clickhouse_battery",
		quote: func(s string) string { return "`" + s + "`" },
		div:   func(x, n string) string { return "intDiv(" + x + ", " + n + ")" },
		int64: func(x string) string { return "toInt64(" + x + ")" },
		// Decimal128 holds any Decimal exactly; ClickHouse converts a
		// Float column by truncation, so the amount must be a Decimal or
		// an integer column (see the package documentation).
		units: func(c string, s int) string {
			return fmt.Sprintf("toInt64(toDecimal128(%s, %d) * %s)", c, s, pow10(s))
		},
		text: func(c string) string {
			return fmt.Sprintf("if(replaceAll(toString(%[1]s), ' ', '') = '', NULL, toString(%[1]s))", c)
		},
		month: func(c string) string { return fmt.Sprintf("substring(toString(toDate(%s)), 1, 7)", c) },
		quarter: func(c string) string {
			return fmt.Sprintf("concat(substring(toString(toDate(%[1]s)), 1, 4), '-Q', toString(toQuarter(toDate(%[1]s))))", c)
		},
		year: func(c string) string { return fmt.Sprintf("substring(toString(toDate(%s)), 1, 4)", c) },
		// ClickHouse reads backslash escapes inside string literals.
		lit: func(v string) string {
			return "'" + strings.NewReplacer(`\`, `\\`, "'", `\'`).Replace(v) + "'"
		},
	},
}

// first3 is the first three significant digits of a (a >= 1, a 64-bit
// integer column) as a balanced tree of comparisons with powers of ten:
// the rule of ll_first3_i64 in battery.sql, written without a macro.
func (d *dialect) first3(a string) string {
	var tree func(lo, hi int) string // digit counts lo..hi
	tree = func(lo, hi int) string {
		if lo == hi {
			switch {
			case lo == 1:
				return d.int64(a + " * 100")
			case lo == 2:
				return d.int64(a + " * 10")
			case lo == 3:
				return d.int64(a)
			}
			return d.int64(d.div(a, pow10(lo-3).String()))
		}
		mid := (lo + hi) / 2
		return fmt.Sprintf("CASE WHEN %s < %s THEN %s ELSE %s END", a, pow10(mid), tree(lo, mid), tree(mid+1, hi))
	}
	return tree(1, 19)
}

// Query returns the counting query for the spec, its first line a comment
// carrying the spec (read back by ReadQuery).
func Query(s Spec) (string, error) {
	s = s.WithDefaults()
	if err := s.Check(); err != nil {
		return "", err
	}
	if s.Test != "" {
		return bandQuery(s)
	}
	d := dialects[s.Engine]
	minU, _ := s.MinUnits()
	f := s.frame(d)
	other := map[string]string{"positive": "u < 0", "negative": "u > 0", "both": "1 = 0"}[s.Signs]
	last2 := s.lastTwoSQL(d, "a")
	q := queries.Render(d.stmt, map[string]string{
		"by_names": f.names, "by_select": f.sel, "table": f.table,
		"filter": f.filter, "units": d.units(d.quote(s.Amount), s.Scale), "other_sign": other,
		"min_units": fmt.Sprint(minU), "first3": d.first3("a"), "last2": d.int64(last2),
		"last2_min": s.lastTwoMinUnits().String(),
	})
	return withSpec(s, q)
}

// withSpec puts the spec, as JSON, on the query's first line.
func withSpec(s Spec, q string) (string, error) {
	spec, err := json.Marshal(s)
	if err != nil {
		return "", err
	}
	return header + string(spec) + "\n" + q + "\n", nil
}

// segment is a segment's value as the query selects it: the column as
// text, or the period of a date.
func (d *dialect) segment(b Segment) string {
	col := d.quote(b.Column)
	switch {
	case b.Month:
		return d.month(col)
	case b.Quarter:
		return d.quarter(col)
	case b.Year:
		return d.year(col)
	}
	return d.text(col)
}

// frame is what every query of a spec starts from: the segment columns
// (their names, and their values as selected), the table and the filter.
type frame struct {
	names, sel, table, filter string
}

func (s Spec) frame(d *dialect) frame {
	var sel, names []string
	for _, b := range s.By {
		v := d.segment(b)
		n := d.quote("by_" + b.Name)
		sel = append(sel, v+" AS "+n)
		names = append(names, n)
	}
	list := func(x []string) string {
		if len(x) == 0 {
			return ""
		}
		return strings.Join(x, ", ") + ", "
	}
	table := make([]string, 0, 2)
	for _, p := range strings.Split(s.Table, ".") {
		table = append(table, d.quote(p))
	}
	filter := "1 = 1"
	if strings.TrimSpace(s.Where) != "" {
		filter = "(" + strings.TrimSpace(s.Where) + ")"
	}
	return frame{names: list(names), sel: list(sel), table: strings.Join(table, "."), filter: filter}
}

// lastTwoSQL is the last two digits of a (|units|, a column) as the
// spec reads them: of the units, or of the whole currency units with
// LastTwo "units".
func (s Spec) lastTwoSQL(d *dialect, a string) string {
	if s.LastTwo == "units" && s.Scale > 0 {
		return "(" + d.div(a, pow10(s.Scale).String()) + ") % 100"
	}
	return a + " % 100"
}

// lastTwoMinUnits is the smallest |units| counted under kind l: the local
// scan's rule (population.LastTwoMinUnits), or 0 with LastTwoAll.
func (s Spec) lastTwoMinUnits() *big.Int {
	if s.LastTwoAll {
		return new(big.Int)
	}
	return population.LastTwoMinUnits(s.LastTwo, population.AmountType{Scale: s.Scale})
}

// ReadQuery reads the spec back from a query's first line.
func ReadQuery(text string) (Spec, error) {
	first, _, _ := strings.Cut(text, "\n")
	rest, ok := strings.CutPrefix(strings.TrimSpace(first), strings.TrimSpace(header))
	if !ok {
		return Spec{}, fmt.Errorf("the query does not start with the line %q that leadline count-sql writes: give the query file count-sql printed, unchanged", strings.TrimSpace(header)+" {...}")
	}
	var s Spec
	if err := json.Unmarshal([]byte(strings.TrimSpace(rest)), &s); err != nil {
		return Spec{}, fmt.Errorf("the query's first line: %w", err)
	}
	s = s.WithDefaults()
	if err := s.Check(); err != nil {
		return Spec{}, fmt.Errorf("the query's first line: %w", err)
	}
	return s, nil
}

// SHA256 is the hex SHA-256 of a text.
func SHA256(b []byte) string {
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}
