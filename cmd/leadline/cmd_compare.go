package main

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/engine/benford"
	"github.com/leadline/leadline/engine/compare"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/tabular"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/leadline/leadline/queries"
	"github.com/spf13/pflag"
)

func init() {
	register(&command{
		name:    "compare",
		summary: "compare the digit tests of two periods, entities, runs or workspaces",
		usage: `Usage: leadline compare (--runs A,B | --left SQL --right SQL | --split COLUMN=A,B | --against FILE) [options]

Sets two bin-count tables of the digit tests side by side (first digit,
second digit, first two, first three and last two digits) and says, per
test, whether they differ and where. The two sides come from one of:

  --runs A,B          two stored runs of the workspace (run ids, see
                      leadline report or the runs table): scan runs, or
                      pack runs (their digit battery); with --against
                      FILE run B is read from that workspace (last
                      year's pack run against this year's)
  --left SQL --right SQL
                      two filters over the workspace's ledger, e.g. two
                      periods (read-only predicates, checked as --where is)
  --split COLUMN=A,B  two values of one column: entity=KELP,TIDE,
                      month=2025-01,2025-07, or any column --by takes
  --against FILE      the same population in another workspace (last year's
                      ledger, another entity's): --db is the left side

--signs, --min and --where choose the amounts on both sides as in scan
(not with --runs: a stored run keeps its own; --where not with --left and
--right, which are each side's whole filter).

Per test it prints:
  - Pearson's chi-square test of homogeneity of the 2 x K table of counts
    (K-1 degrees of freedom). When cells expect few amounts (one below 1
    or more than a fifth below 5, Cochran's rule) the p-value is simulated
    instead: --simulations tables with the same totals per side and per
    bin, the amounts assigned to the sides at random (seeded, --seed).
  - The bins whose share changed most: each side's share, the difference
    (right less left, in percentage points), the two-proportion Z (the
    textbook reference), and a flag. A bin is flagged when its change is
    beyond chance for the test as a whole (an exact binomial test of the
    bin's left count given its total, adjusted by Holm's step-down over
    the test's bins, below 5%: two samples of one population have a
    flagged bin in at most about 5% of comparisons) and material: the
    share moved by at least --min-excess (20%) of the bin's share over
    both sides (the margin of scan's bin flag).
  - Each side's conformity to Benford's law: MAD, its published class,
    and the severity verdict against the MAD of conforming populations of
    the same N; "changed" when the class or the verdict differs.

The comparison is stored in the workspace (runs table, kind compare; with
--against in the --db workspace) and shown in leadline report. --format
json prints the stored document (docs/json.md); csv the bins in long
format. A flagged bin is a signal for follow-up, never proof of fraud.

Examples:
  leadline compare --left "posted < DATE '2025-07-01'" --right "posted >= DATE '2025-07-01'"
  leadline compare --split entity=KELP,TIDE --signs both
  leadline compare --runs 3,9
  leadline compare --db fy2025.duckdb --runs 1,1 --against fy2024.duckdb
  leadline compare --db 2025.duckdb --against 2024.duckdb --format json`,
		flags: thin(compareFlags, runCompare),
	})
}

// compareOptions are what compare's flags ask for.
type compareOptions struct {
	db      dbFlags
	format  string
	runs    []int64 // --runs A,B
	left    string  // --left, --right: each side's filter
	right   string
	split   string // --split COLUMN=A,B: the column
	values  [2]string
	against string // --against: the right side's workspace
	spec    population.Spec
	compare compare.Options
	top     int      // bins printed per test in text format
	by      []string // --by: segment columns compared on both sides
	minSeg  int64    // --min-segment: amounts a segment needs on each side
}

func (o compareOptions) mode() string {
	switch {
	case len(o.runs) > 0:
		return compare.ModeRuns
	case o.left != "" || o.right != "":
		return compare.ModeFilters
	case o.split != "":
		return compare.ModeSplit
	}
	return compare.ModeWorkspaces
}

