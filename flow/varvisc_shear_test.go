package flow_test

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"

	"github.com/memix-sim/memix/flow"
)

// vvShear1D is the exact layered problem of MODEL.md §3: η_m = η_m(y),
// f = f(y) x̂, no subphase and no friction. The flow is u = u(y) x̂ with
// (η_m u')' = −f, so η_m u' = C − F with F(y) = ∫₀^y f and, since u is
// periodic, C = ∫(F/η_m)/∫(1/η_m) over a period. Integrating once more,
// U(y) = ∫₀^y (C − F)/η_m, and the solver's u has zero mean (D(0) = 0), so
// u = U − ⟨U⟩ with ⟨U⟩ = (1/L)∫₀^L (L − s)(C − F(s))/η_m(s) ds (order of
// integration swapped). The viscosity is the log-linear rule of a smooth
// composition profile, so it is not a trigonometric polynomial.
type vvShear1D struct {
	ly  float64
	law flow.ViscosityLaw
}

const (
	vvShearA1, vvShearA2, vvShearPh = 1.3, -0.7, 0.3 // f = A1 sin(qy) + A2 cos(2qy + ph)
	vvShearP1, vvShearP2            = 0.8, 0.15      // φ = P1 sin(qy) + P2 cos(2qy), |φ| < 1
)

func (s vvShear1D) q() float64 { return 2 * math.Pi / s.ly }
func (s vvShear1D) phi(y float64) float64 {
	return vvShearP1*math.Sin(s.q()*y) + vvShearP2*math.Cos(2*s.q()*y)
}
func (s vvShear1D) eta(y float64) float64 { return s.law.At(s.phi(y)) }
func (s vvShear1D) f(y float64) float64 {
	return vvShearA1*math.Sin(s.q()*y) + vvShearA2*math.Cos(2*s.q()*y+vvShearPh)
}

// bigF is F(y) = ∫₀^y f, in closed form.
func (s vvShear1D) bigF(y float64) float64 {
	q := s.q()
	return vvShearA1/q*(1-math.Cos(q*y)) + vvShearA2/(2*q)*(math.Sin(2*q*y+vvShearPh)-math.Sin(vvShearPh))
}

// reference returns u(y) at the points ys by n-point Gauss–Legendre
// quadrature (gonum integrate/quad).
func (s vvShear1D) reference(ys []float64, n int) []float64 {
	L := s.ly
	legendre := quad.Legendre{}
	num := quad.Fixed(func(y float64) float64 { return s.bigF(y) / s.eta(y) }, 0, L, n, legendre, 0)
	den := quad.Fixed(func(y float64) float64 { return 1 / s.eta(y) }, 0, L, n, legendre, 0)
	c := num / den
	g := func(y float64) float64 { return (c - s.bigF(y)) / s.eta(y) }
	mean := quad.Fixed(func(y float64) float64 { return (L - y) * g(y) }, 0, L, n, legendre, 0) / L
	u := make([]float64, len(ys))
	for j, y := range ys {
		u[j] = quad.Fixed(g, 0, y, n, legendre, 0) - mean
	}
	return u
}

