package pack

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"

	duckdb "github.com/duckdb/duckdb-go/v2"
	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/duplicates"
	"github.com/leadline/leadline/engine/journal"
	"github.com/leadline/leadline/engine/limits"
	"github.com/leadline/leadline/engine/load"
	"github.com/leadline/leadline/engine/output"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/sample"
	"github.com/leadline/leadline/engine/segment"
	"github.com/leadline/leadline/engine/sqlguard"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
)

// Defaults of a pack.
const (
	DefaultScale          = 2
	DefaultPrecision      = 18
	DefaultSampleSize     = 25
	DefaultMinSegmentRows = 1000
	DefaultExtractTop     = 4
	DefaultExtractRows    = 1000
	DefaultCheckRows      = 100_000
)

// Plan is a checked pack, resolved and ready to run: absolute paths, the
// files each glob matched, load options, filters as predicates and every
// step's parameters with the defaults filled in.
type Plan struct {
	Pack       *Pack
	Workspace  string // absolute path, or :memory:
	Scale      int
	Precision  int
	AmountType string
	Sources    []PlannedSource
	Filters    map[string]string // name -> predicate
	Battery    *BatteryPlan
	Limits     *limits.Options
	Ranges     *ranges.Options
	Duplicates *duplicates.Options
	Extracts   []ExtractPlan
	Checks     []CheckPlan
	// KeepFormulas writes CSV text cells as they are (csv_formulas = "keep").
	KeepFormulas bool
	Period       *journal.Period // [pack] period as dates, when it reads as one
	Control      *ControlPlan    // [control]: the reconciliation
}

// PlannedSource is a [[source]] with its files found and read.
type PlannedSource struct {
	Index   int
	Name    string
	Files   []string     // absolute, sorted, as the globs matched them
	Options load.Options // Map, Debit, Credit and the parsing rules
	Columns map[string][]string
}

// BatteryPlan holds the digit battery's parameters: the options (By is
// the first segmentation) and every segmentation, each run with the same
// options on its own columns.
type BatteryPlan struct {
	Options       battery.Options `json:"options"`
	Segmentations [][]string      `json:"segmentations"`
}

// ExtractPlan is one drill-down extract.
type ExtractPlan struct {
	Name    string `json:"name"`
	From    string `json:"from"`
	Test    string `json:"test,omitempty"`
	Top     int    `json:"top"`
	GroupBy string `json:"group_by,omitempty"`
	MaxRows int    `json:"max_rows"`
	// The sample drawn from the extract's records, if any; Drawn is filled
	// in by the run, so that the manifest's parameters record the draw.
	Sample     string       `json:"sample,omitempty"`
	SampleSize int          `json:"sample_size,omitempty"`
	Seed       int64        `json:"seed,omitempty"`
	Drawn      *SampleDrawn `json:"drawn,omitempty"`
}

// SampleDrawn records a sample as drawn (shared with drill --sample).
type SampleDrawn = drill.SampleDrawn

// CheckPlan is one extra SQL check, checked read-only, with its bound
// parameters.
type CheckPlan struct {
	Name    string                 `json:"name"`
	Title   string                 `json:"title"`
	SQL     string                 `json:"sql"`
	Params  map[string]any         `json:"params"`
	Kinds   map[string]output.Kind `json:"formats,omitempty"`
	MaxRows int                    `json:"max_rows"`
	Finding string                 `json:"finding"`
	// Order is the order of the parameters in the prepared statement.
	Order []string `json:"-"`
}

// Args returns the check's parameter values in the prepared statement's
// order. They are bound by position in that order, because the driver
// binds a $name it was not given by position without a word: Check has
// made sure that the names in the SQL and in the pack are the same.
func (c CheckPlan) Args() []any {
	out := make([]any, 0, len(c.Order))
	for _, n := range c.Order {
		out = append(out, c.Params[n])
	}
	return out
}

// paramNames prepares the query and returns its parameters' names in
// order ("" or digits for positional ? and $1 parameters).
func paramNames(ctx context.Context, conn *sql.Conn, q string) ([]string, error) {
	var names []string
	err := conn.Raw(func(dc any) error {
		pc, ok := dc.(driver.ConnPrepareContext)
		if !ok {
			return fmt.Errorf("the database driver cannot prepare statements")
		}
		st, err := pc.PrepareContext(ctx, q)
		if err != nil {
			return err
		}
		defer st.Close()
		ds, ok := st.(*duckdb.Stmt)
		if !ok {
			return fmt.Errorf("unexpected statement type %T", st)
		}
		for i := 1; i <= ds.NumInput(); i++ {
			n, err := ds.ParamName(i)
			if err != nil {
				return err
			}
			names = append(names, n)
		}
		return nil
	})
	return names, err
}

// Parameters returns every parameter of the plan, defaults filled in, for
// the manifest.
func (pl *Plan) Parameters() map[string]any {
	src := []map[string]any{}
	for _, s := range pl.Sources {
		src = append(src, map[string]any{
			"name": s.Name, "files": s.Files, "patterns": pl.Pack.Sources[s.Index].Files, "load": s.Options,
		})
	}
	out := map[string]any{
		"workspace":    pl.Workspace,
		"amount_type":  pl.AmountType,
		"sources":      src,
		"filters":      pl.Filters,
		"population":   pl.Pack.Population,
		"extracts":     pl.Extracts,
		"checks":       pl.Checks,
		"csv_formulas": map[bool]string{false: "quote", true: "keep"}[pl.KeepFormulas],
	}
	if pl.Battery != nil {
		out["battery"] = pl.Battery
	}
	if pl.Limits != nil {
		out["limits"] = pl.Limits
	}
	if pl.Ranges != nil {
		out["ranges"] = pl.Ranges
	}
	if pl.Duplicates != nil {
		out["duplicates"] = pl.Duplicates
	}
	if pl.Period != nil {
		out["period"] = pl.Period.String()
	}
	if pl.Control != nil {
		out["control"] = pl.Control
	}
	return out
}

