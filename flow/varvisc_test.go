package flow_test

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// TestVarSolverUniformMatchesSolver: with a uniform viscosity the
// preconditioner is the exact inverse, so PCG must take exactly one
// iteration and reproduce the diagonal solver û = P f̂/D (flow.Solver, the
// reference) up to round-off. Round-off budget: one operator application
// is four transforms (2 inverse, 2 forward), each with relative error
// vvFFTTol; the step length α = ⟨r,z⟩/⟨p,Ap⟩ inherits their sum, and the
// comparison another two for the solver's residual; so 8·vvFFTTol relative
// to the largest velocity coefficient. The force is white noise with every
// mode present (k = 0 and Nyquist included) and a box that is not square.
func TestVarSolverUniformMatchesSolver(t *testing.T) {
	g := vvGrid(t, 32, 24, 2.0, 1.5)
	for _, b := range spectral.Backends() {
		p := vvPlan(t, g, b)
		fx, fy := vvRandomForce(g, p, 3)
		for _, c := range vvMembranes() {
			for _, eta := range []float64{1, 0.37} {
				m := c.m
				s := vvVarSolver(t, p, m, flow.PCGOptions{Tolerance: 1e-12})
				field := g.NewReal()
				for i := range field {
					field[i] = eta
				}
				if err := s.SetViscosity(field); err != nil {
					t.Fatal(err)
				}
				m.Viscosity = eta
				ref, err := flow.NewSolver(g, m)
				if err != nil {
					t.Fatal(err)
				}
				wx, wy := g.NewSpectral(), g.NewSpectral()
				ref.Solve(wx, wy, fx, fy)
				ux, uy := g.NewSpectral(), g.NewSpectral()
				res, err := s.Solve(ux, uy, fx, fy)
				if err != nil {
					t.Fatalf("%s/%s η=%g: %v", b, c.name, eta, err)
				}
				if res.Iterations != 1 {
					t.Errorf("%s/%s η=%g: %d iterations, want 1", b, c.name, eta, res.Iterations)
				}
				var umax, dmax float64
				for idx := range ux {
					umax = math.Max(umax, math.Max(vvAbs(wx[idx]), vvAbs(wy[idx])))
					dmax = math.Max(dmax, math.Max(vvAbs(ux[idx]-wx[idx]), vvAbs(uy[idx]-wy[idx])))
				}
				tol := 8 * vvFFTTol(g.RealLen()) * umax
				t.Logf("%s/%s η=%g: max |u − u_diag| = %.2g (%.2g of max |u|), tolerance %.2g", b, c.name, eta, dmax, dmax/umax, tol)
				if !(dmax <= tol) {
					t.Errorf("%s/%s η=%g: max |u − u_diag| = %.3g > %.3g", b, c.name, eta, dmax, tol)
				}
			}
		}
	}
}

func vvAbs(z complex128) float64 { return math.Hypot(real(z), imag(z)) }

// vvSolenoidal returns a random divergence-free field u = (∂yψ, −∂xψ) of a
// white-noise stream function with its Nyquist row and column removed, so
// that u lies in VarSolver's solution space (for D(0) = 0; it has no
// uniform part).
func vvSolenoidal(g *spectral.Grid, p spectral.Plan, seed uint64) (ux, uy []complex128) {
	psi, _ := vvRandomForce(g, p, seed)
	nk := g.Nkx()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < nk; i++ {
			if i == nk-1 || j == g.Ny/2 {
				psi[j*nk+i] = 0
			}
		}
	}
	ux, uy = g.NewSpectral(), g.NewSpectral()
	g.Dy(ux, psi)
	g.Dx(uy, psi)
	for i := range uy {
		uy[i] = -uy[i]
	}
	return ux, uy
}

func vvDot(g *spectral.Grid, ax, ay, bx, by []complex128) float64 {
	return g.Dot(ax, bx) + g.Dot(ay, by)
}

