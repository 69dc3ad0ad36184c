package flow_test

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// A membrane with a stiff stripe (phase A, ten times as viscous as phase
// B) is driven by the force f = cos(2πy) x̂. The flow stays layered,
// u = u(y) x̂, and is weaker in the stiff stripe around y = 1/2 than
// in the soft one around y = 0. (Model prediction for invented data.)
func ExampleVarSolver() {
	g, _ := spectral.NewGrid(8, 32, 1, 1)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	s, _ := flow.NewVarSolver(p, flow.Membrane{Viscosity: 1}, flow.PCGOptions{Tolerance: 1e-10})

	law := flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: 10, PhaseB: 1}
	phi, f := g.NewReal(), g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			phi[j*g.Nx+i] = -math.Cos(2 * math.Pi * g.Y(j)) // φ = +1 at y = 1/2
			f[j*g.Nx+i] = math.Cos(2 * math.Pi * g.Y(j))
		}
	}
	eta := g.NewReal()
	law.Fill(eta, phi)
	if err := s.SetViscosity(eta); err != nil {
		fmt.Println(err)
		return
	}
	fx, fy := g.NewSpectral(), g.NewSpectral()
	p.Forward(fx, f)
	res, err := s.Solve(fx, fy, fx, fy)
	if err != nil {
		fmt.Println(err)
		return
	}
	ux := g.NewReal()
	p.Inverse(ux, fx)
	fmt.Printf("contrast %.1f, converged: %v\n", s.Contrast(), res.Residual <= 1e-10)
	for _, j := range []int{0, 4, 8, 12, 16} {
		fmt.Printf("y = %.3f  η_m = %5.2f  u_x = %+.5f\n", g.Y(j), eta[j*g.Nx], ux[j*g.Nx])
	}
	// Output:
	// contrast 10.0, converged: true
	// y = 0.000  η_m =  1.00  u_x = +0.01254
	// y = 0.125  η_m =  1.40  u_x = +0.00624
	// y = 0.250  η_m =  3.16  u_x = -0.00250
	// y = 0.375  η_m =  7.14  u_x = -0.00638
	// y = 0.500  η_m = 10.00  u_x = -0.00726
}