// checker collects problems.
type checker struct {
	p          *Pack
	out        *Problems
	amountType population.AmountType // of the ledger the pack loads
}

func displayKey(path string) string {
	// Indices are shown from 1: source[1] is the first [[source]].
	re := regexp.MustCompile(`\[(\d+)\]`)
	return re.ReplaceAllStringFunc(path, func(m string) string {
		n, _ := strconv.Atoi(m[1 : len(m)-1])
		return "[" + strconv.Itoa(n+1) + "]"
	})
}

func (c *checker) errf(path, format string, args ...any) {
	c.add(Problem{File: c.p.File, Line: c.p.lines.Line(path), Key: displayKey(path), Message: fmt.Sprintf(format, args...)})
}

func (c *checker) warnf(path, format string, args ...any) {
	c.add(Problem{File: c.p.File, Line: c.p.lines.Line(path), Key: displayKey(path), Message: fmt.Sprintf(format, args...), Warning: true})
}

// add records a problem once (a default shared by several steps is
// checked for each of them).
func (c *checker) add(p Problem) {
	for _, q := range c.out.List {
		if q == p {
			return
		}
	}
	c.out.List = append(c.out.List, p)
}

// Check validates the whole pack before anything runs: unknown keys (with
// the likely intended key), values, the files behind every glob, every
// mapped column against the files' headers, filters and extra SQL checks
// against the ledger the sources would make (an empty copy in memory), and
// every step's parameters. All problems are collected; the plan is usable
// only when Problems holds no error.
func Check(ctx context.Context, p *Pack) (*Plan, *Problems) {
	c := &checker{p: p, out: &Problems{}}
	pl := &Plan{Pack: p, Filters: map[string]string{}}
	c.unknownKeys()
	c.header(pl)
	c.period(pl)
	c.control(pl)
	mem, err := workspace.Open(ctx, ":memory:", workspace.Options{})
	if err != nil {
		c.errf("", "opening a scratch database to check the pack: %v", err)
		c.out.sort()
		return pl, c.out
	}
	defer mem.Close()
	c.sources(ctx, mem, pl)
	schemaOK := c.mockLedger(ctx, mem, pl)
	c.filters(ctx, mem, pl, schemaOK)
	c.steps(ctx, mem, pl, schemaOK)
	c.checks(ctx, mem, pl, schemaOK)
	c.tableNames(pl)
	c.out.sort()
	return pl, c.out
}

func (c *checker) unknownKeys() {
	reported := map[string]bool{}
	for _, k := range c.p.undecoded {
		skip := false
		for i := 1; i < len(k); i++ {
			if reported[strings.Join(k[:i], ".")] {
				skip = true
				break
			}
		}
		if skip {
			continue
		}
		dotted := strings.Join(k, ".")
		reported[dotted] = true
		parent := k[:len(k)-1]
		name := k[len(k)-1]
		keys, _ := keysAt(parent)
		where := "at the top level"
		if len(parent) > 0 {
			where = "in [" + strings.Join(parent, ".") + "]"
			if _, isArray := arrayTables[parent[0]]; isArray && len(parent) == 1 {
				where = "in [[" + parent[0] + "]]"
			}
		}
		msg := fmt.Sprintf("unknown key %q %s", name, where)
		if s := closest(name, keys); s != "" {
			msg += fmt.Sprintf("; did you mean %q?", s)
		} else if len(keys) > 0 {
			msg += " (known keys: " + strings.Join(keys, ", ") + ")"
		}
		paths := c.p.lines.Match(dotted)
		if len(paths) == 0 {
			c.errf(strings.Join(parent, "."), "%s", msg)
			continue
		}
		for _, path := range paths {
			c.out.List = append(c.out.List, Problem{File: c.p.File, Line: c.p.lines.Line(path), Key: displayKey(path), Message: msg})
		}
	}
}

var arrayTables = map[string]bool{"source": true, "extract": true, "check": true}

