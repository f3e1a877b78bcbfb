package report

import (
	"encoding/json"
	"fmt"
	"math/big"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/population"
	"github.com/leadline/leadline/engine/ranges"
)

// Names of the run sets a report can be built from (Options.Set).
const (
	// SetAuto is the pack set when the workspace holds a pack run, else
	// the latest set.
	SetAuto = ""
	// SetPack is the latest pack run with the runs it stored itself.
	SetPack = "pack"
	// SetLatest is the latest run of each kind made with the population
	// settings of the latest scan.
	SetLatest = "latest"
	// setNamed is the runs named by id.
	setNamed = "named"
)

// RunSet says which runs a report is built from, how they were chosen,
// and which stored runs are not part of it.
type RunSet struct {
	Name string // SetPack, SetLatest or "named"
	// How says in words how the runs were chosen.
	How string
	// Population is the population settings in words the set's runs
	// share ("" when they do not share one, or none has one).
	Population string
	// Left are stored runs not part of the set, each with why and the
	// command that reports it.
	Left []LeftRun
	// Earlier counts the older runs not part of the set and not listed.
	Earlier int
	pop     runPop // the population the set's runs share, when known
}

// LeftRun is a stored run left out of the report's set.
type LeftRun struct {
	ID       int64
	Kind     string
	Started  time.Time
	Settings string // its population settings in words ("" when it has none)
	Why      string
	Cmd      string // the command that makes a report of it
}

// runPop is the population a run tested: the filter, the signs, the
// minimum and (for the kinds that segment) the segment columns.
type runPop struct {
	Where, Signs, Min string
	By                []string
	HasBy             bool // the kind takes --by
	Known             bool // the run's kind has a population
}

// popKinds are the run kinds with a population; byKinds those that also
// take segment columns.
var (
	popKinds = map[string]bool{KindScan: true, KindLimits: true, KindRanges: true, KindDuplicates: true}
	byKinds  = map[string]bool{KindScan: true, KindLimits: true}
)

// popOfParams reads a run's population from its stored parameters (every
// kind with a population stores population.Spec's keys at the top).
func popOfParams(kind string, params json.RawMessage) runPop {
	if !popKinds[kind] {
		return runPop{}
	}
	var p struct {
		population.Spec
		By []string `json:"by"`
	}
	if json.Unmarshal(params, &p) != nil {
		return runPop{}
	}
	return makePop(p.Spec, p.By, byKinds[kind])
}

func makePop(s population.Spec, by []string, hasBy bool) runPop {
	s = s.WithDefaults()
	return runPop{Where: strings.TrimSpace(s.Where), Signs: s.Signs, Min: canonDecimal(s.Min), By: by, HasBy: hasBy, Known: true}
}

// canonDecimal writes a plain decimal without trailing zeros ("10.00"
// and "10" compare equal).
func canonDecimal(s string) string {
	r, ok := new(big.Rat).SetString(strings.TrimSpace(s))
	if !ok {
		return strings.TrimSpace(s)
	}
	return r.RatString()
}

// same reports whether two populations are the same; segment columns
// count only when both kinds take them.
func (p runPop) same(q runPop) bool {
	if p.Where != q.Where || p.Signs != q.Signs || p.Min != q.Min {
		return false
	}
	if p.HasBy && q.HasBy && strings.Join(p.By, ",") != strings.Join(q.By, ",") {
		return false
	}
	return true
}

// words says the population in plain words: "positive amounts of at
// least 10, all rows, segmented by entity".
func (p runPop) words() string {
	if !p.Known {
		return ""
	}
	var b strings.Builder
	switch p.Signs {
	case "positive":
		b.WriteString("positive amounts")
	case "negative":
		b.WriteString("negative amounts (as absolute values)")
	case "both":
		b.WriteString("amounts of either sign")
	default:
		b.WriteString("amounts (signs " + p.Signs + ")")
	}
	if p.Min != "0" {
		b.WriteString(" of at least " + p.Min)
	}
	if p.Where != "" {
		b.WriteString(", rows where " + p.Where)
	} else {
		b.WriteString(", all rows")
	}
	if p.HasBy {
		if len(p.By) > 0 {
			b.WriteString(", segmented by " + strings.Join(p.By, " and "))
		} else {
			b.WriteString(", no segments")
		}
	}
	return b.String()
}

