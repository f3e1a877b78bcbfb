package countsql

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/ranges"
	"github.com/leadline/leadline/engine/segment"
)

// BandCounts is the exact sum of band count files (the band query's
// result): per segment, the tested rows per bin of the grid with the
// smallest and largest |units| in each, and the rows left out by reason.
type BandCounts struct {
	By    []string // segment names, from the files' by_ columns
	Files []File
	grid  *Grid
	scale int
	segs  map[string]*bandAcc
}

type bandBin struct{ n, lo, hi int64 }

type bandAcc struct {
	key  segment.Key
	bins map[int64]*bandBin
	left [6]int64 // index -code, as acc.left
}

func (a *bandAcc) add(b int64, n, lo, hi int64) error {
	x := a.bins[b]
	if x == nil {
		a.bins[b] = &bandBin{n: n, lo: lo, hi: hi}
		return nil
	}
	if x.n > math.MaxInt64-n {
		return fmt.Errorf("the counts add up beyond a 64-bit integer")
	}
	x.n += n
	x.lo, x.hi = min(x.lo, lo), max(x.hi, hi)
	return nil
}

// readBands reads band count files made by the query of spec and adds
// them up exactly.
func readBands(paths []string, spec Spec) (*BandCounts, error) {
	if len(paths) == 0 {
		return nil, fmt.Errorf("--counts: give one or more count files")
	}
	m := &BandCounts{grid: spec.Grid, scale: spec.Scale, segs: map[string]*bandAcc{}}
	for i, p := range paths {
		if err := m.readFile(p, i == 0); err != nil {
			return nil, err
		}
	}
	return m, nil
}

// bandFile is the layout of the band count files (count-sql --test
// limits or ranges); a battery count file is named as such.
var bandFile = countFile{tail: []string{"kind", "bin", "n", "lo", "hi"}, what: "band query",
	other: func(path, header string) error {
		if strings.HasSuffix(header, "sum_hi,sum_lo") {
			return fmt.Errorf("%s: the digit battery's counts (sum_hi, sum_lo); limits and ranges read the counts of count-sql --test limits or --test ranges", path)
		}
		return nil
	}}

func (m *BandCounts) readFile(path string, first bool) error {
	var a *bandAcc
	return bandFile.read(path, &m.By, &m.Files, first, func(key segment.Key, rec []string, bad func(string) error) error {
		kind := rec[0]
		bin, err1 := strconv.ParseInt(rec[1], 10, 64)
		n, err2 := strconv.ParseInt(rec[2], 10, 64)
		if err1 != nil || err2 != nil || n < 0 {
			return bad(fmt.Sprintf("bin %q and n %q are not whole numbers (n 0 or more)", rec[1], rec[2]))
		}
		if a == nil || !sameKey(a.key, key) {
			ks := key.String()
			a = m.segs[ks]
			if a == nil {
				a = &bandAcc{key: append(segment.Key(nil), key...), bins: map[int64]*bandBin{}}
				m.segs[ks] = a
			}
		}
		switch {
		case kind == "b" && m.grid.valid(bin):
			lo, err3 := strconv.ParseInt(rec[3], 10, 64)
			hi, err4 := strconv.ParseInt(rec[4], 10, 64)
			if err3 != nil || err4 != nil || lo < 0 || hi < lo {
				return bad(fmt.Sprintf("lo %q and hi %q are not whole numbers with 0 <= lo <= hi", rec[3], rec[4]))
			}
			// Every |units| of bin b lies in [T(b-1), T(b)).
			if (bin > 0 && lo < m.grid.lower(bin)) || (m.grid.valid(bin+1) && hi >= m.grid.lower(bin+1)) {
				return bad(fmt.Sprintf("amounts %d to %d units do not lie in bin %d of the query's grid: the file comes from another query", lo, hi, bin))
			}
			if err := a.add(bin, n, lo, hi); err != nil {
				return bad(err.Error())
			}
		case kind == "x" && bin <= codeZero && bin >= codeFiltered:
			if a.left[-bin] > math.MaxInt64-n {
				return bad("the counts add up beyond a 64-bit integer")
			}
			a.left[-bin] += n
		default:
			return bad(fmt.Sprintf("kind %q with bin %d (kind b: a bin of the query's grid; kind x: a code -1..-5)", kind, bin))
		}
		return nil
	})
}

