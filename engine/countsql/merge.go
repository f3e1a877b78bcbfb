package countsql

import (
	"bufio"
	"crypto/sha256"
	"database/sql"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"math/big"
	"os"
	"sort"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/battery"
)

// Exclusion codes of the counting query (kind f, a negative bin).
const (
	codeZero      = -1
	codeOtherSign = -2
	codeBelowMin  = -3
	codeNull      = -4
	codeFiltered  = -5
)

// File is one count file read: where, its SHA-256 and its data rows.
type File struct {
	Path   string `json:"path"`
	SHA256 string `json:"sha256"`
	Rows   int64  `json:"rows"`
}

// Merged is the exact sum of count files: per segment (the file's by_
// columns), counts per first-three bin and last-two bin, sums of |units|
// per first-three bin, and rows left out by reason.
type Merged struct {
	By    []string // segment names, from the files' by_ columns
	Files []File
	segs  map[string]*acc
}

type acc struct {
	key   battery.Key
	first [900]int64
	sums  [900]*big.Int // nil when zero
	last  [100]int64
	left  [6]int64 // index -code: 1 zero, 2 other sign, 3 below min, 4 NULL, 5 filtered
	read  bool     // the local scan would list this segment (rows read: tested, zero or below the minimum)
}

// ReadFiles reads count files (CSV, with the header the counting query
// returns) and adds them up exactly. Every file must have the same by_
// columns. Counts are 64-bit and checked for overflow; sums are exact.
func ReadFiles(paths []string) (*Merged, error) {
	if len(paths) == 0 {
		return nil, fmt.Errorf("--counts: give one or more count files")
	}
	m := &Merged{segs: map[string]*acc{}}
	for i, p := range paths {
		if err := m.readFile(p, i == 0); err != nil {
			return nil, err
		}
	}
	for _, a := range m.segs {
		var tested, lastN int64
		for i := range a.first {
			tested += a.first[i]
		}
		for i := range a.last {
			lastN += a.last[i]
		}
		if tested != lastN {
			return nil, fmt.Errorf("the count files hold %d amounts under first-three digits but %d under last-two digits for segment %q: a file is cut short or comes from another query; count again with the query count-sql printed", tested, lastN, a.key.Label())
		}
	}
	return m, nil
}

func (m *Merged) readFile(path string, first bool) error {
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("--counts %s: %w", path, err)
	}
	defer f.Close()
	h := sha256.New()
	r := csv.NewReader(bufio.NewReader(io.TeeReader(f, h)))
	r.ReuseRecord = true
	head, err := r.Read()
	if err != nil {
		return fmt.Errorf("%s: no header line (kind, bin, n, sum_hi, sum_lo): %w; write the query's result as CSV with a header (psql --csv, clickhouse client --format CSVWithNames, DuckDB COPY ... (HEADER))", path, err)
	}
	var by []string
	for _, c := range head {
		if n, ok := strings.CutPrefix(strings.TrimSpace(c), "by_"); ok {
			by = append(by, n)
		}
	}
	want := append(append([]string{}, prefixed(by)...), "kind", "bin", "n", "sum_hi", "sum_lo")
	if strings.Join(trimAll(head), ",") != strings.Join(want, ",") {
		return fmt.Errorf("%s line 1: columns %s; the counting query returns %s", path, strings.Join(head, ","), strings.Join(want, ","))
	}
	if first {
		m.By = by
	} else if strings.Join(by, ",") != strings.Join(m.By, ",") {
		return fmt.Errorf("%s: segments %v, but the first file has %v: count files to merge come from the same query", path, by, m.By)
	}
	nseg := len(by)
	var rows int64
	key := make(battery.Key, nseg)
	for line := 2; ; line++ {
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
		rows++
		bad := func(what string) error {
			return fmt.Errorf("%s line %d: %s; the file must be the counting query's result, unchanged", path, line, what)
		}
		for i := 0; i < nseg; i++ {
			v := rec[i]
			// NULL is empty (psql, DuckDB) or \N (ClickHouse); the query
			// writes blank values as NULL, so no value is empty.
			if v == "" || v == `\N` {
				key[i] = sql.NullString{}
			} else {
				key[i] = sql.NullString{String: v, Valid: true}
			}
		}
		kind := rec[nseg]
		bin, err1 := strconv.ParseInt(rec[nseg+1], 10, 64)
		n, err2 := strconv.ParseInt(rec[nseg+2], 10, 64)
		hi, ok1 := new(big.Int).SetString(rec[nseg+3], 10)
		lo, ok2 := new(big.Int).SetString(rec[nseg+4], 10)
		if err1 != nil || err2 != nil || !ok1 || !ok2 || n < 0 || hi.Sign() < 0 || lo.Sign() < 0 {
			return bad(fmt.Sprintf("bin %q, n %q, sum_hi %q, sum_lo %q are not whole numbers of the right sign", rec[nseg+1], rec[nseg+2], rec[nseg+3], rec[nseg+4]))
		}
		ks := key.String()
		a := m.segs[ks]
		if a == nil {
			a = &acc{key: append(battery.Key(nil), key...)}
			m.segs[ks] = a
		}
		var slot *int64
		switch {
		case kind == "f" && bin >= 100 && bin <= 999:
			slot = &a.first[bin-100]
			sum := hi.Mul(hi, big.NewInt(1e9))
			sum.Add(sum, lo)
			if sum.Sign() > 0 {
				if a.sums[bin-100] == nil {
					a.sums[bin-100] = new(big.Int)
				}
				a.sums[bin-100].Add(a.sums[bin-100], sum)
			}
			a.read = true
		case kind == "f" && bin <= codeZero && bin >= codeFiltered:
			slot = &a.left[-bin]
			if bin == codeZero || bin == codeBelowMin {
				a.read = true
			}
		case kind == "l" && bin >= 0 && bin <= 99:
			slot = &a.last[bin]
		default:
			return bad(fmt.Sprintf("kind %q with bin %d (kind f: 100..999 or a code -1..-5; kind l: 0..99)", kind, bin))
		}
		if *slot > math.MaxInt64-n {
			return bad("the counts add up beyond a 64-bit integer")
		}
		*slot += n
	}
	m.Files = append(m.Files, File{Path: path, SHA256: hex.EncodeToString(h.Sum(nil)), Rows: rows})
	return nil
}

