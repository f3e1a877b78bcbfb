package countsql

import (
	"bufio"
	"crypto/sha256"
	"database/sql"
	"encoding/csv"
	"encoding/hex"
	"fmt"
	"io"
	"math"
	"math/big"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	_ "github.com/duckdb/duckdb-go/v2" // reads Parquet count files

	"github.com/leadline/leadline/engine/battery"
	"github.com/leadline/leadline/queries"
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

// sum is an exact sum of |units|: hi * 10^9 + lo + big, where hi and lo
// add up in 64-bit integers until they would overflow and then move into
// big (nil until needed), so that the common case allocates nothing.
type sum struct {
	hi, lo int64
	big    *big.Int
}

func (s *sum) add(hi, lo int64) {
	if hi > math.MaxInt64-s.hi || lo > math.MaxInt64-s.lo {
		s.spill()
	}
	s.hi += hi
	s.lo += lo
}

func (s *sum) addBig(x *big.Int) {
	s.spill()
	s.big.Add(s.big, x)
}

func (s *sum) addSum(o *sum) {
	s.add(o.hi, o.lo)
	if o.big != nil {
		s.addBig(o.big)
	}
}

// spill moves hi and lo into big.
func (s *sum) spill() {
	if s.big == nil {
		s.big = new(big.Int)
	}
	s.big.Add(s.big, s.value(false))
	s.hi, s.lo = 0, 0
}

// value is the exact sum (with big, or hi and lo alone).
func (s *sum) value(withBig bool) *big.Int {
	v := new(big.Int).Mul(big.NewInt(s.hi), big.NewInt(1e9))
	v.Add(v, big.NewInt(s.lo))
	if withBig && s.big != nil {
		v.Add(v, s.big)
	}
	return v
}

type acc struct {
	key   battery.Key
	first [900]int64
	sums  [900]sum
	last  [100]int64
	left  [6]int64 // index -code: 1 zero, 2 other sign, 3 below min, 4 NULL, 5 filtered
	read  bool     // the local scan would list this segment (rows read: tested, zero or below the minimum)
}

// ReadFiles reads count files (CSV with the header the counting query
// returns, or Parquet: a .parquet name) and adds them up exactly. Every file must have the same by_
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
		// The last-two test takes only amounts at or above its minimum
		// (unless last_two_all), so it may count fewer, never more.
		if lastN > tested {
			return nil, fmt.Errorf("the count files hold %d amounts under first-three digits but more, %d, under last-two digits for segment %q: a file is cut short or comes from another query; count again with the query count-sql printed", tested, lastN, a.key.Label())
		}
	}
	return m, nil
}

// batteryFile is the layout of the digit battery's count files.
var batteryFile = countFile{tail: []string{"kind", "bin", "n", "sum_hi", "sum_lo"}, what: "counting query"}

