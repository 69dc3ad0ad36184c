package spectral_test

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/spectral"
)

// The derivative of sin(2x) on a 2π-periodic grid is 2cos(2x).
func Example_derivative() {
	g, _ := spectral.NewGrid(16, 4, 2*math.Pi, 2*math.Pi)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	f := g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			f[j*g.Nx+i] = math.Sin(2 * g.X(i))
		}
	}
	s := g.NewSpectral()
	p.Forward(s, f)
	g.Dx(s, s)
	p.Inverse(f, s)
	for i := 0; i < 4; i++ {
		fmt.Printf("x = %.4f  df/dx = %+.6f  2cos(2x) = %+.6f\n", g.X(i), f[i], 2*math.Cos(2*g.X(i)))
	}
	// Output:
	// x = 0.0000  df/dx = +2.000000  2cos(2x) = +2.000000
	// x = 0.3927  df/dx = +1.414214  2cos(2x) = +1.414214
	// x = 0.7854  df/dx = +0.000000  2cos(2x) = +0.000000
	// x = 1.1781  df/dx = -1.414214  2cos(2x) = -1.414214
}