// TestVarSolverOperatorSymmetricPositive checks the properties CG rests on
// (see the VarSolver documentation): on divergence-free fields the
// pseudo-spectral operator, without dealiasing of η_m E, is symmetric,
// ⟨v, Au⟩ = ⟨Av, u⟩, to the round-off of its transforms (four per
// application, 8·vvFFTTol·(‖v‖‖Au‖ + ‖Av‖‖u‖) allowed); its Rayleigh
// quotient lies within [λ_min, λ_max] of the bounds
// Σ(η_min k² + Γ + ξ)|û|² ≤ ⟨u, Au⟩ ≤ Σ(η_max k² + Γ + ξ)|û|²; and the
// preconditioned quotient ⟨u, Au⟩/⟨u, Mu⟩ (M = η̄k² + Γ + ξ) lies within
// [min(1, η_min/η̄), max(1, η_max/η̄)], which bounds the condition number
// of the preconditioned operator by the contrast. The bounds are
// inequalities between sums, so they are allowed the same round-off.
func TestVarSolverOperatorSymmetricPositive(t *testing.T) {
	g := vvGrid(t, 48, 40, 1.2, 1.0)
	p := vvPlan(t, g, "")
	eta := vvDomainEta(g, 50)
	for _, c := range vvMembranes() {
		s := vvVarSolver(t, p, c.m, flow.PCGOptions{})
		if err := s.SetViscosity(eta); err != nil {
			t.Fatal(err)
		}
		lo, hi := s.ViscosityRange()
		bar := s.PreconditionerViscosity()
		rt := 8 * vvFFTTol(g.RealLen())
		for trial := uint64(0); trial < 3; trial++ {
			ux, uy := vvSolenoidal(g, p, 10+trial)
			vx, vy := vvSolenoidal(g, p, 20+trial)
			aux, auy := g.NewSpectral(), g.NewSpectral()
			avx, avy := g.NewSpectral(), g.NewSpectral()
			s.Apply(aux, auy, ux, uy)
			s.Apply(avx, avy, vx, vy)
			vau, avu := vvDot(g, vx, vy, aux, auy), vvDot(g, avx, avy, ux, uy)
			scale := vvNorm(g, vx, vy)*vvNorm(g, aux, auy) + vvNorm(g, avx, avy)*vvNorm(g, ux, uy)
			if d := math.Abs(vau - avu); !(d <= rt*scale) {
				t.Errorf("%s: ⟨v,Au⟩ = %.17g, ⟨Av,u⟩ = %.17g: asymmetry %.3g > %.3g", c.name, vau, avu, d, rt*scale)
			}
			t.Logf("%s: asymmetry %.2g of scale %.3g (allowed %.2g)", c.name, math.Abs(vau-avu)/scale, scale, rt)
			uau := vvDot(g, ux, uy, aux, auy)
			var lower, upper, mm float64
			nk, k2 := g.Nkx(), g.K2()
			for j := 0; j < g.Ny; j++ {
				for i := 0; i < nk; i++ {
					idx := j*nk + i
					a, b := ux[idx], uy[idx]
					w := g.Weight(i) * (real(a)*real(a) + imag(a)*imag(a) + real(b)*real(b) + imag(b)*imag(b))
					d := vvDamp(c.m, math.Sqrt(k2[idx]))
					lower += w * (lo*k2[idx] + d)
					upper += w * (hi*k2[idx] + d)
					mm += w * (bar*k2[idx] + d)
				}
			}
			if !(uau >= lower*(1-rt) && uau <= upper*(1+rt)) {
				t.Errorf("%s: ⟨u,Au⟩ = %.6g outside [%.6g, %.6g]", c.name, uau, lower, upper)
			}
			q := uau / mm
			if qlo, qhi := math.Min(1, lo/bar), math.Max(1, hi/bar); !(q >= qlo*(1-rt) && q <= qhi*(1+rt)) {
				t.Errorf("%s: preconditioned quotient %.6g outside [%.6g, %.6g]", c.name, q, qlo, qhi)
			}
		}
	}
}