// flags writes the population as command-line flags of kind's command
// (defaults left out).
func (p runPop) flags(kind string) string {
	if !p.Known {
		return ""
	}
	var out []string
	if p.Signs != population.DefaultSigns {
		out = append(out, "--signs "+p.Signs)
	}
	if p.Min != canonDecimal(population.DefaultMin) {
		out = append(out, "--min "+p.Min)
	}
	if p.Where != "" {
		out = append(out, "--where "+ranges.ShellQuote(p.Where))
	}
	if byKinds[kind] && len(p.By) > 0 {
		out = append(out, "--by "+strings.Join(p.By, ","))
	}
	if len(out) == 0 {
		return ""
	}
	return " " + strings.Join(out, " ")
}

// commandOf is the leadline command of a run kind.
func commandOf(kind string) string {
	if kind == KindDuplicates {
		return "dups"
	}
	return kind
}

// dbArg is "--db PATH " when the workspace is not the default one.
func dbArg(path string) string {
	if path == "" || path == ranges.DefaultWorkspace {
		return ""
	}
	return "--db " + ranges.ShellQuote(path) + " "
}

// chooseSet picks the runs of the report from all stored runs (oldest
// first, parameters read) and describes the set.
func chooseSet(all []*Run, opts Options, wsPath string) ([]*Run, *RunSet, error) {
	set := opts.Set
	if len(opts.RunIDs) > 0 {
		set = setNamed
	}
	var latestPack *Run
	for _, r := range all {
		if r.Kind == KindPack {
			latestPack = r
		}
	}
	if set == SetAuto {
		set = SetLatest
		if latestPack != nil {
			set = SetPack
		}
	}
	db := dbArg(wsPath)
	reportCmd := func(id int64) string { return fmt.Sprintf("leadline report %s--runs %d", db, id) }
	left := func(rs *RunSet, r *Run, why string) {
		rs.Left = append(rs.Left, LeftRun{ID: r.ID, Kind: r.Kind, Started: r.StartedAt, Settings: popOfParams(r.Kind, r.Params).words(), Why: why, Cmd: reportCmd(r.ID)})
	}
	switch set {
	case setNamed:
		byID := map[int64]*Run{}
		for _, r := range all {
			byID[r.ID] = r
		}
		var picked []*Run
		seen := map[int64]bool{}
		for _, id := range opts.RunIDs {
			r, ok := byID[id]
			if !ok {
				return nil, nil, fmt.Errorf("report: no run %d in workspace %s (list the runs with: leadline sql \"SELECT run_id, kind, started_at FROM runs\")", id, wsPath)
			}
			if !seen[id] {
				seen[id] = true
				picked = append(picked, r)
			}
		}
		rs := &RunSet{Name: setNamed, How: "the runs named for this report"}
		rs.Population = sharedPop(picked)
		return picked, rs, nil
	case SetPack:
		if latestPack == nil {
			return nil, nil, fmt.Errorf("report: --set pack: workspace %s holds no pack run (make one with leadline run PACK, or use --set latest)", wsPath)
		}
		steps := packSteps(latestPack, all)
		rs := &RunSet{Name: SetPack, How: fmt.Sprintf("the latest pack run (run %d) and the runs it stored of its own steps", latestPack.ID)}
		picked := []*Run{latestPack}
		for _, r := range all {
			switch {
			case r.ID == latestPack.ID:
			case steps[r.ID]:
				r.PartOf = latestPack.ID
				picked = append(picked, r)
			case r.Kind == KindDrill && r.ID > latestPack.ID:
				// a drill-down or sample drawn on the pack's workspace
				// since: shown under its own selection
				picked = append(picked, r)
			case r.ID > latestPack.ID:
				left(rs, r, "made after the pack run, with its own settings")
			default:
				rs.Earlier++
			}
		}
		return picked, rs, nil
	case SetLatest:
		return latestSet(all, opts, left)
	}
	return nil, nil, fmt.Errorf("report: unknown run set %q: use pack or latest, or name runs with --runs", set)
}