// compareFlags registers compare's flags; the function it returns checks
// them.
func compareFlags(fs *pflag.FlagSet) func(args []string) (compareOptions, error) {
	var o compareOptions
	var f formatFlag
	var pop bandPopulation
	var runs, split string
	var tests []string
	o.db.add(fs)
	fs.StringVar(&runs, "runs", "", "two stored scan runs to compare, left,right (run ids)")
	fs.StringVar(&o.left, "left", "", `left side's filter on the ledger's columns, e.g. "posted < DATE '2025-07-01'"`)
	fs.StringVar(&o.right, "right", "", `right side's filter, e.g. "posted >= DATE '2025-07-01'"`)
	fs.StringVar(&split, "split", "", "two values of one column as the sides, COLUMN=LEFT,RIGHT, e.g. entity=KELP,TIDE")
	fs.StringVar(&o.against, "against", "", "another workspace file as the right side (the --db workspace is the left)")
	pop.add(fs)
	o.compare = compare.DefaultOptions()
	fs.Float64Var(&o.compare.MinExcess, "min-excess", benford.DefaultMinExcess, "materiality margin of the bin flag: a flagged bin's share moved by at least this share of its share; 0 flags on significance alone")
	fs.IntVar(&o.compare.Simulations, "simulations", compare.DefaultSimulations, "Monte Carlo tables for the homogeneity p-value when cells expect few amounts")
	fs.Uint64Var(&o.compare.Seed, "seed", compare.DefaultSeed, "seed of the Monte Carlo tables")
	fs.IntVar(&o.top, "top", compare.DefaultTop, "bins listed per test as changed most")
	fs.StringSliceVar(&o.by, "by", nil, "also compare each segment of these columns on both sides (as scan --by: entity, account, user_id, month...); not with --runs")
	fs.Int64Var(&o.minSeg, "min-segment", 1000, "with --by: amounts a segment needs on each side to be compared")
	fs.StringSliceVar(&tests, "tests", nil, "tests compared: first, second, first_two, first_three, last_two (default: all five)")
	f.add(fs)
	return func(args []string) (compareOptions, error) {
		if err := f.check(); err != nil {
			return o, err
		}
		if len(args) > 0 {
			return o, fmt.Errorf("unexpected argument %q (see --help)", args[0])
		}
		o.format = f.value
		o.compare.Top = o.top
		for _, name := range tests {
			t, err := benford.ParseTest(name)
			if err != nil {
				return o, fmt.Errorf("--tests: %w", err)
			}
			o.compare.Only = append(o.compare.Only, t)
		}
		if err := o.compare.Check(); err != nil {
			return o, err
		}
		modes := 0
		// --against with --runs reads the right run from the other workspace.
		for _, given := range []bool{runs != "", o.left != "" || o.right != "", split != "", o.against != "" && runs == ""} {
			if given {
				modes++
			}
		}
		if modes != 1 {
			return o, errors.New("give one of --runs A,B, --left and --right, --split COLUMN=A,B or --against FILE (see --help)")
		}
		switch {
		case runs != "":
			parts := strings.Split(runs, ",")
			if len(parts) != 2 {
				return o, fmt.Errorf("--runs %q: give two run ids, left,right, e.g. --runs 3,9", runs)
			}
			for _, p := range parts {
				id, err := strconv.ParseInt(strings.TrimSpace(p), 10, 64)
				if err != nil || id < 1 {
					return o, fmt.Errorf("--runs %q: %q is not a run id (a whole number from the runs table)", runs, p)
				}
				o.runs = append(o.runs, id)
			}
			for _, name := range []string{"where", "signs", "min", "by"} {
				if fs.Changed(name) {
					return o, fmt.Errorf("--%s with --runs: a stored run keeps the population it tested; leave --%s out", name, name)
				}
			}
		case o.left != "" || o.right != "":
			if strings.TrimSpace(o.left) == "" || strings.TrimSpace(o.right) == "" {
				return o, errors.New("--left and --right go together: give each side's filter")
			}
			if fs.Changed("where") {
				return o, errors.New("--where with --left and --right: put the condition both sides share into each of them")
			}
		case split != "":
			col, vals, ok := strings.Cut(split, "=")
			v := strings.Split(vals, ",")
			if !ok || strings.TrimSpace(col) == "" || len(v) != 2 || v[0] == "" || v[1] == "" {
				return o, fmt.Errorf("--split %q: give COLUMN=LEFT,RIGHT, e.g. --split entity=KELP,TIDE", split)
			}
			if v[0] == v[1] {
				return o, fmt.Errorf("--split %q: the two values are the same", split)
			}
			o.split, o.values = strings.TrimSpace(col), [2]string{v[0], v[1]}
		}
		if o.minSeg < 1 {
			return o, fmt.Errorf("--min-segment %d: give 1 or more", o.minSeg)
		}
		o.spec = pop.base().WithDefaults()
		return o, nil
	}
}