// TestVarSolverPowerBalance: power in equals dissipation, ⟨f·u⟩ =
// ⟨2η_m E:E⟩ + Σ_k Γ|û_k|² + ξ⟨|u|²⟩ (MODEL.md §3), with the dissipation
// evaluated independently of the solver's operator (full strain rate from
// Grid.Dx/Dy, see vvDissipation). For the solver's u, ⟨f·u⟩ = ⟨u, Pf⟩ and
// the dissipation is ⟨u, Au⟩, so they differ by ⟨u, r⟩: allowed
// ‖u‖·‖r‖ = ‖u‖·residual·‖Pf‖ (≤ ‖u‖·residual·‖f‖) plus the round-off
// of the dissipation's transforms, 8·vvFFTTol of it. (The measured
// difference is far smaller: CG keeps r_k orthogonal to the directions that
// built x_k, so ⟨u, r⟩ vanishes up to round-off from a cold start.)
func TestVarSolverPowerBalance(t *testing.T) {
	g := vvGrid(t, 64, 64, 1, 1)
	p := vvPlan(t, g, "")
	eta := vvDomainEta(g, 30)
	fx, fy := vvSmoothForce(g, p, 4, 2*math.Pi*10)
	for _, c := range vvMembranes() {
		for _, tol := range []float64{1e-6, 1e-11} {
			s := vvVarSolver(t, p, c.m, flow.PCGOptions{Tolerance: tol})
			if err := s.SetViscosity(eta); err != nil {
				t.Fatal(err)
			}
			ux, uy := g.NewSpectral(), g.NewSpectral()
			res, err := s.Solve(ux, uy, fx, fy)
			if err != nil {
				t.Fatal(err)
			}
			in := vvDot(g, fx, fy, ux, uy)
			diss := vvDissipation(g, p, eta, ux, uy) + vvTractionPower(g, c.m, ux, uy)
			allowed := vvNorm(g, ux, uy)*res.Residual*vvNorm(g, fx, fy) + 8*vvFFTTol(g.RealLen())*diss
			t.Logf("%s tol %g: power in %.10g, dissipated %.10g, |diff| %.2g (allowed %.2g), %d iterations",
				c.name, tol, in, diss, math.Abs(in-diss), allowed, res.Iterations)
			if !(math.Abs(in-diss) <= allowed) {
				t.Errorf("%s tol %g: power in %.12g ≠ dissipation %.12g: |diff| %.3g > %.3g", c.name, tol, in, diss, math.Abs(in-diss), allowed)
			}
		}
	}
}

// TestVarSolverNotConverged: a tiny iteration cap at a contrast of about 77
// (phase ratio 100, disks too small on this grid to reach φ = +1) returns
// a *ConvergenceError carrying the iterations done, the residual reached,
// the tolerance and the contrast, and the result agrees with it.
func TestVarSolverNotConverged(t *testing.T) {
	g := vvGrid(t, 32, 32, 1, 1)
	p := vvPlan(t, g, "")
	eta := vvDomainEta(g, 100)
	s := vvVarSolver(t, p, vvMembranes()[0].m, flow.PCGOptions{Tolerance: 1e-10, MaxIterations: 3})
	if err := s.SetViscosity(eta); err != nil {
		t.Fatal(err)
	}
	fx, fy := vvSmoothForce(g, p, 4, 2*math.Pi*6)
	ux, uy := g.NewSpectral(), g.NewSpectral()
	res, err := s.Solve(ux, uy, fx, fy)
	var ce *flow.ConvergenceError
	if !errors.As(err, &ce) {
		t.Fatalf("Solve with 3 iterations at contrast 100: err = %v, want *ConvergenceError", err)
	}
	if ce.Iterations != 3 || res.Iterations != 3 {
		t.Errorf("iterations: error %d, result %d, want 3", ce.Iterations, res.Iterations)
	}
	if !(ce.Residual > ce.Tolerance) || ce.Residual != res.Residual {
		t.Errorf("residual %g (result %g) should exceed tolerance %g", ce.Residual, res.Residual, ce.Tolerance)
	}
	if ce.Tolerance != 1e-10 {
		t.Errorf("tolerance %g, want 1e-10", ce.Tolerance)
	}
	if want := flow.ViscosityContrast(eta); ce.Contrast != want || !(want > 50) {
		t.Errorf("contrast %g, want %g", ce.Contrast, want)
	}
	for _, part := range []string{"did not converge", "3 iterations", "tolerance 1e-10", fmt.Sprintf("contrast %.3g", ce.Contrast)} {
		if !strings.Contains(err.Error(), part) {
			t.Errorf("message %q lacks %q", err, part)
		}
	}
	t.Log(err)
	// A failed solve is not a warm start: with a larger cap the next solve
	// starts from zero and converges.
	s2 := vvVarSolver(t, p, vvMembranes()[0].m, flow.PCGOptions{Tolerance: 1e-10})
	if err := s2.SetViscosity(eta); err != nil {
		t.Fatal(err)
	}
	if _, err := s2.Solve(ux, uy, fx, fy); err != nil {
		t.Fatal(err)
	}
}

