package outputs_test

import (
	"fmt"
	"math"
	"os"
	"path/filepath"

	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

// Write two snapshots of a composition field, then list them and read one
// back through the index.
func Example_snapshots() {
	dir, _ := os.MkdirTemp("", "memix-example")
	defer os.RemoveAll(dir)
	g, _ := spectral.NewGrid(8, 4, 2*math.Pi, math.Pi)
	info := outputs.RunInfo{
		Version: "memix example",
		Config:  "grid: {nx: 8, ny: 4}\n",
		Scales:  outputs.Scales{LengthUnit: "ℓ0", Length: 1e-6, TimeUnit: "τ0", Time: 0.01},
	}
	w, err := outputs.NewSnapshotWriter(dir, g, info)
	if err != nil {
		fmt.Println(err)
		return
	}
	phi := g.NewReal()
	for step := int64(0); step <= 100; step += 100 {
		t := 0.05 * float64(step)
		for j := 0; j < g.Ny; j++ {
			for i := 0; i < g.Nx; i++ {
				phi[j*g.Nx+i] = math.Exp(-t) * math.Cos(g.X(i))
			}
		}
		if err := w.Write(t, step, []outputs.Field{{Name: "phi", Unit: "1", Data: phi}}); err != nil {
			fmt.Println(err)
			return
		}
	}

	f, err := outputs.Open(filepath.Join(dir, outputs.SnapshotIndexName))
	if err != nil {
		fmt.Println(err)
		return
	}
	defer f.Close()
	for _, s := range f.Snapshots() {
		fmt.Printf("step %3d  t = %g τ0 = %g s  %s [%s]  in %s\n", s.Step, s.Time, s.TimeSI, s.Fields[0].Name, s.Fields[0].Unit, s.File)
	}
	last, _ := f.ReadField(nil, "phi", 1)
	fmt.Printf("phi(0, 0) at t = 5: %.6f\n", last[0])
	// Output:
	// step   0  t = 0 τ0 = 0 s  phi [1]  in snapshots.d/000000.h5
	// step 100  t = 5 τ0 = 0.05 s  phi [1]  in snapshots.d/000001.h5
	// phi(0, 0) at t = 5: 0.006738
}