// runCompare reads or computes both sides' counts, compares them, stores
// the comparison and prints it.
func runCompare(ctx context.Context, e *env, o compareOptions) error {
	started := time.Now()
	ws, err := e.openWorkspace(ctx, o.db, false)
	if err != nil {
		return err
	}
	defer ws.Close()
	path := o.db.path
	var left, right compare.SideInfo
	var lc, rc map[benford.Test][]int64
	switch o.mode() {
	case compare.ModeRuns:
		if left, lc, err = storedSide(ctx, ws, o.runs[0]); err != nil {
			return err
		}
		if o.against == "" {
			if right, rc, err = storedSide(ctx, ws, o.runs[1]); err != nil {
				return err
			}
			break
		}
		other := o.db
		other.path = o.against
		ws2, err := e.openWorkspace(ctx, other, true)
		if err != nil {
			return fmt.Errorf("--against %s: %w", o.against, err)
		}
		right, rc, err = storedSide(ctx, ws2, o.runs[1])
		ws2.Close()
		if err != nil {
			return err
		}
		left.Label += " of " + path
		right.Label += " of " + o.against
		left.Workspace, right.Workspace = path, o.against
	case compare.ModeFilters:
		for i, where := range []string{o.left, o.right} {
			s := o.spec
			s.Where = where
			info, c, err := batterySide(ctx, ws, s, nil, fmt.Sprintf("--%s", []string{"left", "right"}[i]))
			if err != nil {
				return err
			}
			info.Label = strings.TrimSpace(where)
			if i == 0 {
				left, lc = info, c
			} else {
				right, rc = info, c
			}
		}
	case compare.ModeSplit:
		if left, lc, right, rc, err = splitSides(ctx, ws, o); err != nil {
			return err
		}
	case compare.ModeWorkspaces:
		if left, lc, err = batterySide(ctx, ws, o.spec, nil, "--db"); err != nil {
			return err
		}
		other := o.db
		other.path = o.against
		ws2, err := e.openWorkspace(ctx, other, true)
		if err != nil {
			return fmt.Errorf("--against %s: %w", o.against, err)
		}
		right, rc, err = batterySide(ctx, ws2, o.spec, nil, "--against")
		ws2.Close()
		if err != nil {
			return err
		}
		left.Label, right.Label = filepath.Base(path), filepath.Base(o.against)
		left.Workspace, right.Workspace = path, o.against
	}
	if left.Workspace == "" {
		left.Workspace = path
	}
	if right.Workspace == "" {
		right.Workspace = path
	}
	for i, side := range []compare.SideInfo{left, right} {
		if side.Tested == 0 {
			flag := map[string][2]string{compare.ModeRuns: {"--runs", "--runs"}, compare.ModeFilters: {"--left", "--right"},
				compare.ModeSplit: {"--split", "--split"}, compare.ModeWorkspaces: {"--db", "--against"}}[o.mode()][i]
			return fmt.Errorf("%s: no amounts tested on the %s side (%s): nothing to compare; check the filter, --signs and --min", flag, []string{"left", "right"}[i], sideLine(side, true))
		}
	}
	rep, err := compare.NewReport(o.mode(), left, right, lc, rc, o.compare)
	if err != nil {
		return err
	}
	if len(o.by) > 0 {
		if err := compareSegments(ctx, e, ws, o, rep); err != nil {
			return err
		}
	}
	params := struct {
		Mode    string          `json:"mode"`
		Runs    []int64         `json:"runs,omitempty"`
		Left    string          `json:"left,omitempty"`
		Right   string          `json:"right,omitempty"`
		Split   string          `json:"split,omitempty"`
		Against string          `json:"against,omitempty"`
		By      []string        `json:"by,omitempty"`
		Options compare.Options `json:"options"`
		population.Spec
	}{rep.Mode, o.runs, o.left, o.right, o.split, o.against, o.by, o.compare, o.spec}
	if rep.Mode == compare.ModeRuns {
		params.Spec = population.Spec{}
	}
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: compare.Kind, Started: started, Params: params, Result: rep, SetID: func(id int64) { rep.RunID = id }}); err != nil {
		return err
	}
	return printCompare(e.stdout, o.format, rep, o.top)
}