func (c *checker) header(pl *Plan) {
	h := c.p.Pack
	if strings.TrimSpace(h.Name) == "" {
		c.errf("pack.name", "the pack needs a name: add name = \"...\" under [pack]")
	}
	if strings.TrimSpace(h.Client) == "" {
		c.errf("pack.client", "the pack needs the client's name: add client = \"...\" under [pack]")
	}
	if strings.TrimSpace(h.Period) == "" {
		c.warnf("pack.period", "no period given: add period = \"...\" under [pack] so that the results say what they cover")
	}
	pl.Scale, pl.Precision = DefaultScale, DefaultPrecision
	if h.Scale.Set() {
		v, err := h.Scale.Int()
		if err == nil {
			err = load.CheckAmountType(int(v), DefaultPrecision)
		}
		if err != nil {
			c.engineErr("pack.scale", err, nil)
		} else {
			pl.Scale = int(v)
		}
	}
	if h.Precision.Set() {
		v, err := h.Precision.Int()
		if err == nil {
			err = load.CheckAmountType(pl.Scale, int(v))
		}
		if err != nil {
			c.engineErr("pack.precision", err, nil)
		} else {
			pl.Precision = int(v)
		}
	}
	c.amountType = population.AmountType{Precision: pl.Precision, Scale: pl.Scale}
	pl.AmountType = c.amountType.SQL()
	switch strings.ToLower(strings.TrimSpace(h.CSVFormulas)) {
	case "", "quote":
	case "keep":
		pl.KeepFormulas = true
	default:
		c.errf("pack.csv_formulas", "csv_formulas %q: give \"quote\" (the default: text a spreadsheet would run as a formula gets a leading ') or \"keep\" (text as it is)", h.CSVFormulas)
	}
	switch ws := strings.TrimSpace(h.Workspace); {
	case ws == ":memory:":
		pl.Workspace = ws
	case ws == "":
		base := strings.TrimSuffix(filepath.Base(c.p.File), filepath.Ext(c.p.File))
		pl.Workspace = filepath.Join(c.p.Dir, base+".duckdb")
	case filepath.IsAbs(ws):
		pl.Workspace = filepath.Clean(ws)
	default:
		pl.Workspace = filepath.Join(c.p.Dir, ws)
	}
	if pl.Workspace != ":memory:" {
		if _, err := workspace.CheckFile(pl.Workspace); err != nil {
			c.errf("pack.workspace", "%v", err)
		}
	}
}

// sources expands the globs and reads each file's header.
func (c *checker) sources(ctx context.Context, mem *workspace.Workspace, pl *Plan) {
	if len(c.p.Sources) == 0 {
		c.errf("", "no [[source]]: add one with files = [\"extract.csv\"] (paths relative to the pack file)")
		return
	}
	owner := map[string]string{}
	for i, s := range c.p.Sources {
		key := fmt.Sprintf("source[%d]", i)
		ps := PlannedSource{Index: i, Name: s.Name, Columns: map[string][]string{}}
		if ps.Name == "" {
			ps.Name = fmt.Sprintf("source %d", i+1)
		}
		ps.Options = load.Options{Debit: s.Debit, Credit: s.Credit, DecimalComma: s.DecimalComma, DecimalPoint: s.DecimalPoint,
			MaxRejects: s.MaxRejects, TimeZone: s.TimeZone, Delimiter: s.Delimiter, Encoding: s.Encoding, DateFormat: s.DateFormat, Scale: pl.Scale, Precision: pl.Precision,
			Map: map[string]string{}, Sheet: s.Sheet, InPlace: s.InPlace}
		if len(s.Files) == 0 {
			c.errf(key+".files", "no files: give files = [\"extract.csv\"] or a pattern such as \"extracts/*.csv\" (relative to the pack file)")
		}
		for j, pat := range s.Files {
			fk := fmt.Sprintf("%s.files[%d]", key, j)
			if strings.TrimSpace(pat) == "" {
				c.errf(fk, "an empty file name")
				continue
			}
			full := pat
			if !filepath.IsAbs(full) {
				full = filepath.Join(c.p.Dir, pat)
			}
			var matches []string
			if strings.ContainsAny(pat, "*?[") {
				m, err := filepath.Glob(full)
				if err != nil {
					c.errf(fk, "pattern %q: %v", pat, err)
					continue
				}
				if len(m) == 0 {
					c.errf(fk, "pattern %q matches no file (looked in %s)", pat, filepath.Dir(full))
					continue
				}
				matches = m
			} else {
				matches = []string{full}
			}
			sort.Strings(matches)
			for _, m := range matches {
				st, err := os.Stat(m)
				if err != nil {
					c.errf(fk, "%s: no such file", pat)
					continue
				}
				if st.IsDir() {
					c.errf(fk, "%s is a folder: give files or a pattern such as %q", pat, filepath.Join(pat, "*.csv"))
					continue
				}
				if prev, dup := owner[m]; dup {
					c.errf(fk, "%s is already read by %s: give each file to one source only", m, prev)
					continue
				}
				owner[m] = displayKey(key)
				ps.Files = append(ps.Files, m)
			}
		}
		for canon, col := range s.Columns {
			ck := key + ".columns." + canon
			if err := load.CheckCanonical(canon, col); err != nil {
				msg := engineWords(err, map[string]string{"map": ""})
				if sug := closest(canon, load.Canonical); sug != "" {
					msg += fmt.Sprintf("; did you mean %q?", sug)
				}
				c.errf(ck, "%s", msg)
				continue
			}
			if strings.TrimSpace(col) == "" {
				c.errf(ck, "empty column name: name the file's column, or delete the line")
				continue
			}
			ps.Options.Map[canon] = col
		}
		if err := load.CheckDebitCredit(s.Columns["amount"] != "", s.Debit, s.Credit); err != nil {
			c.engineErr(key+".debit", err, map[string]string{"map": "[source.columns]"})
		}
		// Delimiter, decimal marks, max_rejects, time_zone, date_format
		// and encoding: the load's own checks.
		for _, err := range load.CheckSettings(ctx, mem, ps.Options) {
			c.engineErr(fieldKey(key, err, nil), err, nil)
		}
		if _, err := load.NormalizeEncoding(s.Encoding); err != nil {
			c.engineErr(key+".encoding", err, nil)
		}
		if s.InPlace {
			for _, f := range ps.Files {
				if format, _, err := load.FormatOf(f); err == nil {
					if err := load.CheckInPlace(c.rel(f), format); err != nil {
						c.engineErr(key+".in_place", err, nil)
						break
					}
				}
			}
		}
		if s.InPlace != c.p.Sources[0].InPlace {
			c.errf(key+".in_place", "in_place must be the same for every source: one workspace holds either copied rows or files in place")
		}
		// Headers: every mapped column must be in every file.
		for _, f := range ps.Files {
			cols, err := fileColumns(ctx, mem, f, ps.Options)
			if err != nil {
				c.errf(key+".files", "%v", err)
				continue
			}
			ps.Columns[f] = cols
			rel := c.rel(f)
			has := map[string]bool{}
			for _, n := range cols {
				has[strings.ToLower(n)] = true
			}
			missing := false
			check := func(k, col string) {
				if col == "" || has[strings.ToLower(col)] {
					return
				}
				missing = true
				msg := fmt.Sprintf("no column %q in %s (its columns: %s)", col, rel, strings.Join(cols, ", "))
				if sug := closest(col, cols); sug != "" {
					msg += fmt.Sprintf("; did you mean %q?", sug)
				}
				c.errf(k, "%s", msg)
			}
			canons := make([]string, 0, len(ps.Options.Map))
			for k := range ps.Options.Map {
				canons = append(canons, k)
			}
			sort.Strings(canons)
			for _, k := range canons {
				check(key+".columns."+k, ps.Options.Map[k])
			}
			check(key+".debit", s.Debit)
			check(key+".credit", s.Credit)
			if missing {
				continue
			}
			if _, err := load.Resolve(rel, cols, ps.Options.Map, s.Debit, s.Credit); err != nil {
				c.errf(key+".columns", "%v", err)
			}
		}
		pl.Sources = append(pl.Sources, ps)
	}
}

