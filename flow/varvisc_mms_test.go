package flow_test

import (
	"math"
	"testing"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// Manufactured solutions [Salari & Knupp, SAND2000-1444 (2000); Roache,
// J. Fluids Eng. 124, 4 (2002)]: pick a divergence-free u* = (∂yψ, −∂xψ)
// and a viscosity η_m(x, y), evaluate the force
//
//	f = −∇·[η_m(∇u* + ∇u*ᵀ)] + (Γ + ξ)u* = −[2E*·∇η_m + η_m∇²u*] + (Γ + ξ)u*
//
// analytically at the grid points (no transform involved; the gradient part
// of f is removed by the solver's projection, as the pressure would), and
// recover u*.

// vvMMSMode is one term A cos(k·x + ph) of the stream function, k = 2π(nx/Lx, ny/Ly).
type vvMMSMode struct {
	nx, ny int
	a, ph  float64
}

// vvMMSVisc evaluates a viscosity and its gradient at a point.
type vvMMSVisc func(x, y float64) (eta, dx, dy float64)

// vvMMSTrigVisc is η = e0 + Σ b cos(k·x + ph): a trigonometric polynomial.
func vvMMSTrigVisc(g *spectral.Grid, e0 float64, modes []vvMMSMode) vvMMSVisc {
	return func(x, y float64) (float64, float64, float64) {
		eta, dx, dy := e0, 0.0, 0.0
		for _, m := range modes {
			kx, ky := 2*math.Pi*float64(m.nx)/g.Lx, 2*math.Pi*float64(m.ny)/g.Ly
			c, s := math.Cos(kx*x+ky*y+m.ph), math.Sin(kx*x+ky*y+m.ph)
			eta += m.a * c
			dx -= m.a * kx * s
			dy -= m.a * ky * s
		}
		return eta, dx, dy
	}
}

// vvMMSLawVisc is η = law(φ) with φ = Σ b cos(k·x + ph) (Σ|b| < 1, so the
// clamp is inactive): for the log-linear rule, ∇η = η ln sqrt(η_A/η_B) ∇φ.
// Not a trigonometric polynomial.
func vvMMSLawVisc(g *spectral.Grid, law flow.ViscosityLaw, modes []vvMMSMode) vvMMSVisc {
	phi := vvMMSTrigVisc(g, 0, modes)
	half := (math.Log(law.PhaseA) - math.Log(law.PhaseB)) / 2
	return func(x, y float64) (float64, float64, float64) {
		p, px, py := phi(x, y)
		eta := law.At(p)
		return eta, eta * half * px, eta * half * py
	}
}

// vvMMSProblem returns u* and f on the grid (real fields). u0 is a uniform
// flow added to u*, held by D(0)u0 in f (use it only when D(0) > 0).
func vvMMSProblem(g *spectral.Grid, m flow.Membrane, psi []vvMMSMode, visc vvMMSVisc, u0x, u0y float64) (eta, ux, uy, fx, fy []float64) {
	eta, ux, uy, fx, fy = g.NewReal(), g.NewReal(), g.NewReal(), g.NewReal(), g.NewReal()
	d0 := vvDamp(m, 0)
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			x, y := g.X(i), g.Y(j)
			e, ex, ey := visc(x, y)
			var vx, vy, gxx, gxy, gyx, gyy, lx, ly, dampx, dampy float64 // gij = ∂j u_i
			for _, md := range psi {
				kx, ky := 2*math.Pi*float64(md.nx)/g.Lx, 2*math.Pi*float64(md.ny)/g.Ly
				k2 := kx*kx + ky*ky
				th := kx*x + ky*y + md.ph
				s, c := math.Sin(th), math.Cos(th)
				// ψ = a cos θ: u = (∂yψ, −∂xψ) = a sin θ (−ky, kx).
				ax, ay := -md.a*ky, md.a*kx
				vx += ax * s
				vy += ay * s
				gxx += ax * c * kx
				gxy += ax * c * ky
				gyx += ay * c * kx
				gyy += ay * c * ky
				lx -= k2 * ax * s
				ly -= k2 * ay * s
				gam := vvDamp(m, math.Sqrt(k2))
				dampx += gam * ax * s
				dampy += gam * ay * s
			}
			// 2E·∇η: (2E)_ij = ∂j u_i + ∂i u_j.
			exx, eyy, exy := 2*gxx, 2*gyy, gxy+gyx
			idx := j*g.Nx + i
			eta[idx] = e
			ux[idx], uy[idx] = vx+u0x, vy+u0y
			fx[idx] = -(exx*ex + exy*ey + e*lx) + dampx + d0*u0x
			fy[idx] = -(exy*ex + eyy*ey + e*ly) + dampy + d0*u0y
		}
	}
	return
}

