package outputs

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/memix-sim/memix/spectral"
)

// BenchmarkSnapshotWrite measures one snapshot of six fields, including
// the atomic rewrite of the index and the sidecar and every fsync, and
// reports the size of a snapshot file per grid point (6 × 8 B of data plus
// the file's own overhead).
func BenchmarkSnapshotWrite(b *testing.B) {
	for _, n := range []int{256, 512} {
		b.Run(fmt.Sprintf("%d²×6", n), func(b *testing.B) {
			g, err := spectral.NewGrid(n, n, 1, 1)
			if err != nil {
				b.Fatal(err)
			}
			fields := make([]Field, 6)
			for k := range fields {
				d := g.NewReal()
				for i := range d {
					d[i] = math.Sin(float64(i*(k+1)) * 1e-3)
				}
				fields[k] = Field{Name: fmt.Sprintf("f%d", k), Unit: "1", Data: d}
			}
			dir := b.TempDir()
			w, err := NewSnapshotWriter(dir, g, testInfo())
			if err != nil {
				b.Fatal(err)
			}
			b.SetBytes(int64(6 * 8 * n * n))
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				if err := w.Write(float64(i), int64(i+1), fields); err != nil {
					b.Fatal(err)
				}
			}
			b.StopTimer()
			st, err := os.Stat(filepath.Join(dir, snapshotFile(0)))
			if err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(st.Size())/float64(n*n), "B/point")
		})
	}
}