func (c *checker) rel(path string) string {
	if r, err := filepath.Rel(c.p.Dir, path); err == nil && !strings.HasPrefix(r, "..") {
		return filepath.ToSlash(r)
	}
	return path
}

// fileColumns reads a file's column names without loading it.
func fileColumns(ctx context.Context, mem *workspace.Workspace, path string, o load.Options) ([]string, error) {
	format, _, err := load.FormatOf(path)
	if err != nil {
		return nil, err
	}
	if format == "csv" {
		src, err := load.ExamineCSV(path, o.Delimiter, o.Encoding)
		if err != nil {
			return nil, err
		}
		return src.Columns, nil
	}
	if format == "xlsx" {
		return load.XLSXColumns(path, o)
	}
	rows, err := mem.Conn.QueryContext(ctx, queries.Render("pack_parquet_columns", map[string]string{"path": queries.QuoteString(load.ExactPath(path))}))
	if err != nil {
		return nil, fmt.Errorf("%s: not a readable Parquet file: %s", path, firstLine(err.Error()))
	}
	defer rows.Close()
	var cols []string
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			return nil, err
		}
		cols = append(cols, n)
	}
	return cols, rows.Err()
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// mockLedger builds, in the scratch database, an empty ledger with the
// columns a load of the sources would give (the canonical columns and
// every original column kept as text, renamed as the loader renames them),
// so that filters, segments and checks are checked against the real shape
// before anything is loaded. It reports false when some source's files
// could not all be read: the shape is then incomplete, and only what does
// not depend on it (SQL that does not parse or would write) is checked.
func (c *checker) mockLedger(ctx context.Context, mem *workspace.Workspace, pl *Plan) bool {
	if _, err := mem.Conn.ExecContext(ctx, queries.Render("create_ledger", map[string]string{"amount_type": pl.AmountType})); err != nil {
		c.errf("pack", "building the ledger's shape: %v", err)
		return false
	}
	complete := len(pl.Sources) > 0
	used := map[string]bool{"row_id": true, "file_id": true, "line": true}
	for _, k := range load.Canonical {
		used[k] = true
	}
	added := map[string]bool{}
	for _, s := range pl.Sources {
		if len(s.Files) == 0 {
			complete = false
		}
		for _, f := range s.Files {
			cols, ok := s.Columns[f]
			if !ok {
				complete = false
				continue
			}
			// The columns a load keeps as text beside the canonical ones:
			// every column but those mapped to a text canonical column
			// (amount and posted keep their original text too).
			have := map[string]string{}
			for _, n := range cols {
				have[strings.ToLower(n)] = n
			}
			direct := map[string]bool{}
			for canon, n := range s.Options.Map {
				if canon != "amount" && canon != "posted" {
					if real, ok := have[strings.ToLower(n)]; ok {
						direct[real] = true
					}
				}
			}
			local := map[string]bool{}
			for k := range used {
				local[k] = true
			}
			for _, n := range cols {
				if direct[n] {
					continue
				}
				name := n
				if local[strings.ToLower(name)] {
					name = n + "_text"
					for k := 2; local[strings.ToLower(name)]; k++ {
						name = fmt.Sprintf("%s_text%d", n, k)
					}
				}
				local[strings.ToLower(name)] = true
				if added[strings.ToLower(name)] {
					continue
				}
				added[strings.ToLower(name)] = true
				if _, err := mem.Conn.ExecContext(ctx, queries.Render("pack_shape_add_column", map[string]string{"column": queries.QuoteIdent(name)})); err != nil {
					c.errf("pack", "building the ledger's shape: %v", err)
					return false
				}
			}
		}
	}
	return complete
}