// batterySide counts the count tests of the battery on one population
// and returns the whole selection's counts (the statistics are
// compare's own).
func batterySide(ctx context.Context, ws *workspace.Workspace, s population.Spec, by []string, flag string) (compare.SideInfo, map[benford.Test][]int64, error) {
	all, _, err := countScan(ctx, ws, s, by, flag)
	if err != nil {
		return compare.SideInfo{}, nil, err
	}
	info := compare.SideInfo{Where: s.Where, Signs: s.Signs, Min: s.Min, Tested: all.N()}
	return info, countsOf(all), nil
}

// countScan runs the battery's one aggregate scan of the count tests,
// with by its segments too, and no statistics; flag names the flag whose
// filter an error is about.
func countScan(ctx context.Context, ws *workspace.Workspace, s population.Spec, by []string, flag string) (*battery.Counts, []battery.SegmentCounts, error) {
	p, err := battery.Prepare(ctx, ws, battery.Options{Spec: s, Tests: compare.Tests, By: by})
	if err != nil {
		return nil, nil, fmt.Errorf("%s: %w", flag, flagError(err))
	}
	all, segs, err := p.Scan(ctx, ws)
	if err != nil {
		return nil, nil, fmt.Errorf("%s: %w", flag, err)
	}
	return all, segs, nil
}

// splitSides runs one scan segmented by the split column and takes the
// two values' segments as the sides.
func splitSides(ctx context.Context, ws *workspace.Workspace, o compareOptions) (l compare.SideInfo, lc map[benford.Test][]int64, r compare.SideInfo, rc map[benford.Test][]int64, err error) {
	_, segs, err := countScan(ctx, ws, o.spec, []string{o.split}, "--split")
	if err != nil {
		// The column is checked as a segment column: name it as --split's.
		err = errors.New(strings.Replace(err.Error(), "--by "+o.split+": ", "", 1))
		return
	}
	var found [2]*battery.SegmentCounts
	var seen []string
	for i := range segs {
		sr := &segs[i]
		label := sr.Key.Label()
		seen = append(seen, label)
		for j, v := range o.values {
			if label == v {
				found[j] = sr
			}
		}
	}
	for j, v := range o.values {
		if found[j] == nil {
			if len(seen) > 12 {
				seen = append(seen[:12], "...")
			}
			err = fmt.Errorf("--split %s=%s,%s: no amounts tested where %s is %q (values with amounts: %s)", o.split, o.values[0], o.values[1], o.split, v, strings.Join(seen, ", "))
			return
		}
	}
	side := func(j int) (compare.SideInfo, map[benford.Test][]int64) {
		sr := found[j]
		return compare.SideInfo{Label: o.split + "=" + o.values[j], Where: o.spec.Where, Split: o.split + "=" + o.values[j],
			Signs: o.spec.Signs, Min: o.spec.Min, Tested: sr.Counts.N()}, countsOf(sr.Counts)
	}
	l, lc = side(0)
	r, rc = side(1)
	return
}

