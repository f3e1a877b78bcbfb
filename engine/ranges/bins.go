package ranges

import (
	"fmt"
	"math"
	"sort"
	"strconv"
)

// Bins counts amounts between ascending edges e_0 < e_1 < ... < e_{K-1}:
// Counts[0] holds the amounts below e_0, Counts[j] those in [e_{j-1}, e_j)
// for 1 <= j < K, and Counts[K] those at or above e_{K-1}. Bins of the
// same edges add up.
type Bins struct {
	Edges  []float64 `json:"edges"`
	Counts []int64   `json:"counts"`
}

// NewBins returns empty bins over edges, which must be strictly ascending
// and finite.
func NewBins(edges []float64) (Bins, error) {
	if err := checkEdges(edges); err != nil {
		return Bins{}, err
	}
	return Bins{Edges: edges, Counts: make([]int64, len(edges)+1)}, nil
}

func checkEdges(edges []float64) error {
	for i, e := range edges {
		if math.IsNaN(e) || math.IsInf(e, 0) {
			return fmt.Errorf("ranges: edge %v is not a finite number", e)
		}
		if i > 0 && !(e > edges[i-1]) {
			return fmt.Errorf("ranges: edges not strictly ascending at %v", e)
		}
	}
	return nil
}

// Index returns the bin of x: the number of edges at or below x.
func (b Bins) Index(x float64) int {
	return sort.Search(len(b.Edges), func(i int) bool { return b.Edges[i] > x })
}

// Add counts one amount. It is the Go counterpart of the SQL count, used
// by simulations and tests.
func (b Bins) Add(x float64) { b.Counts[b.Index(x)]++ }

// Merge adds the counts of o, which must have the same edges.
func (b Bins) Merge(o Bins) error {
	if len(o.Edges) != len(b.Edges) || len(o.Counts) != len(b.Counts) {
		return fmt.Errorf("ranges: merging bins of different edges")
	}
	for i, e := range b.Edges {
		if o.Edges[i] != e {
			return fmt.Errorf("ranges: merging bins of different edges")
		}
	}
	for i, c := range o.Counts {
		b.Counts[i] += c
	}
	return nil
}

// edgeIndex returns j with Edges[j] == e exactly.
func (b Bins) edgeIndex(e float64) (int, bool) {
	j := sort.SearchFloat64s(b.Edges, e)
	return j, j < len(b.Edges) && b.Edges[j] == e
}

// Between returns the count of amounts in [lo, hi); lo and hi must be
// edges, lo < hi.
func (b Bins) Between(lo, hi float64) (int64, error) {
	i, ok1 := b.edgeIndex(lo)
	j, ok2 := b.edgeIndex(hi)
	if !ok1 || !ok2 || i >= j {
		return 0, fmt.Errorf("ranges: [%v, %v) is not a range between edges", lo, hi)
	}
	var n int64
	for k := i + 1; k <= j; k++ {
		n += b.Counts[k]
	}
	return n, nil
}

// Below returns the count of amounts below the first edge.
func (b Bins) Below() int64 { return b.Counts[0] }

// Above returns the count of amounts at or above the last edge.
func (b Bins) Above() int64 { return b.Counts[len(b.Counts)-1] }

// CleanEdge rounds an edge computed in floating point to 15 significant
// digits, so that round amounts stay round: 0.1 × 3 is 0.3, 5000 × 1.1 is
// 5500. Edges are compared with amounts converted to binary floating
// point, which keeps their order exactly for amounts of up to 15
// significant digits.
func CleanEdge(x float64) float64 {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return x
	}
	v, err := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 15, 64), 64)
	if err != nil {
		return x
	}
	return v
}

// SortedEdges returns the distinct values of edges, ascending.
func SortedEdges(edges []float64) []float64 {
	out := append([]float64(nil), edges...)
	sort.Float64s(out)
	k := 0
	for i, e := range out {
		if i == 0 || e != out[k-1] {
			out[k] = e
			k++
		}
	}
	return out[:k]
}