// latestSet is the latest run of each kind made with the population of
// the latest scan (or, without a scan, of the latest run that has a
// population), and the latest drill-downs and sensitivity studies.
func latestSet(all []*Run, opts Options, left func(*RunSet, *Run, string)) ([]*Run, *RunSet, error) {
	rs := &RunSet{Name: SetLatest}
	var anchor *Run
	for _, r := range all {
		if r.Kind == KindScan {
			anchor = r
		}
	}
	if anchor == nil {
		for _, r := range all {
			if popKinds[r.Kind] {
				anchor = r
			}
		}
	}
	var ref runPop
	if anchor != nil {
		ref = popOfParams(anchor.Kind, anchor.Params)
		rs.pop = ref
		rs.How = fmt.Sprintf("the latest run of each kind made with the population settings of the latest %s (run %d)", anchor.Kind, anchor.ID)
		rs.Population = ref.words()
	} else {
		rs.How = "the latest run of each kind"
	}
	chosen := map[string]*Run{}
	several := map[string][]*Run{}
	var latestPack *Run
	for _, r := range all {
		switch {
		case r.Kind == KindPack:
			latestPack = r
		case r.Kind == KindDrill || r.Kind == KindSensitivity:
			several[r.Kind] = append(several[r.Kind], r)
		case popKinds[r.Kind] && ref.Known:
			if popOfParams(r.Kind, r.Params).same(ref) {
				chosen[r.Kind] = r
			}
		default:
			chosen[r.Kind] = r
		}
	}
	var picked []*Run
	for _, k := range sortedKeys(chosen) {
		picked = append(picked, chosen[k])
	}
	for _, k := range sortedKeys(several) {
		list := several[k]
		if len(list) > opts.MaxDrills {
			list = list[len(list)-opts.MaxDrills:]
		}
		picked = append(picked, list...)
	}
	in := map[int64]bool{}
	for _, r := range picked {
		in[r.ID] = true
	}
	for _, r := range all {
		if in[r.ID] {
			continue
		}
		c := chosen[r.Kind]
		switch {
		case r.Kind == KindPack && r == latestPack:
			left(rs, r, "a pack run: its results are shown by the report of the pack set (leadline report --set pack)")
		case popKinds[r.Kind] && (c == nil || r.ID > c.ID):
			left(rs, r, "made with different population settings")
		default:
			rs.Earlier++
		}
	}
	return picked, rs, nil
}

// packSteps reads which runs the pack run stored of its own steps: those
// its result names, and every run made while it ran (the workspace takes
// one writer at a time, so a run stored between the pack run's start and
// its end is one of its steps).
func packSteps(pack *Run, all []*Run) map[int64]bool {
	out := stepRunIDs(pack)
	for _, r := range all {
		if r.ID != pack.ID && !r.StartedAt.Before(pack.StartedAt) && !r.FinishedAt.After(pack.FinishedAt) {
			out[r.ID] = true
		}
	}
	return out
}

// stepRunIDs reads the ids of the runs a pack run stored of its own steps
// (manifest.run.step_runs of its result, when it holds them).
func stepRunIDs(pack *Run) map[int64]bool {
	var doc struct {
		Manifest struct {
			Run struct {
				StepRuns map[string]int64 `json:"step_runs"`
			} `json:"run"`
		} `json:"manifest"`
	}
	out := map[int64]bool{}
	if json.Unmarshal(pack.Result, &doc) == nil {
		for _, id := range doc.Manifest.Run.StepRuns {
			out[id] = true
		}
	}
	return out
}

// sharedPop is the population the runs with one share in words, or ""
// when they differ.
func sharedPop(runs []*Run) string {
	var first *runPop
	for _, r := range runs {
		p := popOfParams(r.Kind, r.Params)
		if !p.Known {
			continue
		}
		if first == nil {
			first = &p
			continue
		}
		if !p.same(*first) {
			return ""
		}
	}
	if first == nil {
		return ""
	}
	return first.words()
}