// TestVarSolverNonFiniteForce: a NaN in the force stops the solve at once
// with a *ConvergenceError whose residual is NaN (not after the cap), and
// the next solve, with a finite force, starts from zero and succeeds.
func TestVarSolverNonFiniteForce(t *testing.T) {
	g := vvGrid(t, 16, 16, 1, 1)
	p := vvPlan(t, g, "")
	s := vvVarSolver(t, p, vvMembranes()[2].m, flow.PCGOptions{})
	if err := s.SetViscosity(vvDomainEta(g, 10)); err != nil {
		t.Fatal(err)
	}
	fx, fy := vvSmoothForce(g, p, 4, 2*math.Pi*3)
	ux, uy := g.NewSpectral(), g.NewSpectral()
	bad := append([]complex128(nil), fx...)
	bad[5] = complex(math.NaN(), 0)
	res, err := s.Solve(ux, uy, bad, fy)
	var ce *flow.ConvergenceError
	if !errors.As(err, &ce) || !math.IsNaN(ce.Residual) || res.Iterations > 1 {
		t.Fatalf("NaN force: err %v, result %+v; want a ConvergenceError with NaN residual within 1 iteration", err, res)
	}
	if !strings.Contains(err.Error(), "not finite") {
		t.Errorf("message %q should say the values are not finite", err)
	}
	if _, err := s.Solve(ux, uy, fx, fy); err != nil {
		t.Fatalf("finite force after a NaN one: %v", err)
	}
}

// TestVarSolverWarmStart: a repeated solve starts from the last velocity
// and needs no iteration; a slightly changed force needs fewer iterations
// than a cold start; SetGuess with the answer needs none; ColdStart and
// ResetGuess restore the cold count. Every answer meets the tolerance.
func TestVarSolverWarmStart(t *testing.T) {
	g := vvGrid(t, 48, 48, 1, 1)
	p := vvPlan(t, g, "")
	eta := vvDomainEta(g, 30)
	m := vvMembranes()[1].m
	mk := func(cold bool) *flow.VarSolver {
		s := vvVarSolver(t, p, m, flow.PCGOptions{Tolerance: 1e-9, ColdStart: cold})
		if err := s.SetViscosity(eta); err != nil {
			t.Fatal(err)
		}
		return s
	}
	fx, fy := vvSmoothForce(g, p, 4, 2*math.Pi*6)
	gx, gy := vvSmoothForce(g, p, 5, 2*math.Pi*6)
	hx, hy := g.NewSpectral(), g.NewSpectral()
	for i := range hx {
		hx[i], hy[i] = fx[i]+1e-3*gx[i], fy[i]+1e-3*gy[i]
	}
	ux, uy := g.NewSpectral(), g.NewSpectral()
	solve := func(s *flow.VarSolver, ax, ay []complex128) int {
		t.Helper()
		r, err := s.Solve(ux, uy, ax, ay)
		if err != nil {
			t.Fatal(err)
		}
		return r.Iterations
	}
	s := mk(false)
	cold := solve(s, fx, fy)
	sol := [2][]complex128{append([]complex128(nil), ux...), append([]complex128(nil), uy...)}
	if n := solve(s, fx, fy); n != 0 {
		t.Errorf("repeated solve: %d iterations, want 0", n)
	}
	if n := solve(s, hx, hy); !(n < cold) {
		t.Errorf("perturbed force from warm start: %d iterations, cold %d", n, cold)
	} else {
		t.Logf("cold %d iterations; warm start after a 1e-3 change of the force: %d", cold, n)
	}
	s.SetGuess(sol[0], sol[1])
	if n := solve(s, fx, fy); n != 0 {
		t.Errorf("SetGuess(answer): %d iterations, want 0", n)
	}
	s.ResetGuess()
	if n := solve(s, fx, fy); n != cold {
		t.Errorf("after ResetGuess: %d iterations, want the cold %d", n, cold)
	}
	sc := mk(true)
	solve(sc, fx, fy)
	if n := solve(sc, fx, fy); n != cold {
		t.Errorf("ColdStart: %d iterations, want %d", n, cold)
	}
}