func prefixed(by []string) []string {
	out := make([]string, len(by))
	for i, b := range by {
		out[i] = "by_" + b
	}
	return out
}

func trimAll(x []string) []string {
	out := make([]string, len(x))
	for i, s := range x {
		out[i] = strings.TrimSpace(s)
	}
	return out
}

// Counts builds the battery's bin-count tables from the merged files, as
// a local scan of the same rows builds them (battery.Plan.Scan): the whole
// selection and, with by (names among m.By; segments of other columns are
// added together), each segment in key order. Sums of |amount| are exact
// integers of units until the end, then divided by 10^scale as the local
// scan divides its sums. A segment is listed when any of its rows was
// read by the local scan's pass (tested, zero or below the minimum).
func (m *Merged) Counts(by []string, scale int) (*battery.Counts, []battery.SegmentCounts, error) {
	idx := make([]int, len(by))
	for i, b := range by {
		idx[i] = -1
		for j, n := range m.By {
			if strings.EqualFold(b, n) {
				idx[i] = j
			}
		}
		if idx[i] < 0 {
			return nil, nil, fmt.Errorf("--by %s: the count files have segments %v; count again with --by %s, or choose among those", b, m.By, b)
		}
	}
	// Project every segment onto the chosen columns; add exactly.
	proj := map[string]*acc{}
	keys := make([]string, 0, len(m.segs))
	for k := range m.segs {
		keys = append(keys, k)
	}
	sort.Strings(keys) // a fixed order: the result must not depend on map order
	for _, k := range keys {
		a := m.segs[k]
		key := make(battery.Key, len(by))
		for i, j := range idx {
			key[i] = a.key[j]
		}
		ks := key.String()
		p := proj[ks]
		if p == nil {
			p = &acc{key: key}
			proj[ks] = p
		}
		if err := p.add(a); err != nil {
			return nil, nil, err
		}
	}
	order := make([]*acc, 0, len(proj))
	for _, p := range proj {
		order = append(order, p)
	}
	sort.Slice(order, func(i, j int) bool { return order[i].key.Less(order[j].key) })
	div := math.Pow10(scale)
	all := battery.NewCounts()
	var segs []battery.SegmentCounts
	var other, null, filtered int64
	for _, p := range order {
		c := p.counts(div)
		other += p.left[-codeOtherSign]
		null += p.left[-codeNull]
		filtered += p.left[-codeFiltered]
		if len(by) == 0 {
			all = c
			continue
		}
		if !p.read {
			continue
		}
		// As the local scan: the whole selection is the sum of the
		// segments in key order (its float sums then agree to the bit).
		all.Add(c)
		segs = append(segs, battery.SegmentCounts{Key: p.key, Counts: c})
	}
	all.Left.OtherSign = other
	all.Left.NoAmount = null
	all.Left.Filtered = filtered
	return all, segs, nil
}

func (p *acc) add(a *acc) error {
	over := func(x, y int64) bool { return x > math.MaxInt64-y }
	for i := range a.first {
		if over(p.first[i], a.first[i]) {
			return fmt.Errorf("the merged counts add up beyond a 64-bit integer")
		}
		p.first[i] += a.first[i]
		if a.sums[i] != nil {
			if p.sums[i] == nil {
				p.sums[i] = new(big.Int)
			}
			p.sums[i].Add(p.sums[i], a.sums[i])
		}
	}
	for i := range a.last {
		if over(p.last[i], a.last[i]) {
			return fmt.Errorf("the merged counts add up beyond a 64-bit integer")
		}
		p.last[i] += a.last[i]
	}
	for i := range a.left {
		if over(p.left[i], a.left[i]) {
			return fmt.Errorf("the merged counts add up beyond a 64-bit integer")
		}
		p.left[i] += a.left[i]
	}
	p.read = p.read || a.read
	return nil
}

// counts is the segment's table; Left holds its zeros and amounts below
// the minimum (the other reasons are the whole selection's, as locally).
func (p *acc) counts(div float64) *battery.Counts {
	c := battery.NewCounts()
	copy(c.FirstThree, p.first[:])
	copy(c.LastTwo, p.last[:])
	for i, s := range p.sums {
		if s != nil {
			f, _ := new(big.Float).SetInt(s).Float64() // nearest double, as DuckDB's CAST to DOUBLE
			c.FirstThreeSum[i] = f / div
		}
	}
	c.Left.Zero = p.left[-codeZero]
	c.Left.BelowMin = p.left[-codeBelowMin]
	return c
}
