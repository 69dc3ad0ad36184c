package mixing_test

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/mixing"
	"github.com/memix-sim/memix/spectral"
)

// The mix-norm of stripes φ = cos(2πx) on a unit box with L = 1 is
// (1/√2)(1 + 4π²)^{−1/4}; their H⁻¹ norm is 1/(√2·2π).
func ExampleMeter() {
	g, _ := spectral.NewGrid(16, 16, 1, 1)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	f := g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			f[j*g.Nx+i] = math.Cos(2 * math.Pi * g.X(i))
		}
	}
	s := g.NewSpectral()
	p.Forward(s, f)
	m, _ := mixing.NewMeter(g, 1)
	v := m.Measure(s)
	fmt.Printf("mix-norm %.6f (closed form %.6f)\n", v[mixing.Mix], math.Pow(1+4*math.Pi*math.Pi, -0.25)/math.Sqrt2)
	fmt.Printf("H⁻¹ norm %.6f (closed form %.6f)\n", v[mixing.HMinus1], 1/(math.Sqrt2*2*math.Pi))
	// Output:
	// mix-norm 0.280336 (closed form 0.280336)
	// H⁻¹ norm 0.112540 (closed form 0.112540)
}