func (m *Merged) readFile(path string, first bool) error {
	var a *acc
	return batteryFile.read(path, &m.By, &m.Files, first, func(key battery.Key, rec []string, bad func(string) error) error {
		kind := rec[0]
		bin, err1 := strconv.ParseInt(rec[1], 10, 64)
		n, err2 := strconv.ParseInt(rec[2], 10, 64)
		// Sums fit 64 bits per row on every engine but PostgreSQL, whose
		// sum of bigint is numeric: read those wider ones exactly.
		hi, err3 := strconv.ParseInt(rec[3], 10, 64)
		lo, err4 := strconv.ParseInt(rec[4], 10, 64)
		var wide *big.Int
		if err3 != nil || err4 != nil {
			h, ok1 := new(big.Int).SetString(rec[3], 10)
			l, ok2 := new(big.Int).SetString(rec[4], 10)
			if !ok1 || !ok2 || h.Sign() < 0 || l.Sign() < 0 {
				return bad(fmt.Sprintf("sum_hi %q and sum_lo %q are not whole numbers of 0 or more", rec[3], rec[4]))
			}
			wide = h.Mul(h, big.NewInt(1e9))
			wide.Add(wide, l)
			err3, err4 = nil, nil
		}
		if err1 != nil || err2 != nil || n < 0 || hi < 0 || lo < 0 {
			return bad(fmt.Sprintf("bin %q, n %q, sum_hi %q, sum_lo %q are not whole numbers of 0 or more", rec[1], rec[2], rec[3], rec[4]))
		}
		// Rows come grouped by segment: look the segment up only when it
		// changes.
		if a == nil || !sameKey(a.key, key) {
			ks := key.String()
			a = m.segs[ks]
			if a == nil {
				a = &acc{key: append(battery.Key(nil), key...)}
				m.segs[ks] = a
			}
		}
		var slot *int64
		switch {
		case kind == "f" && bin >= 100 && bin <= 999:
			slot = &a.first[bin-100]
			if wide != nil {
				a.sums[bin-100].addBig(wide)
			} else {
				a.sums[bin-100].add(hi, lo)
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
		return nil
	})
}

// openCounts opens a count file: CSV with a header, or Parquet (a
// .parquet name, read through DuckDB). sum gives the file's SHA-256 once
// every record has been read.
func openCounts(path string) (r records, sum func() string, closeFn func(), err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, nil, fmt.Errorf("--counts %s: %w", path, err)
	}
	h := sha256.New()
	sum = func() string { return hex.EncodeToString(h.Sum(nil)) }
	if strings.EqualFold(filepath.Ext(path), ".parquet") {
		defer f.Close()
		if _, err := io.Copy(h, f); err != nil {
			return nil, nil, nil, fmt.Errorf("--counts %s: %w", path, err)
		}
		pr, err := openParquet(path)
		if err != nil {
			return nil, nil, nil, err
		}
		return pr, sum, pr.close, nil
	}
	cr := csv.NewReader(bufio.NewReaderSize(io.TeeReader(f, h), 1<<16))
	cr.ReuseRecord = true
	return cr, sum, func() { f.Close() }, nil
}

func sameKey(a, b battery.Key) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
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
		p.sums[i].addSum(&a.sums[i])
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
	for i := range p.sums {
		s := &p.sums[i]
		if s.big == nil && s.hi < 9_007_199 && s.lo < 1<<53 {
			// Below 2^53 the sum is exact in a double: skip math/big.
			if v := s.hi*1e9 + s.lo; v < 1<<53 {
				c.FirstThreeSum[i] = float64(v) / div
				continue
			}
		}
		f, _ := new(big.Float).SetInt(s.value(true)).Float64() // nearest double, as DuckDB's CAST to DOUBLE
		c.FirstThreeSum[i] = f / div
	}
	c.Left.Zero = p.left[-codeZero]
	c.Left.BelowMin = p.left[-codeBelowMin]
	return c
}

// records is a source of count rows as text: the header first.
type records interface {
	Read() ([]string, error)
}

// parquetRecords reads a Parquet count file through DuckDB, in memory,
// every value as text (NULL as empty), as the CSV reader sees them.
type parquetRecords struct {
	db   *sql.DB
	rows *sql.Rows
	head []string
	vals []sql.NullString
	rec  []string
}

func openParquet(path string) (*parquetRecords, error) {
	db, err := sql.Open("duckdb", "")
	if err != nil {
		return nil, fmt.Errorf("--counts %s: %w", path, err)
	}
	rows, err := db.Query(queries.Get("countsql_read_parquet"), path)
	if err != nil {
		db.Close()
		return nil, fmt.Errorf("--counts %s: not a Parquet file DuckDB can read: %s", path, firstLine(err.Error()))
	}
	cols, err := rows.Columns()
	if err != nil {
		rows.Close()
		db.Close()
		return nil, fmt.Errorf("--counts %s: %w", path, err)
	}
	return &parquetRecords{db: db, rows: rows, head: cols, vals: make([]sql.NullString, len(cols)), rec: make([]string, len(cols))}, nil
}

func (p *parquetRecords) Read() ([]string, error) {
	if p.head != nil {
		h := p.head
		p.head = nil
		return h, nil
	}
	if !p.rows.Next() {
		if err := p.rows.Err(); err != nil {
			return nil, err
		}
		return nil, io.EOF
	}
	dest := make([]any, len(p.vals))
	for i := range p.vals {
		dest[i] = &p.vals[i]
	}
	if err := p.rows.Scan(dest...); err != nil {
		return nil, err
	}
	for i, v := range p.vals {
		p.rec[i] = v.String // "" for NULL
	}
	return p.rec, nil
}

func (p *parquetRecords) close() {
	p.rows.Close()
	p.db.Close()
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}
