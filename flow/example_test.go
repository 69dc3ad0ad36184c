package flow_test

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// One flow solve: a shear force f = F₀ cos(2πx/L) ŷ on a membrane over a
// deep subphase drives u_y = F₀ cos(2πx/L)/D(k), D = η_m k² + η k.
func Example() {
	m := flow.Membrane{Viscosity: 1, Lower: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}}
	g, _ := spectral.NewGrid(16, 16, 2*math.Pi, 2*math.Pi)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	s, _ := flow.NewSolver(g, m)

	fx, fy := g.NewReal(), g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			fy[j*g.Nx+i] = 3 * math.Cos(g.X(i)) // F₀ = 3, k = 1
		}
	}
	sx, sy := g.NewSpectral(), g.NewSpectral()
	p.Forward(sx, fx)
	p.Forward(sy, fy)
	s.Solve(sx, sy, sx, sy)
	b := flow.NewPowerBudget(s)
	ux, uy := g.NewReal(), g.NewReal()
	p.Inverse(ux, sx)
	p.Inverse(uy, sy)

	fmt.Printf("D(1) = %.2f\n", m.D(1))
	fmt.Printf("u_y at x = 0: %.4f (F₀/D = %.4f), u_x: %.4f\n", uy[0], 3/m.D(1), math.Abs(ux[0]))
	fmt.Printf("dissipation %.4f = ⟨(F₀cos x)²⟩/D = %.4f\n", b.Dissipation(sx, sy), 4.5/m.D(1))
	// Output:
	// D(1) = 1.50
	// u_y at x = 0: 2.0000 (F₀/D = 2.0000), u_x: 0.0000
	// dissipation 3.0000 = ⟨(F₀cos x)²⟩/D = 3.0000
}