// storedSide reads a stored scan run's counts from its result document.
func storedSide(ctx context.Context, ws *workspace.Workspace, id int64) (compare.SideInfo, map[benford.Test][]int64, error) {
	var kind, params, result string
	err := ws.Conn.QueryRowContext(ctx, queries.Get("compare_run"), id).Scan(&kind, &params, &result)
	if errors.Is(err, sql.ErrNoRows) {
		return compare.SideInfo{}, nil, fmt.Errorf("--runs: no run %d in %s (leadline report lists the runs)", id, ws.Path)
	}
	if err != nil {
		return compare.SideInfo{}, nil, err
	}
	if kind == "pack" {
		// A pack run holds its digit battery as results.battery, a scan
		// report.
		var pack struct {
			Results struct {
				Battery json.RawMessage `json:"battery"`
			} `json:"results"`
		}
		if err := json.Unmarshal([]byte(result), &pack); err != nil || len(pack.Results.Battery) == 0 || string(pack.Results.Battery) == "null" {
			return compare.SideInfo{}, nil, fmt.Errorf("--runs: pack run %d holds no digit battery (its pack has no [battery] step)", id)
		}
		result = string(pack.Results.Battery)
	} else if kind != "scan" {
		return compare.SideInfo{}, nil, fmt.Errorf("--runs: run %d is a %s run; give scan or pack runs (leadline scan and leadline run store them)", id, kind)
	}
	var doc struct {
		Params population.Spec `json:"params"`
		Tested int64           `json:"tested"`
		Tests  []struct {
			Test benford.Test `json:"test"`
			Bins []struct {
				Bin   int   `json:"bin"`
				Count int64 `json:"count"`
			} `json:"bins"`
		} `json:"tests"`
	}
	if err := json.Unmarshal([]byte(result), &doc); err != nil {
		return compare.SideInfo{}, nil, fmt.Errorf("--runs: run %d: reading its result: %w", id, err)
	}
	counts := map[benford.Test][]int64{}
	for _, t := range doc.Tests {
		lo, _ := t.Test.Bins()
		if !isCompareTest(t.Test) || len(t.Bins) != t.Test.K() {
			continue
		}
		c := make([]int64, t.Test.K())
		for _, b := range t.Bins {
			if i := b.Bin - lo; i >= 0 && i < len(c) {
				c[i] = b.Count
			}
		}
		counts[t.Test] = c
	}
	if len(counts) == 0 {
		return compare.SideInfo{}, nil, fmt.Errorf("--runs: run %d holds none of the tests compare reads (first, second, first_two, first_three, last_two)", id)
	}
	s := doc.Params.WithDefaults()
	label := fmt.Sprintf("run %d", id)
	if kind == "pack" {
		label = fmt.Sprintf("pack run %d", id)
	}
	if w := strings.TrimSpace(s.Where); w != "" {
		label += " (" + w + ")"
	}
	return compare.SideInfo{Label: label, RunID: id, Where: s.Where, Signs: s.Signs, Min: s.Min, Tested: doc.Tested}, counts, nil
}

func isCompareTest(t benford.Test) bool {
	for _, x := range compare.Tests {
		if x == t {
			return true
		}
	}
	return false
}

func printCompare(w io.Writer, format string, rep *compare.Report, top int) error {
	switch format {
	case "json":
		return writeJSON(w, rep)
	case "csv":
		return compareBinsTable(rep).WriteCSV(w)
	}
	return printCompareText(w, rep, top)
}

// compareBinsTable is the long format: one row per bin of every test.
func compareBinsTable(rep *compare.Report) *tabular.Table {
	t := &tabular.Table{Name: "bins", Columns: []string{"run_id", "test", "bin", "label", "left", "right", "left_share", "right_share", "diff", "z", "p", "p_adjusted", "min_diff", "material", "flagged"}}
	for _, tr := range rep.Tests {
		for _, b := range tr.Bins {
			t.Add(rep.RunID, string(tr.Test), b.Bin, b.Label, b.Left, b.Right, b.LeftShare, b.RightShare, b.Diff, b.Z, b.P, b.PAdjusted, b.MinDiff, b.Material, b.Flagged)
		}
	}
	return t
}

func sideLine(s compare.SideInfo, workspaces bool) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %s amounts (%s, |amount| >= %s", s.Label, numfmt.Int(s.Tested), s.Signs, s.Min)
	if w := strings.TrimSpace(s.Where); w != "" && w != s.Label && !strings.Contains(s.Label, w) {
		fmt.Fprintf(&b, ", where %s", w)
	}
	if workspaces && s.Workspace != "" {
		fmt.Fprintf(&b, ", workspace %s", s.Workspace)
	}
	b.WriteString(")")
	return b.String()
}