// TestVarSolverAllocs: Solve, SetViscosity, Apply, SetGuess and
// ViscosityLaw.Fill allocate nothing (the constructor owns all scratch).
func TestVarSolverAllocs(t *testing.T) {
	g := vvGrid(t, 32, 32, 1, 1)
	for _, b := range spectral.Backends() {
		p := vvPlan(t, g, b)
		s := vvVarSolver(t, p, vvMembranes()[2].m, flow.PCGOptions{ColdStart: true})
		eta := vvDomainEta(g, 10)
		fx, fy := vvSmoothForce(g, p, 4, 2*math.Pi*6)
		ux, uy := g.NewSpectral(), g.NewSpectral()
		law := flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: 3, PhaseB: 1}
		phi := vvDomainPhi(g, 2, 4, 0.1, 0.2, 0.02)
		for name, f := range map[string]func(){
			"Solve": func() {
				if _, err := s.Solve(ux, uy, fx, fy); err != nil {
					t.Fatal(err)
				}
			},
			"SetViscosity": func() {
				if err := s.SetViscosity(eta); err != nil {
					t.Fatal(err)
				}
			},
			"Apply":    func() { s.Apply(ux, uy, fx, fy) },
			"SetGuess": func() { s.SetGuess(fx, fy) },
			"Fill":     func() { law.Fill(eta, phi) },
		} {
			if a := testing.AllocsPerRun(5, f); a != 0 {
				t.Errorf("%s: %s allocates %v times per call", b, name, a)
			}
		}
	}
}

// TestVarSolverBadInput: invalid options, membranes and viscosity fields
// are errors naming the value and the valid range; a rejected field leaves
// the solver unchanged; wrong lengths panic.
func TestVarSolverBadInput(t *testing.T) {
	g := vvGrid(t, 16, 16, 1, 1)
	p := vvPlan(t, g, "")
	m := vvMembranes()[0].m
	for _, c := range []struct {
		opt  flow.PCGOptions
		want string
	}{
		{flow.PCGOptions{Tolerance: -1e-3}, "tolerance = -0.001"},
		{flow.PCGOptions{Tolerance: 1}, "[0, 1)"},
		{flow.PCGOptions{Tolerance: math.NaN()}, "NaN"},
		{flow.PCGOptions{MaxIterations: -2}, "iteration cap = -2"},
		{flow.PCGOptions{Mean: 7}, "mean = 7"},
	} {
		if _, err := flow.NewVarSolver(p, m, c.opt); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("options %+v: err %v, want one containing %q", c.opt, err, c.want)
		}
	}
	if _, err := flow.NewVarSolver(p, flow.Membrane{Viscosity: -1}, flow.PCGOptions{}); err == nil {
		t.Error("negative membrane viscosity accepted")
	}
	s := vvVarSolver(t, p, m, flow.PCGOptions{})
	if o := s.Options(); o.Tolerance != flow.DefaultPCGTolerance || o.MaxIterations != flow.DefaultPCGMaxIterations {
		t.Errorf("defaults not filled in: %+v", o)
	}
	eta := vvDomainEta(g, 5)
	if err := s.SetViscosity(eta); err != nil {
		t.Fatal(err)
	}
	before := s.Contrast()
	for _, v := range []float64{0, -2, math.NaN(), math.Inf(1)} {
		bad := append([]float64(nil), eta...)
		bad[3*g.Nx+7] = v
		err := s.SetViscosity(bad)
		if err == nil || !strings.Contains(err.Error(), "(7, 3)") || !strings.Contains(err.Error(), "> 0") {
			t.Errorf("viscosity %g at (7, 3): err %v", v, err)
		}
		if s.Contrast() != before {
			t.Errorf("rejected field changed the solver")
		}
	}
	mustPanic := func(name string, f func()) {
		t.Helper()
		defer func() {
			if recover() == nil {
				t.Errorf("%s did not panic", name)
			}
		}()
		f()
	}
	short := make([]complex128, 3)
	ok := g.NewSpectral()
	mustPanic("Solve", func() { s.Solve(short, ok, ok, ok) })
	mustPanic("Apply", func() { s.Apply(ok, ok, ok, short) })
	mustPanic("SetViscosity", func() { s.SetViscosity(make([]float64, 5)) })
	mustPanic("Viscosity", func() { s.Viscosity(make([]float64, 5)) })
}