func (c *checker) filters(ctx context.Context, mem *workspace.Workspace, pl *Plan, schemaOK bool) {
	names := make([]string, 0, len(c.p.Filters))
	for n := range c.p.Filters {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		pred := c.p.Filters[n]
		k := "filters." + n
		if strings.EqualFold(n, "none") {
			c.errf(k, "\"none\" means no filter; give this filter another name")
			continue
		}
		if strings.TrimSpace(pred) == "" {
			c.errf(k, "empty filter: write a predicate over the ledger's columns, e.g. \"source <> 'FEE'\"")
			continue
		}
		pl.Filters[n] = pred
		if !schemaOK {
			continue
		}
		if _, err := sqlguard.Filter(ctx, mem.Conn, pred); err != nil {
			c.errf(k, "%v", err)
		}
	}
}

// scope resolves a step's population: its own filter, signs and minimum, or
// the [population] defaults.
func (c *checker) scope(pl *Plan, key string, s Scope) population.Spec {
	pop := c.p.Population
	b := population.Spec{Signs: population.DefaultSigns, Min: population.DefaultMin}
	filter, filterKey := pop.Filter, "population.filter"
	if s.Filter != "" {
		filter, filterKey = s.Filter, key+".filter"
	}
	if filter != "" && !strings.EqualFold(filter, "none") {
		pred, ok := pl.Filters[filter]
		if !ok {
			names := make([]string, 0, len(c.p.Filters))
			for n := range c.p.Filters {
				names = append(names, n)
			}
			sort.Strings(names)
			msg := fmt.Sprintf("no filter named %q under [filters]", filter)
			if sug := closest(filter, names); sug != "" {
				msg += fmt.Sprintf("; did you mean %q?", sug)
			} else if len(names) > 0 {
				msg += " (filters: " + strings.Join(names, ", ") + ")"
			}
			if _, defined := c.p.Filters[filter]; !defined {
				c.errf(filterKey, "%s", msg)
			}
		}
		b.Where = pred
	}
	signs, signsKey := pop.Signs, "population.signs"
	if s.Signs != "" {
		signs, signsKey = s.Signs, key+".signs"
	}
	if signs != "" {
		if err := population.CheckSigns(signs); err != nil {
			c.fieldErr(signsKey, err)
		} else {
			b.Signs = signs
		}
	}
	min, minKey := pop.MinAmount, "population.min_amount"
	if s.MinAmount.Set() {
		min, minKey = s.MinAmount, key+".min_amount"
	}
	if min.Set() {
		t, err := min.Text()
		if err == nil {
			_, err = population.MinUnits(t, c.amountType)
		}
		if err != nil {
			c.fieldErr(minKey, err)
		} else {
			b.Min = t
		}
	}
	return b
}

// packKeys names the population's fields as a pack writes them.
var packKeys = map[string]string{population.FieldWhere: "filter", population.FieldSigns: "signs", population.FieldMin: "min_amount"}

// fieldErr reports err under key, a population field error in the
// pack's own names.
func (c *checker) fieldErr(key string, err error) {
	if fe, ok := population.AsFieldError(err); ok {
		c.errf(key, "%s", fe.Render(func(f string) string { return packKeys[f] }))
		return
	}
	c.errf(key, "%v", err)
}

func enabled(b *bool) bool { return b == nil || *b }

func (c *checker) intParam(key string, n Number, def, lo int64, what string) int64 {
	if !n.Set() {
		return def
	}
	v, err := n.Int()
	if err != nil {
		c.errf(key, "%v", err)
		return def
	}
	if v < lo {
		c.errf(key, "%s %d: give %d or more", what, v, lo)
		return def
	}
	return v
}