// left out of every segment: NULL amounts and rows the filter dropped.
func (m *BandCounts) leftOut() (noAmount, filtered int64) {
	for _, a := range m.segs {
		noAmount += a.left[-codeNull]
		filtered += a.left[-codeFiltered]
	}
	return
}

// index finds the files' segment columns named by (without regard to
// case).
func (m *BandCounts) index(by []string) ([]int, []string, error) {
	idx := make([]int, len(by))
	names := make([]string, len(by))
	for i, b := range by {
		idx[i] = -1
		for j, n := range m.By {
			if strings.EqualFold(b, n) {
				idx[i], names[i] = j, n
			}
		}
		if idx[i] < 0 {
			return nil, nil, fmt.Errorf("--by %s: the count files have segments %v; count again with --by %s, or choose among those", b, m.By, b)
		}
	}
	return idx, names, nil
}

// Groups builds the groups a local count between edges gives: with by
// (names among m.By; segments of other columns are added together) one
// group per segment with rows, sorted by key; without, one group of the
// whole selection, key nil. Every edge must be one of the query's
// thresholds (as the amounts compare with it), so that the counts between
// edges are exact sums of the query's bins.
func (m *BandCounts) Groups(by []string, edges []float64) ([]ranges.Group, error) {
	idx, _, err := m.index(by)
	if err != nil {
		return nil, err
	}
	units := make([]int64, len(edges))
	for i, e := range edges {
		units[i] = unitsAtLeast(e, m.scale)
		if !m.grid.has(units[i]) {
			return nil, fmt.Errorf("the band edge %v was not counted by the query (its grid has no threshold at %d units): count again with the query count-sql prints for these options", e, units[i])
		}
	}
	proj := map[string]*ranges.Group{}
	keys := make([]string, 0, len(m.segs))
	for k := range m.segs {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		a := m.segs[k]
		key := make(segment.Key, len(by))
		for i, j := range idx {
			key[i] = a.key[j]
		}
		g := proj[key.String()]
		if g == nil {
			b, err := ranges.NewBins(edges)
			if err != nil {
				return nil, err
			}
			g = &ranges.Group{Key: key, Bins: b}
			proj[key.String()] = g
		}
		var c ranges.Counts
		c.Zero, c.OtherSign, c.BelowMin = a.left[-codeZero], a.left[-codeOtherSign], a.left[-codeBelowMin]
		var lo, hi int64
		for b, x := range a.bins {
			if x.n == 0 {
				continue
			}
			if c.Tested == 0 || x.lo < lo {
				lo = x.lo
			}
			if c.Tested == 0 || x.hi > hi {
				hi = x.hi
			}
			c.Tested += x.n
			j := 0
			if b > 0 {
				l := m.grid.lower(b)
				j = sort.Search(len(units), func(i int) bool { return units[i] > l })
			}
			g.Bins.Counts[j] += x.n
		}
		if c.Tested > 0 {
			c.Min, c.Max = amountFloat(lo, m.scale), amountFloat(hi, m.scale)
		}
		c.Rows = c.Tested + c.Zero + c.OtherSign + c.BelowMin
		g.Counts.Add(c)
	}
	out := make([]ranges.Group, 0, len(proj))
	for _, g := range proj {
		if len(by) > 0 && g.Rows == 0 {
			continue // only NULL amounts or filtered rows: no local group
		}
		out = append(out, *g)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Key.Less(out[j].Key) })
	if len(by) == 0 {
		if len(out) == 0 {
			b, _ := ranges.NewBins(edges)
			out = append(out, ranges.Group{Bins: b})
		}
		out[0].Key = nil
	}
	return out, nil
}

// Summary is the whole selection's counts (no bins).
func (m *BandCounts) Summary() (ranges.Counts, error) {
	g, err := m.Groups(nil, nil)
	if err != nil {
		return ranges.Counts{}, err
	}
	return g[0].Counts, nil
}