// TestVarSolverIterationBound: PCG minimises the A-norm error, with
// ‖e_k‖_A ≤ 2ρ^k‖e_0‖_A, ρ = (√κ−1)/(√κ+1) ≤ exp(−2/√κ), κ ≤ contrast the
// condition number of the preconditioned operator [Hestenes & Stiefel,
// J. Res. Natl. Bur. Stand. 49, 409 (1952); the ρ bound is the standard
// Chebyshev estimate, memory]. The stopping test is on ‖r‖₂ =
// ‖e‖_{A²} ≤ sqrt(λ_max)‖e‖_A and ‖e_0‖_A ≤ ‖b‖/sqrt(λ_min), so a cold
// solve needs at most (√κ/2) ln(2 sqrt(λ_max/λ_min)/tol) iterations. The
// bound grows like sqrt(contrast); the fitted exponent is logged.
func TestVarSolverIterationBound(t *testing.T) {
	g := vvGrid(t, 64, 64, 1, 1)
	p := vvPlan(t, g, "")
	fx, fy := vvSmoothForce(g, p, 5, 2*math.Pi*8)
	const tol = 1e-8
	for _, c := range []struct {
		name string
		m    flow.Membrane
	}{vvMembranes()[0], vvMembranes()[2], {"friction-dominated", flow.Membrane{Viscosity: 1, Friction: 1e4}}} {
		var cs, its []float64
		for _, contrast := range []float64{3, 10, 30, 100} {
			s := vvVarSolver(t, p, c.m, flow.PCGOptions{Tolerance: tol, ColdStart: true})
			eta := vvDomainEta(g, contrast)
			if err := s.SetViscosity(eta); err != nil {
				t.Fatal(err)
			}
			ux, uy := g.NewSpectral(), g.NewSpectral()
			res, err := s.Solve(ux, uy, fx, fy)
			if err != nil {
				t.Fatal(err)
			}
			lo, hi := s.ViscosityRange()
			lamMax := 0.0
			for _, k2 := range g.K2() {
				lamMax = math.Max(lamMax, hi*k2+vvDamp(c.m, math.Sqrt(k2)))
			}
			kappa := hi / lo
			bound := math.Ceil(math.Sqrt(kappa) / 2 * math.Log(2*math.Sqrt(lamMax/vvLambdaMin(g, c.m, lo))/tol))
			t.Logf("%s contrast %.3g: %d iterations (bound %.0f)", c.name, kappa, res.Iterations, bound)
			if float64(res.Iterations) > bound {
				t.Errorf("%s contrast %.3g: %d iterations > CG bound %.0f", c.name, kappa, res.Iterations, bound)
			}
			cs, its = append(cs, kappa), append(its, float64(res.Iterations))
		}
		t.Logf("%s: iterations ∝ contrast^%.2f (least-squares fit, contrasts 3–100)", c.name, vvLogSlope(cs, its))
	}
}

// TestVarSolverMeanScaleInvariance: without subphase and friction the
// preconditioner is η̄ times a fixed operator, and PCG's iterates do not
// depend on a constant factor of the preconditioner, so every choice of
// η̄ gives the same iterations (±1 for round-off at the threshold) and the
// same velocity within the solver bound ‖r‖/λ_min of each.
func TestVarSolverMeanScaleInvariance(t *testing.T) {
	g := vvGrid(t, 48, 48, 1, 1)
	p := vvPlan(t, g, "")
	eta := vvDomainEta(g, 30)
	fx, fy := vvSmoothForce(g, p, 6, 2*math.Pi*6)
	m := vvMembranes()[0].m
	var refIt int
	var refX, refY []complex128
	var refRes float64
	for _, mean := range []flow.ViscosityMean{flow.GeometricMean, flow.ArithmeticMean, flow.HarmonicMean, flow.ExtremesMean} {
		s := vvVarSolver(t, p, m, flow.PCGOptions{Tolerance: 1e-10, Mean: mean})
		if err := s.SetViscosity(eta); err != nil {
			t.Fatal(err)
		}
		ux, uy := g.NewSpectral(), g.NewSpectral()
		res, err := s.Solve(ux, uy, fx, fy)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%s: η̄ = %.4g, %d iterations", mean, s.PreconditionerViscosity(), res.Iterations)
		if refX == nil {
			refIt, refX, refY, refRes = res.Iterations, ux, uy, res.Residual
			continue
		}
		if d := res.Iterations - refIt; d < -1 || d > 1 {
			t.Errorf("%s: %d iterations, geometric %d", mean, res.Iterations, refIt)
		}
		dx, dy := g.NewSpectral(), g.NewSpectral()
		for i := range dx {
			dx[i], dy[i] = ux[i]-refX[i], uy[i]-refY[i]
		}
		lo, _ := s.ViscosityRange()
		bound := (res.Residual + refRes) * vvNorm(g, fx, fy) / vvLambdaMin(g, m, lo)
		if d := vvNorm(g, dx, dy); !(d <= bound) {
			t.Errorf("%s: velocity differs from geometric by %.3g > %.3g", mean, d, bound)
		}
	}
}