// vvMMSSolve runs the solver on the problem and returns the box L² error of
// u against u*, ‖u*‖, the bound on the solver's share of the error
// (‖r‖/λ_min, see TestVarSolverShear1D) and the result.
func vvMMSSolve(t *testing.T, g *spectral.Grid, p spectral.Plan, m flow.Membrane, eta, ux, uy, fx, fy []float64, tol float64) (errL2, norm, bound float64, res flow.PCGResult) {
	t.Helper()
	s := vvVarSolver(t, p, m, flow.PCGOptions{Tolerance: tol})
	if err := s.SetViscosity(eta); err != nil {
		t.Fatal(err)
	}
	fxs, fys := g.NewSpectral(), g.NewSpectral()
	p.Forward(fxs, fx)
	p.Forward(fys, fy)
	// The residual is relative to ‖P f‖ ≤ ‖f‖; using ‖f‖ keeps the bound
	// conservative without computing P f here.
	bnorm := vvNorm(g, fxs, fys)
	res, err := s.Solve(fxs, fys, fxs, fys)
	if err != nil {
		t.Fatal(err)
	}
	vx, vy := g.NewReal(), g.NewReal()
	p.Inverse(vx, fxs)
	p.Inverse(vy, fys)
	var sq, nsq float64
	for i := range vx {
		dx, dy := vx[i]-ux[i], vy[i]-uy[i]
		sq += dx*dx + dy*dy
		nsq += ux[i]*ux[i] + uy[i]*uy[i]
	}
	n := float64(len(vx))
	lo, _ := s.ViscosityRange()
	bound = (res.Residual + 4*vvFFTTol(g.RealLen())) * bnorm / vvLambdaMin(g, m, lo)
	return math.Sqrt(sq / n), math.Sqrt(nsq / n), bound, res
}

var vvMMSPsi = []vvMMSMode{{1, 0, 0.3, 0.2}, {1, -2, 0.2, 1.0}, {2, 1, 0.1, -0.7}, {0, 3, 0.05, 2.1}}

// TestVarSolverManufacturedExact: with a trigonometric-polynomial
// viscosity (|nx|, |ny| ≤ 2) and stream function (|nx| ≤ 2, |ny| ≤ 3),
// η_m E has |nx| ≤ 4, |ny| ≤ 5, which the 24 × 32 grid (Nyquist 12 and 16)
// resolves without aliasing, so the
// pseudo-spectral operator is exact on u* and the solver must return u* up
// to its own error: the bound ‖r‖/λ_min (residual returned by the solve
// plus four transforms of round-off), for every subphase, with a uniform
// flow (0.4, −0.25) added when D(0) > 0.
func TestVarSolverManufacturedExact(t *testing.T) {
	g := vvGrid(t, 24, 32, 2.0, 2.5)
	p := vvPlan(t, g, "")
	visc := vvMMSTrigVisc(g, 1.5, []vvMMSMode{{1, 1, 0.6, 0.4}, {0, 2, 0.3, -1.2}, {2, -1, 0.25, 0.9}}) // η ∈ [0.35, 2.65]
	for _, c := range vvMembranes() {
		var u0x, u0y float64
		if vvDamp(c.m, 0) > 0 {
			u0x, u0y = 0.4, -0.25
		}
		eta, ux, uy, fx, fy := vvMMSProblem(g, c.m, vvMMSPsi, visc, u0x, u0y)
		e, norm, bound, res := vvMMSSolve(t, g, p, c.m, eta, ux, uy, fx, fy, 1e-12)
		t.Logf("%s: ‖u − u*‖ = %.3g (‖u*‖ = %.3g), bound %.3g; %d iterations, contrast %.3g",
			c.name, e, norm, bound, res.Iterations, flow.ViscosityContrast(eta))
		if !(e <= bound) {
			t.Errorf("%s: ‖u − u*‖ = %.3g > bound %.3g", c.name, e, bound)
		}
	}
}

// TestVarSolverManufacturedConvergence: with the log-linear viscosity of a
// smooth composition (η_A/η_B = 20) the viscosity is not band-limited and
// the operator is only spectrally accurate: the error must fall by at least
// 10 per doubling of the grid until it reaches 100 times the solver bound.
func TestVarSolverManufacturedConvergence(t *testing.T) {
	law := flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: 20, PhaseB: 1}
	for _, c := range vvMembranes() {
		var prev float64
		for _, n := range []int{8, 16, 32, 64} {
			g := vvGrid(t, n, n, 2.0, 2.5)
			p := vvPlan(t, g, "")
			visc := vvMMSLawVisc(g, law, []vvMMSMode{{1, 1, 0.6, 0.4}, {0, 1, 0.3, -1.2}})
			var u0x, u0y float64
			if vvDamp(c.m, 0) > 0 {
				u0x, u0y = 0.4, -0.25
			}
			eta, ux, uy, fx, fy := vvMMSProblem(g, c.m, vvMMSPsi, visc, u0x, u0y)
			e, norm, bound, res := vvMMSSolve(t, g, p, c.m, eta, ux, uy, fx, fy, 1e-12)
			t.Logf("%s N=%d: ‖u − u*‖ = %.3g (‖u*‖ = %.3g), bound %.3g; %d iterations", c.name, n, e, norm, bound, res.Iterations)
			if prev > 0 {
				t.Logf("%s N=%d: error ratio %.3g", c.name, n, prev/e)
				if prev > 100*bound && prev/e < 10 {
					t.Errorf("%s N=%d: error fell only by %.3g", c.name, n, prev/e)
				}
			}
			if n == 64 && !(e <= 100*bound) {
				t.Errorf("%s N=64: error %.3g not at the floor (100 × bound %.3g)", c.name, e, bound)
			}
			prev = e
		}
	}
}
