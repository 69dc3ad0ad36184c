package flow_test

import (
	"math"
	"testing"

	"github.com/memix-sim/memix/flow"
)

// TestVarSolverLongitudinalForce: a force that is longitudinal (f ∥ k̂, a
// pure pressure gradient) drives no flow, P f = 0. In floating point the
// projection leaves a longitudinal round-off of order ε‖f‖, and a
// right-hand side made of that alone can never be matched by A, whose
// range is transverse, to a relative residual below about 1; so Solve
// projects twice, leaving a longitudinal part of order ε‖b‖. The force
// is the divergence of Q = q(cos(k·x)) with k along the diagonal, the
// active force of one mode of the order tensor aligned with its
// wavevector (as the initial condition of a growth-rate run may set it).
// Checks: the solve converges (residual ≤ tolerance), and the velocity is
// at round-off: ‖u‖ ≤ 8ε‖f‖/λ_min, with λ_min the smallest eigenvalue
// bound of vvLambdaMin and 8ε covering the two projections.
func TestVarSolverLongitudinalForce(t *testing.T) {
	g := vvGrid(t, 32, 32, 8, 8)
	p := vvPlan(t, g, "")
	eta := vvDomainEta(g, 10)
	for _, c := range vvMembranes() {
		s := vvVarSolver(t, p, c.m, flow.PCGOptions{})
		if err := s.SetViscosity(eta); err != nil {
			t.Fatal(err)
		}
		for _, mode := range [][2]int{{1, 1}, {1, 0}, {2, -3}} {
			fx, fy := g.NewSpectral(), g.NewSpectral()
			idx := g.RowOfModeY(mode[1])*g.Nkx() + mode[0]
			kx, ky := g.Kx()[mode[0]], g.Ky()[g.RowOfModeY(mode[1])]
			// f = i k (0.01 e^{iθ}): the gradient of a scalar mode.
			a := complex(0, 1) * complex(0.01*math.Cos(0.4), 0.01*math.Sin(0.4))
			fx[idx], fy[idx] = complex(kx, 0)*a, complex(ky, 0)*a
			fnorm := vvNorm(g, fx, fy)
			res, err := s.Solve(fx, fy, fx, fy)
			if err != nil {
				t.Errorf("%s mode %v: %v", c.name, mode, err)
				continue
			}
			lo, _ := s.ViscosityRange()
			bound := 8 * vvEps * fnorm / vvLambdaMin(g, c.m, lo)
			if u := vvNorm(g, fx, fy); !(u <= bound) {
				t.Errorf("%s mode %v: ‖u‖ = %.3g for a longitudinal force, bound %.3g (%d iterations)", c.name, mode, u, bound, res.Iterations)
			}
		}
	}
}
