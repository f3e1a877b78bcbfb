package countsql

import (
	"bufio"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/leadline/leadline/engine/battery"
)

// writePartials writes files count files as the counting query returns
// them, each with segs segments (none when 0) and every first-three and
// last-two bin filled, plus the exclusion codes.
func writePartials(b *testing.B, dir string, files, segs int) []string {
	b.Helper()
	r := rand.New(rand.NewPCG(1, 2))
	var paths []string
	for i := range files {
		p := filepath.Join(dir, fmt.Sprintf("part%04d.csv", i))
		f, err := os.Create(p)
		if err != nil {
			b.Fatal(err)
		}
		w := bufio.NewWriter(f)
		if segs > 0 {
			w.WriteString("by_entity,")
		}
		w.WriteString("kind,bin,n,sum_hi,sum_lo\n")
		for s := range max(segs, 1) {
			seg := ""
			if segs > 0 {
				seg = fmt.Sprintf("E%03d,", s)
			}
			for code := -5; code <= -1; code++ {
				fmt.Fprintf(w, "%sf,%d,%d,0,0\n", seg, code, 1+r.IntN(50))
			}
			var tested int64
			for bin := 100; bin <= 999; bin++ {
				n := int64(1 + r.IntN(200))
				tested += n
				fmt.Fprintf(w, "%sf,%d,%d,%d,%d\n", seg, bin, n, r.IntN(1000), r.IntN(1e9))
			}
			for bin := range 100 {
				n := tested / 100
				if bin == 0 {
					n += tested % 100
				}
				fmt.Fprintf(w, "%sl,%d,%d,0,0\n", seg, bin, n)
			}
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
		f.Close()
		paths = append(paths, p)
	}
	return paths
}

func benchMerge(b *testing.B, files, segs int) {
	paths := writePartials(b, b.TempDir(), files, segs)
	var size int64
	for _, p := range paths {
		if fi, err := os.Stat(p); err == nil {
			size += fi.Size()
		}
	}
	var by []string
	if segs > 0 {
		by = []string{"entity"}
	}
	b.ResetTimer()
	for range b.N {
		m, err := ReadFiles(paths)
		if err != nil {
			b.Fatal(err)
		}
		all, sc, err := m.Counts(by, 2)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := battery.FromCounts(battery.Options{Tests: battery.CountTests(), By: by}, 2, "test", by, all, sc); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(size)/1e6, "MB_read")
}

// BenchmarkMerge1000Files: 1,000 partial count files of the whole
// population (1,005 rows each), merged exactly, then the battery's
// statistics.
func BenchmarkMerge1000Files(b *testing.B) { benchMerge(b, 1000, 0) }

// BenchmarkMerge1000Files10Segments: the same with 10 segments per file
// (10,050 rows each), statistics and rankings of every segment.
func BenchmarkMerge1000Files10Segments(b *testing.B) { benchMerge(b, 1000, 10) }