func printCompareText(w io.Writer, rep *compare.Report, top int) error {
	fmt.Fprintf(w, "Comparison (run %d) of two %s\n", rep.RunID, map[string]string{
		compare.ModeRuns: "stored runs", compare.ModeFilters: "filters of one ledger",
		compare.ModeSplit: "values of one column", compare.ModeWorkspaces: "workspaces"}[rep.Mode])
	fmt.Fprintf(w, "Left  %s\nRight %s\n", sideLine(rep.Left, rep.Mode == compare.ModeWorkspaces), sideLine(rep.Right, rep.Mode == compare.ModeWorkspaces))
	fmt.Fprintf(w, "Bin flag: Holm-adjusted exact p below %.0f%% over each test's bins and a change of at least %g%% of the bin's share (--min-excess)\n", 100*rep.Options.Alpha, 100*rep.Options.MinExcess)
	for _, n := range rep.Notes {
		fmt.Fprintf(w, "Note: %s.\n", n)
	}
	for _, tr := range rep.Tests {
		fmt.Fprintf(w, "\n%s (left N %s, right N %s)\n", capitalize(tr.Test.Name()), numfmt.Int(tr.LeftN), numfmt.Int(tr.RightN))
		h := tr.Homogeneity
		if h.DF == 0 {
			fmt.Fprintln(w, "  not compared: a side has no amounts, or all amounts fall in one bin")
		} else {
			verdict := "no evidence that the two distributions differ"
			if h.P < 0.05 {
				verdict = "the two distributions differ"
			}
			fmt.Fprintf(w, "Homogeneity: chi-square %.2f, %d df, p %.3g (%s): %s\n", h.Chi2, h.DF, h.P, h.Method, verdict)
		}
		if tr.Left != nil && tr.Right != nil {
			ch := "unchanged"
			if tr.ConformityChanged {
				ch = "changed"
			}
			fmt.Fprintf(w, "Conformity: left MAD %.5f %s (%s), right MAD %.5f %s (%s): %s\n",
				tr.Left.MAD, tr.Left.Conformity, tr.Left.Severity, tr.Right.MAD, tr.Right.Conformity, tr.Right.Severity, ch)
		}
		if len(tr.Changed) > 0 && top != 0 {
			t := &tabular.Table{Columns: []string{"bin", "left", "right", "left_%", "right_%", "diff_pp", "z", "p_adjusted", "flag"}}
			for _, bin := range tr.Changed {
				b := tr.Bin(bin)
				flag := ""
				switch {
				case b.Flagged && b.Diff > 0:
					flag = "up"
				case b.Flagged:
					flag = "down"
				case b.PAdjusted < rep.Options.Alpha:
					flag = "(immaterial)"
				}
				t.Add(b.Label, numfmt.Int(b.Left), numfmt.Int(b.Right), pct(b.LeftShare), pct(b.RightShare), fmt.Sprintf("%+.3f", 100*b.Diff), fmt.Sprintf("%.2f", b.Z), fmt.Sprintf("%.3g", b.PAdjusted), flag)
			}
			fmt.Fprintf(w, "Bins that changed most (flagged first, then by |z|):\n")
			if err := t.WriteText(w, 0); err != nil {
				return err
			}
		}
		fmt.Fprintf(w, "Flagged bins: %d of %d\n", tr.Flagged, tr.Test.K())
		for _, n := range tr.Notes {
			fmt.Fprintf(w, "Note: %s.\n", n)
		}
	}
	if err := printCompareSegments(w, rep, top); err != nil {
		return err
	}
	fmt.Fprintln(w, "\nFlags are signals for follow-up, never proof of fraud.")
	return nil
}

func countsOf(c *battery.Counts) map[benford.Test][]int64 {
	out := map[benford.Test][]int64{}
	for _, t := range compare.Tests {
		if b := c.Bins(t); b != nil {
			out[t] = b
		}
	}
	return out
}