func (c *checker) steps(ctx context.Context, mem *workspace.Workspace, pl *Plan, schemaOK bool) {
	segments := func(key string, cols []string) {
		if !schemaOK || len(cols) == 0 {
			return
		}
		if _, err := segment.Resolve(ctx, mem, cols); err != nil {
			c.engineErr(key, err, map[string]string{"by": ""})
		}
	}
	// The population is checked once even when no step uses it.
	c.scope(pl, "population", Scope{})
	if b := c.p.Battery; b != nil && enabled(b.Enabled) {
		o := battery.Options{Spec: c.scope(pl, "battery", b.Scope)}
		if len(b.Tests) == 0 {
			o.Tests, o.Duplication = benford.AllTests(), true
		}
		for i, t := range b.Tests {
			tests, dup, err := battery.ParseTests([]string{t})
			if err != nil || strings.Contains(t, ",") {
				names := []string{"duplication"}
				for _, a := range benford.AllTests() {
					names = append(names, string(a))
				}
				msg := fmt.Sprintf("unknown test %q (tests: %s)", t, strings.Join(names, ", "))
				if sug := closest(t, names); sug != "" {
					msg += fmt.Sprintf("; did you mean %q?", sug)
				}
				c.errf(fmt.Sprintf("battery.tests[%d]", i), "%s", msg)
				continue
			}
			for _, x := range tests {
				if !o.Has(x) {
					o.Tests = append(o.Tests, x)
				}
			}
			o.Duplication = o.Duplication || dup
		}
		o.MinSegmentRows = c.intParam("battery.min_segment_rows", b.MinSegmentRows, battery.DefaultMinSegmentRows, 1, "min_segment_rows")
		o.Top = int(c.intParam("battery.duplication_top", b.DuplicationTop, battery.DefaultTop, 1, "duplication_top"))
		o.LastTwo = b.LastTwo
		bp := &BatteryPlan{}
		seen := map[string]bool{}
		for i, seg := range b.Segments {
			k := fmt.Sprintf("battery.segments[%d]", i)
			var cols []string
			for _, part := range strings.Split(seg, "+") {
				if p := strings.TrimSpace(part); p != "" {
					cols = append(cols, p)
				}
			}
			if len(cols) == 0 {
				c.errf(k, "an empty segmentation: name a column, e.g. \"entity\", or columns joined with +, e.g. \"entity+user_id\"")
				continue
			}
			name := strings.ToLower(strings.Join(cols, "+"))
			if seen[name] {
				c.errf(k, "segmentation %q is given twice", seg)
				continue
			}
			seen[name] = true
			segments(k, cols)
			bp.Segmentations = append(bp.Segmentations, cols)
		}
		if len(bp.Segmentations) > 0 {
			o.By = bp.Segmentations[0]
		}
		bp.Options = o.WithDefaults()
		if err := bp.Options.Check(); err != nil {
			c.engineErr(fieldKey("battery", err, batteryKeys), err, batteryKeys)
		}
		pl.Battery = bp
	}
	if l := c.p.Limits; l != nil && enabled(l.Enabled) {
		o := &limits.Options{Spec: c.scope(pl, "limits", l.Scope), By: l.By}
		o.Width = limits.DefaultWidth
		if l.Width.Set() {
			w, err := l.Width.Float()
			if err != nil {
				c.errf("limits.width", "%v", err)
			} else if err := limits.CheckWidth(w); err != nil {
				c.engineErr("limits.width", err, nil)
			} else {
				o.Width = w
			}
		}
		var texts []string
		for i, v := range l.Values {
			k := fmt.Sprintf("limits.values[%d]", i)
			t, err := v.Text()
			if err != nil {
				c.errf(k, "limit %v", err)
				continue
			}
			if _, err := limits.ParseLimit(t); err != nil {
				c.engineErr(k, err, map[string]string{"limits": "limit"})
				continue
			}
			texts = append(texts, t)
		}
		if len(texts) > 0 {
			o.Limits, _ = limits.ParseLimits(texts)
		}
		o.MinCount = c.intParam("limits.min_count", l.MinCount, limits.DefaultMinCount, 1, "min_count")
		segments("limits.by", l.By)
		pl.Limits = o
	}
	if r := c.p.Ranges; r != nil && enabled(r.Enabled) {
		o := &ranges.Options{Spec: c.scope(pl, "ranges", r.Scope)}
		ok := true
		num := func(key string, n Number) float64 {
			if !n.Set() {
				return 0
			}
			v, err := n.Float()
			if err != nil {
				c.errf(key, "%v", err)
				ok = false
			}
			return v
		}
		o.Width = num("ranges.width", r.Width)
		o.From = num("ranges.from", r.From)
		o.To = num("ranges.to", r.To)
		// No bound here: the layout's own check refuses what ranges refuses.
		o.PerDecade = int(c.intParam("ranges.per_decade", r.PerDecade, 0, math.MinInt, "per_decade"))
		if ok {
			if err := o.Layout.Check(); err != nil {
				c.engineErr(fieldKey("ranges", err, nil), err, nil)
			}
		}
		o.By = r.By
		segments("ranges.by", r.By)
		if r.MinSegment.Set() {
			n := c.intParam("ranges.min_segment", r.MinSegment, ranges.DefaultMinSegment, math.MinInt64, "min_segment")
			if len(r.By) == 0 {
				c.errf("ranges.min_segment", "min_segment goes with by: give the segment column(s), e.g. by = [\"entity\"]")
			} else if err := ranges.CheckMinSegment(n); err != nil {
				c.engineErr("ranges.min_segment", err, nil)
			} else {
				o.MinSegment = n
			}
		}
		if len(o.By) > 0 && o.MinSegment == 0 {
			o.MinSegment = ranges.DefaultMinSegment
		}
		pl.Ranges = o
	}
	if d := c.p.Duplicates; d != nil && enabled(d.Enabled) {
		o := &duplicates.Options{Spec: c.scope(pl, "duplicates", d.Scope), Tests: append([]string(nil), d.Tests...)}
		o.WindowDays = int(c.intParam("duplicates.window_days", d.WindowDays, 0, math.MinInt32, "window_days"))
		o.Top = int(c.intParam("duplicates.top", d.Top, duplicates.DefaultTop, 1, "top"))
		o.MinCounterparties = int(c.intParam("duplicates.min_counterparties", d.MinCounterparties, duplicates.DefaultMinCounterparties, math.MinInt32, "min_counterparties"))
		o.MinRecords = int(c.intParam("duplicates.min_records", d.MinRecords, duplicates.DefaultMinRecords, math.MinInt32, "min_records"))
		if d.Floor.Set() {
			t, err := d.Floor.Text()
			if err != nil {
				c.errf("duplicates.floor", "%v", err)
			}
			o.Floor = t
		}
		// The engine's own check, worded with the pack's keys; the
		// population was checked above and is not reported twice.
		spec := o.Spec
		o.Spec = population.Spec{}
		if err := o.Check(); err != nil {
			msg := engineWords(err, map[string]string{"tests": ""})
			if t := unknownTest(d.Tests); t != "" {
				if sug := closest(t, duplicates.Tests); sug != "" {
					msg += fmt.Sprintf("; did you mean %q?", sug)
				}
			}
			c.errf(fieldKey("duplicates", err, nil), "%s", msg)
		}
		o.Spec = spec
		pl.Duplicates = o
	}
	c.extracts(ctx, mem, pl, schemaOK)
}