// TestVarSolverShear1D checks the solver against the exact layered
// solution (MODEL.md §3; reference by quadrature, gonum integrate/quad).
//
// The discretisation is spectral, so the error must fall faster than any
// power of the spacing until round-off: every doubling of Ny from 8 must
// cut it by at least 10 until it reaches the floor. At the finest grid the
// error is bounded by the solver part and round-off:
//   - solver: for divergence-free u, ⟨u, Au⟩ ≥ λ_min‖u‖² with λ_min =
//     η_min k_min² (no subphase), so ‖u − u_h‖ ≤ ‖r‖/λ_min with ‖r‖ the
//     final residual the solver returns (box L² norms);
//   - round-off: the residual is evaluated with four transforms whose
//     error (vvFFTTol each, relative to ‖b‖) the inverse operator can
//     amplify by up to κ(A) = λ_max/λ_min; budget 4·vvFFTTol·κ(A)·‖b‖/λ_max
//     = 4·vvFFTTol·‖b‖/λ_min;
//   - quadrature: the difference between 60- and 120-point rules,
//     asserted below 1e-14 of max|u| first.
func TestVarSolverShear1D(t *testing.T) {
	prob := vvShear1D{ly: 2, law: flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: 10, PhaseB: 1}}
	var prevErr float64
	for _, ny := range []int{8, 16, 32, 64} {
		g := vvGrid(t, 8, ny, 1, prob.ly)
		p := vvPlan(t, g, "")
		m := flow.Membrane{Viscosity: 1}
		s := vvVarSolver(t, p, m, flow.PCGOptions{Tolerance: 1e-13})
		eta, fr := g.NewReal(), g.NewReal()
		ys := make([]float64, ny)
		for j := 0; j < ny; j++ {
			ys[j] = g.Y(j)
			for i := 0; i < g.Nx; i++ {
				eta[j*g.Nx+i] = prob.eta(g.Y(j))
				fr[j*g.Nx+i] = prob.f(g.Y(j))
			}
		}
		if err := s.SetViscosity(eta); err != nil {
			t.Fatal(err)
		}
		fx, fy := g.NewSpectral(), g.NewSpectral()
		p.Forward(fx, fr)
		bnorm := vvNorm(g, fx, fy)          // f = f(y) x̂ is transverse: P f = f
		res, err := s.Solve(fx, fy, fx, fy) // in place
		if err != nil {
			t.Fatal(err)
		}
		ux, uy := g.NewReal(), g.NewReal()
		p.Inverse(ux, fx)
		p.Inverse(uy, fy)

		ref := prob.reference(ys, 60)
		ref2 := prob.reference(ys, 120)
		var umax, qerr float64
		for j := range ref {
			umax = math.Max(umax, math.Abs(ref2[j]))
			qerr = math.Max(qerr, math.Abs(ref[j]-ref2[j]))
		}
		if qerr > 1e-14*umax {
			t.Fatalf("Ny=%d: quadrature reference not converged: 60 vs 120 points differ by %.2g", ny, qerr)
		}
		var sq, uymax float64
		for j := 0; j < ny; j++ {
			for i := 0; i < g.Nx; i++ {
				d := ux[j*g.Nx+i] - ref2[j]
				sq += d * d
				uymax = math.Max(uymax, math.Abs(uy[j*g.Nx+i]))
			}
		}
		rms := math.Sqrt(sq / float64(g.RealLen()))
		lo, _ := s.ViscosityRange()
		lamMin := vvLambdaMin(g, m, lo)
		bound := (res.Residual + 4*vvFFTTol(g.RealLen())) * bnorm / lamMin
		t.Logf("Ny=%d: rms error %.3g (max|u| %.3g), bound %.2g; %d iterations, residual %.2g; max|u_y| %.2g",
			ny, rms, umax, bound, res.Iterations, res.Residual, uymax)
		if prevErr > 0 {
			t.Logf("Ny=%d: error ratio to Ny=%d: %.3g", ny, ny/2, prevErr/rms)
			// Spectral convergence while the previous level is above the
			// floor (100 times this level's bound).
			if prevErr > 100*bound && prevErr/rms < 10 {
				t.Errorf("Ny=%d: error fell only by %.3g from Ny=%d: not spectral", ny, prevErr/rms, ny/2)
			}
		}
		prevErr = rms
		if ny == 64 && !(rms <= bound) {
			t.Errorf("Ny=64: rms error %.3g > bound %.3g", rms, bound)
		}
		// u_y: the force has no y component and nothing couples it in the
		// layered geometry; allow the round-off of the residual.
		if !(uymax <= 4*vvFFTTol(g.RealLen())*bnorm/lamMin) {
			t.Errorf("Ny=%d: max|u_y| = %.3g, want round-off", ny, uymax)
		}
	}
}