// unknownTest is the first of tests that is not a duplicate test.
func unknownTest(tests []string) string {
	for _, t := range tests {
		if !contains(duplicates.Tests, strings.ToLower(strings.TrimSpace(t))) {
			return t
		}
	}
	return ""
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

var nameOK = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9_-]*$`)

// ExtractSources are the steps an extract can take its top results from.
var ExtractSources = []string{"battery", "limits", "ranges", "duplicates"}

func (c *checker) extracts(ctx context.Context, mem *workspace.Workspace, pl *Plan, schemaOK bool) {
	names := map[string]bool{}
	for i, e := range c.p.Extracts {
		key := fmt.Sprintf("extract[%d]", i)
		ep := ExtractPlan{Name: e.Name, From: e.From, Test: e.Test, GroupBy: e.GroupBy}
		if !nameOK.MatchString(e.Name) {
			c.errf(key+".name", "extract name %q: give a short name of letters, digits, _ and - (it names the result table)", e.Name)
		} else if names[strings.ToLower(e.Name)] {
			c.errf(key+".name", "two extracts are named %q", e.Name)
		}
		names[strings.ToLower(e.Name)] = true
		stepOn := map[string]bool{"battery": pl.Battery != nil, "limits": pl.Limits != nil, "ranges": pl.Ranges != nil, "duplicates": pl.Duplicates != nil}
		switch {
		case !contains(ExtractSources, e.From):
			msg := fmt.Sprintf("from %q: give one of %s", e.From, strings.Join(ExtractSources, ", "))
			if sug := closest(e.From, ExtractSources); sug != "" {
				msg += fmt.Sprintf("; did you mean %q?", sug)
			}
			c.errf(key+".from", "%s", msg)
		case !stepOn[e.From]:
			c.errf(key+".from", "from %q, but the pack does not run [%s]: add the table or drop this extract", e.From, e.From)
		}
		switch e.From {
		case "battery":
			t := e.Test
			if t == "" {
				t = string(benford.FirstTwo)
			}
			bt, err := benford.ParseTest(t)
			if err == nil {
				_, err = drill.CheckBin(string(bt), firstBin(bt))
			}
			switch {
			case err != nil:
				c.errf(key+".test", "test %q: %v", e.Test, err)
			case pl.Battery != nil && !pl.Battery.Options.Has(bt):
				c.errf(key+".test", "test %q is not among [battery] tests", e.Test)
			default:
				ep.Test = string(bt)
			}
		case "duplicates":
			if e.Test == "" {
				// Every duplicate test the pack runs: the top groups of each.
			} else if !contains(duplicates.Tests, e.Test) {
				c.errf(key+".test", "unknown duplicate test %q (tests: %s)", e.Test, strings.Join(duplicates.Tests, ", "))
			} else if pl.Duplicates != nil && len(pl.Duplicates.Tests) > 0 && !contains(pl.Duplicates.Tests, e.Test) {
				c.errf(key+".test", "test %q is not among [duplicates] tests", e.Test)
			}
		default:
			if e.Test != "" {
				c.errf(key+".test", "test is for extracts from battery or duplicates; leave it out for %s", e.From)
			}
		}
		ep.Top = int(c.intParam(key+".top", e.Top, DefaultExtractTop, 1, "top"))
		ep.MaxRows = int(c.intParam(key+".max_rows", e.MaxRows, DefaultExtractRows, 1, "max_rows"))
		switch m := strings.ToLower(strings.TrimSpace(e.Sample)); {
		case m == "" && (e.SampleSize.Set() || e.Seed.Set()):
			c.errf(key+".sample", "sample_size and seed need sample = \"random\" or \"monetary\"")
		case m == "":
		case sample.CheckMethod(m) != nil:
			c.engineErr(key+".sample", sample.CheckMethod(m), nil)
		default:
			ep.Sample = m
			ep.SampleSize = int(c.intParam(key+".sample_size", e.SampleSize, DefaultSampleSize, 1, "sample_size"))
			ep.Seed = c.intParam(key+".seed", e.Seed, 1, 1, "seed")
		}
		if e.GroupBy != "" && schemaOK {
			if _, err := segment.Resolve(ctx, mem, []string{e.GroupBy}); err != nil {
				c.engineErr(key+".group_by", err, map[string]string{"by": "group_by"})
			}
		}
		pl.Extracts = append(pl.Extracts, ep)
	}
}

func firstBin(t benford.Test) int {
	lo, _ := t.Bins()
	return lo
}

var sqlLineRE = regexp.MustCompile(`LINE (\d+):`)

func (c *checker) checks(ctx context.Context, mem *workspace.Workspace, pl *Plan, schemaOK bool) {
	names := map[string]bool{}
	for i, ch := range c.p.Checks {
		key := fmt.Sprintf("check[%d]", i)
		cp := CheckPlan{Name: ch.Name, Title: ch.Title, SQL: strings.TrimSpace(ch.SQL), Params: map[string]any{}, Kinds: map[string]output.Kind{}, Finding: ch.Finding}
		if cp.Title == "" {
			cp.Title = ch.Name
		}
		if !nameOK.MatchString(ch.Name) {
			c.errf(key+".name", "check name %q: give a short name of letters, digits, _ and - (it names the result table)", ch.Name)
		} else if names[strings.ToLower(ch.Name)] {
			c.errf(key+".name", "two checks are named %q", ch.Name)
		}
		names[strings.ToLower(ch.Name)] = true
		switch ch.Finding {
		case "", "rows", "none":
		default:
			c.errf(key+".finding", "finding %q: give \"rows\" (report the row count among the key findings) or \"none\"", ch.Finding)
		}
		if cp.Finding == "" {
			cp.Finding = "rows"
		}
		cp.MaxRows = int(c.intParam(key+".max_rows", ch.MaxRows, DefaultCheckRows, 1, "max_rows"))
		pnames := make([]string, 0, len(ch.Params))
		for n := range ch.Params {
			pnames = append(pnames, n)
		}
		sort.Strings(pnames)
		paramsOK := true
		for _, n := range pnames {
			v, err := ch.Params[n].Value()
			if err != nil {
				c.errf(key+".params."+n, "%v", err)
				paramsOK = false
				continue
			}
			if !nameOK.MatchString(n) || strings.Contains(n, "-") {
				c.errf(key+".params."+n, "parameter name %q: use letters, digits and _ (the SQL refers to it as $%s)", n, n)
				paramsOK = false
				continue
			}
			cp.Params[n] = v
		}
		for col, f := range ch.Formats {
			k, err := output.ParseKind(f)
			if err != nil {
				c.errf(key+".formats."+col, "%v", err)
				continue
			}
			cp.Kinds[col] = k
		}
		sqlKey := key + ".sql"
		if cp.SQL == "" {
			c.errf(sqlKey, "no SQL: write one SELECT over the workspace's tables (ledger, files, rejects)")
		}
		pl.Checks = append(pl.Checks, cp)
		if cp.SQL == "" {
			continue
		}
		at := func(err error) (string, string) {
			msg := firstLine(strings.TrimSpace(err.Error()))
			if m := sqlLineRE.FindStringSubmatch(err.Error()); m != nil {
				n, _ := strconv.Atoi(m[1])
				return sqlKey, fmt.Sprintf("%s (line %d of the SQL)", msg, n)
			}
			return sqlKey, msg
		}
		if err := sqlguard.CheckSelect(ctx, mem.Conn, cp.SQL); err != nil {
			k, msg := at(err)
			c.errf(k, "refused: %s", msg)
			continue
		}
		if !paramsOK || !schemaOK {
			continue
		}
		order, err := paramNames(ctx, mem.Conn, cp.SQL)
		if err != nil {
			k, msg := at(err)
			c.errf(k, "%s", msg)
			continue
		}
		namesOK := true
		used := map[string]bool{}
		for _, n := range order {
			used[n] = true
			if n == "" || strings.Trim(n, "0123456789") == "" {
				c.errf(sqlKey, "positional parameters (? or $1) are not allowed: name each value, e.g. $min_amount, and give it under [check.params]")
				namesOK = false
				break
			}
			if _, ok := cp.Params[n]; !ok {
				msg := fmt.Sprintf("the SQL uses $%s but [check.params] gives no %s", n, n)
				if sug := closest(n, pnames); sug != "" {
					msg += fmt.Sprintf("; did you mean %q?", sug)
				}
				c.errf(sqlKey, "%s", msg)
				namesOK = false
			}
		}
		for _, n := range pnames {
			if !used[n] {
				c.errf(key+".params."+n, "parameter %s is not used by the SQL (no $%s in it)", n, n)
				namesOK = false
			}
		}
		if !namesOK {
			continue
		}
		cp.Order = order
		pl.Checks[len(pl.Checks)-1] = cp
		// Run it on the empty ledger: this binds every column and parameter.
		rows, err := mem.Conn.QueryContext(ctx, cp.SQL, cp.Args()...)
		if err != nil {
			k, msg := at(err)
			c.errf(k, "%s", msg)
			continue
		}
		cols, _ := rows.Columns()
		rows.Close()
		for col := range cp.Kinds {
			if !contains(cols, col) {
				c.errf(key+".formats."+col, "the check's result has no column %q (columns: %s)", col, strings.Join(cols, ", "))
			}
		}
		if !hasOrderBy(ctx, mem, cp.SQL) {
			c.warnf(sqlKey, "no ORDER BY: the rows may come out in another order on each run, and two runs' CSV files would then differ; end the SELECT with an ORDER BY over a unique key")
		}
	}
}

// hasOrderBy reports whether the statement's outermost query ends with an
// ORDER BY.
func hasOrderBy(ctx context.Context, mem *workspace.Workspace, q string) bool {
	var doc string
	if err := mem.Conn.QueryRowContext(ctx, queries.Get("pack_serialize_sql"), q).Scan(&doc); err != nil {
		return true
	}
	var parsed struct {
		Statements []struct {
			Node struct {
				Modifiers []struct {
					Type string `json:"type"`
				} `json:"modifiers"`
			} `json:"node"`
		} `json:"statements"`
	}
	if json.Unmarshal([]byte(doc), &parsed) != nil || len(parsed.Statements) != 1 {
		return true
	}
	for _, m := range parsed.Statements[0].Node.Modifiers {
		if m.Type == "ORDER_MODIFIER" {
			return true
		}
	}
	return false
}
