package fields_test

import (
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// TestETDRK4Coefficients checks the contour-integral coefficients against
// independent evaluations of the closed forms of Cox & Matthews [J.
// Comput. Phys. 176, 430 (2002), eq. (26)]: directly for |z| ≥ 1 (z = Lh),
// where their cancellation costs at most a factor 20 of ε, and for |z| < 1
// through the Taylor series of the φ-functions φ_k(z) = Σ_j z^j/(j+k)!,
// with f1/h = φ₁ − 3φ₂ + 4φ₃, f2/h = φ₂ − 2φ₃, f3/h = −φ₂ + 4φ₃ and
// q/h = φ₁(z/2)/2 [practice; the standard φ-function form of the same
// coefficients]. Tolerance 64ε relative: 20ε for the cancellation of the
// reference, a few ε for the contour mean (measured 4.8·10⁻¹⁵ ≈ 22ε).
func TestETDRK4Coefficients(t *testing.T) {
	series := func(k int, z float64) float64 {
		var s, term float64 = 0, 1
		for j := 1; j <= k; j++ {
			term /= float64(j)
		}
		for j := 0; j < 40; j++ {
			s += term
			term *= z / float64(j+k+1)
		}
		return s
	}
	const h = 0.1
	var worst float64
	for _, z := range []float64{-1e4, -100, -10, -2, -1, -0.5, -1e-3, -1e-9, 0, 1e-9, 0.3, 1, 5} {
		e, e2, q, f1, f2, f3 := fields.Coef(z/h, h)
		var want []float64
		if math.Abs(z) >= 1 {
			ez, z3 := math.Exp(z), z*z*z
			want = []float64{ez, math.Exp(z / 2), h * (math.Exp(z/2) - 1) / z,
				h * (-4 - z + ez*(4-3*z+z*z)) / z3, h * (2 + z + ez*(z-2)) / z3, h * (-4 - 3*z - z*z + ez*(4-z)) / z3}
		} else {
			p1, p2, p3 := series(1, z), series(2, z), series(3, z)
			want = []float64{math.Exp(z), math.Exp(z / 2), h * series(1, z/2) / 2,
				h * (p1 - 3*p2 + 4*p3), h * (p2 - 2*p3), h * (-p2 + 4*p3)}
		}
		for i, got := range []float64{e, e2, q, f1, f2, f3} {
			d := math.Abs(got - want[i])
			if want[i] != 0 {
				d /= math.Abs(want[i])
			}
			worst = math.Max(worst, d)
			if !(d <= 64*eps) {
				t.Errorf("z = %g: coefficient %d = %.16g, want %.16g (relative %.1e)", z, i, got, want[i], d)
			}
		}
	}
	t.Logf("largest relative difference %.1e", worst)
}

// activeParams returns parameters of an active run with every coupling on.
func activeParams(model fields.InclusionModel, m int) fields.Params {
	p := baseParams(32, 24, 2*math.Pi, 5, 0.01)
	p.Inclusions = fields.Inclusions{Model: model, Harmonics: m, Activity: -3, Alignment: 0.8,
		TransDiffusion: 0.05, RotDiffusion: 0.1, Partition: 0.7}
	p.Lipid = fields.Lipid{Model: fields.CahnHilliard, Mobility: 0.2, Interface: 0.3, Energy: 0.5, Backreaction: true}
	return p
}

// TestConservation: the advective, drift, propulsion and Cahn–Hilliard
// terms are divergences, whose k = 0 coefficient the discretisation
// computes as exactly zero, and L(0) = 0 gives e^{L h} = 1 exactly, so ⟨c⟩
// and ⟨φ⟩ are conserved to round-off; the bound allows ε per step.
func TestConservation(t *testing.T) {
	for _, c := range []struct {
		model fields.InclusionModel
		speed float64
	}{{fields.Moments, 0}, {fields.Kinetic, 0.5}} {
		p := activeParams(c.model, 4)
		p.Inclusions.Speed = c.speed
		p.Stepping.Fixed = false
		r := newRig(t, p)
		rng := rand.New(rand.NewPCG(1, 2))
		if err := r.m.InitIsotropic(0.3, rng); err != nil {
			t.Fatal(err)
		}
		if err := r.m.InitLipidRandom(0.1, 0.5, rng); err != nil {
			t.Fatal(err)
		}
		d0 := r.diag(t)
		const steps = 300
		r.run(t, steps)
		d := r.diag(t)
		t.Logf("%v: ⟨c⟩ − 1 = %.3g, ⟨φ⟩ change %.3g after t = %.3g, order %.3g, KE %.3g",
			c.model, d.MeanDensity-1, d.LipidMean-d0.LipidMean, d.Time, d.Order, d.KineticEnergy)
		if math.Abs(d.MeanDensity-1) > steps*eps || math.Abs(d.LipidMean-d0.LipidMean) > steps*eps {
			t.Errorf("%v: ⟨c⟩ = 1%+.3g, ⟨φ⟩ changed by %.3g", c.model, d.MeanDensity-1, d.LipidMean-d0.LipidMean)
		}
	}
}

// TestPowerBalance: in Stokes flow the power of the force equals the
// dissipation, ⟨f·u⟩ = ⟨2η_m E:E⟩ + Σ_k Γ|û_k|² + ξ⟨|u|²⟩ (MODEL.md §3,
// energy check). The two sides are computed by different routes (f̂·û*
// against the strain rate and the subphase tractions), mode by mode with a
// few ε of round-off each, and every mode's contribution is ≥ 0, so the
// sums agree to a few ε relative; tolerance 64ε.
func TestPowerBalance(t *testing.T) {
	mems := map[string]flow.Membrane{
		"deep": deep, "wall": wall,
		"slip+friction": {Viscosity: 1, Friction: 0.3, Upper: flow.Subphase{Kind: flow.Slip, Viscosity: 2, Depth: 0.5}},
		"friction only": {Viscosity: 1, Friction: 2},
		"none":          {Viscosity: 1},
	}
	for name, mem := range mems {
		for _, model := range []fields.InclusionModel{fields.Moments, fields.Kinetic} {
			p := activeParams(model, 4)
			p.Membrane = mem
			r := newRig(t, p)
			rng := rand.New(rand.NewPCG(3, 4))
			if err := r.m.InitIsotropic(0.4, rng); err != nil {
				t.Fatal(err)
			}
			if err := r.m.InitLipidRandom(0, 0.8, rng); err != nil {
				t.Fatal(err)
			}
			d := r.diag(t)
			in := d.ActivePower + d.InterfacePower
			e := relErr(in, d.Dissipation)
			t.Logf("%s/%v: relative imbalance %.1e", name, model, e)
			if e > 64*eps || d.Dissipation <= 0 || d.InterfacePower == 0 {
				t.Errorf("%s/%v: power %.17g (active %g, interface %g), dissipation %.17g, relative %.1e",
					name, model, in, d.ActivePower, d.InterfacePower, d.Dissipation, e)
			}
		}
	}
}

// TestKineticTwoHarmonicsIsTruncatedMoments: with V₀ = 0 the modes n = 0, 2
// of the kinetic model with M = 2 obey exactly the moment equations with
// the truncation closure m₄ = 0 (MODEL.md §2.2; the n = 1 modes are
// evolved but do not feed back), and both use the same time
// discretisation, so the two runs agree to round-off. The bound: 10⁻¹²
// relative to the field's size after 100 steps of a chaotic-free, smooth
// run (measured ≈ 10⁻¹⁴; round-off grows at most like steps·ε·(1 + s·t)).
func TestKineticTwoHarmonicsIsTruncatedMoments(t *testing.T) {
	run := func(model fields.InclusionModel) *fields.Model {
		p := activeParams(model, 2)
		p.Lipid = fields.Lipid{Model: fields.Passive, Diffusivity: 0.05}
		r := newRig(t, p)
		rng := rand.New(rand.NewPCG(5, 6))
		if err := r.m.InitIsotropic(0.3, rng); err != nil {
			t.Fatal(err)
		}
		if err := r.m.InitLipidRandom(0, 0.5, rng); err != nil {
			t.Fatal(err)
		}
		r.run(t, 100)
		r.views(t)
		return r.m
	}
	mo, ki := run(fields.Moments), run(fields.Kinetic)
	view := func(m *fields.Model, name string) []float64 {
		for _, v := range m.Views() {
			if v.Name == name {
				return v.Data
			}
		}
		t.Fatalf("no view %q", name)
		return nil
	}
	for _, name := range []string{"c", "Q11", "Q12", "phi", "ux", "vorticity"} {
		a, b := view(mo, name), view(ki, name)
		var d, s float64
		for i := range a {
			d = math.Max(d, math.Abs(a[i]-b[i]))
			s = math.Max(s, math.Abs(a[i]))
		}
		t.Logf("%s: max |moments − kinetic| = %.2e of max %.3g", name, d, s)
		if d > 1e-12*s {
			t.Errorf("%s: moment and kinetic (M = 2) runs differ by %.2e (max %.3g)", name, d, s)
		}
	}
}

// TestKineticRHSMatchesSmoluchowski evaluates the explicit right-hand side
// of the Smoluchowski equation (MODEL.md §2.1)
//
//	∂tΨ = −∇·(uΨ) − V₀ p·∇Ψ − ∂θ[(ω/2 + β p⊥·E·p)Ψ] + …
//
// independently of the angular-mode algebra: Ψ is sampled on 64 angles,
// each term is formed pointwise in θ (p⊥·E·p = −E₁₁ sin 2θ + E₁₂ cos 2θ)
// and projected onto e^{inθ} by the trapezoid rule (exact here: every
// integrand is a trigonometric polynomial of degree < 64 in θ, and
// ∫e^{inθ}(−∂θF)dθ = in F_n by parts). The flow is solved from
// Q = (a₂/2, b₂/2) with flow.Solver. Both sides share the same grid
// products, so they agree to round-off: tolerance 10⁻¹² of the largest
// coefficient (measured ≈ 10⁻¹⁵).
func TestKineticRHSMatchesSmoluchowski(t *testing.T) {
	const M, V0, beta, sigma = 6, 0.7, 0.6, -1.5
	p := baseParams(16, 12, 2*math.Pi, 4, 0.01)
	p.Inclusions = fields.Inclusions{Model: fields.Kinetic, Harmonics: M, Activity: sigma, Alignment: beta, Speed: V0}
	r := newRig(t, p)
	if err := r.m.InitIsotropic(0.2, rand.New(rand.NewPCG(7, 8))); err != nil {
		t.Fatal(err)
	}
	got := r.m.RHS(0)
	m := r.m
	g := m.Grid()
	plan := r.plan
	nr := g.RealLen()
	// Real-space modes a_n, b_n (a₀ = c, b₀ = 0).
	a, b := make([][]float64, M+1), make([][]float64, M+1)
	for n := 0; n <= M; n++ {
		a[n], b[n] = g.NewReal(), g.NewReal()
		if n == 0 {
			plan.Inverse(a[0], m.Spectral(0))
			continue
		}
		plan.Inverse(a[n], m.Spectral(2*n-1))
		plan.Inverse(b[n], m.Spectral(2*n))
	}
	// Flow from the active stress σ ∇·Q.
	q11, q12 := g.NewSpectral(), g.NewSpectral()
	for i, v := range m.Spectral(3) {
		q11[i] = v / 2
		q12[i] = m.Spectral(4)[i] / 2
	}
	fx, fy, tmp := g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
	g.Dx(fx, q11)
	g.Dy(tmp, q12)
	for i := range fx {
		fx[i] = complex(sigma, 0) * (fx[i] + tmp[i])
	}
	g.Dx(fy, q12)
	g.Dy(tmp, q11)
	for i := range fy {
		fy[i] = complex(sigma, 0) * (fy[i] - tmp[i])
	}
	solver, err := flow.NewSolver(g, p.Membrane)
	if err != nil {
		t.Fatal(err)
	}
	solver.Solve(fx, fy, fx, fy)
	real := func(s []complex128) []float64 { out := g.NewReal(); plan.Inverse(out, s); return out }
	ux, uy := real(fx), real(fy)
	dxu, dyu, dxv, dyv := g.NewSpectral(), g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
	g.Dx(dxu, fx)
	g.Dy(dyu, fx)
	g.Dx(dxv, fy)
	g.Dy(dyv, fy)
	uxx, uxy, uyx := real(dxu), real(dyu), real(dxv)
	// Reference projections: want[n] = (real part, imaginary part) spectra.
	const nth = 64
	wantA, wantB := make([][]complex128, M+1), make([][]complex128, M+1)
	rotA, rotB := make([][]float64, M+1), make([][]float64, M+1)
	for n := range wantA {
		wantA[n], wantB[n] = g.NewSpectral(), g.NewSpectral()
		rotA[n], rotB[n] = g.NewReal(), g.NewReal()
	}
	psi, flux := g.NewReal(), g.NewReal()
	ps, px, py, dv := g.NewSpectral(), g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
	w := 2 * math.Pi / nth
	for j := 0; j < nth; j++ {
		th := w * float64(j)
		ct, st := math.Cos(th), math.Sin(th)
		for i := 0; i < nr; i++ {
			s := a[0][i]
			for n := 1; n <= M; n++ {
				s += 2 * (a[n][i]*math.Cos(float64(n)*th) + b[n][i]*math.Sin(float64(n)*th))
			}
			psi[i] = s / (2 * math.Pi)
		}
		// Spatial terms: −∇·(uΨ) − V₀ p·∇Ψ.
		plan.Forward(ps, psi)
		g.Dx(px, ps)
		g.Dy(py, ps)
		for i := range flux {
			flux[i] = ux[i] * psi[i]
		}
		plan.Forward(dv, flux)
		g.Dx(dv, dv)
		for i := range flux {
			flux[i] = uy[i] * psi[i]
		}
		plan.Forward(tmp, flux)
		g.Dy(tmp, tmp)
		for n := 0; n <= M; n++ {
			cn, sn := w*math.Cos(float64(n)*th), w*math.Sin(float64(n)*th)
			for i := range dv {
				sp := -dv[i] - tmp[i] - complex(V0, 0)*(complex(ct, 0)*px[i]+complex(st, 0)*py[i])
				wantA[n][i] += complex(cn, 0) * sp
				wantB[n][i] += complex(sn, 0) * sp
			}
		}
		// Rotation: F = θ̇Ψ; its projection contributes i n F_n.
		for i := 0; i < nr; i++ {
			e11, e12 := uxx[i], (uxy[i]+uyx[i])/2
			om := uyx[i] - uxy[i]
			f := (om/2 + beta*(-e11*math.Sin(2*th)+e12*math.Cos(2*th))) * psi[i]
			for n := 1; n <= M; n++ {
				rotA[n][i] -= float64(n) * w * math.Sin(float64(n)*th) * f
				rotB[n][i] += float64(n) * w * math.Cos(float64(n)*th) * f
			}
		}
	}
	for n := 1; n <= M; n++ {
		plan.Forward(tmp, rotA[n])
		for i := range tmp {
			wantA[n][i] += tmp[i]
		}
		plan.Forward(tmp, rotB[n])
		for i := range tmp {
			wantB[n][i] += tmp[i]
		}
	}
	var scale, maxd float64
	check := func(name string, gotF, want []complex128) {
		for i := range want {
			if g.Kept(i) {
				scale = math.Max(scale, cmplx.Abs(want[i]))
				maxd = math.Max(maxd, cmplx.Abs(gotF[i]-want[i]))
			}
		}
	}
	check("c", got[0], wantA[0])
	for n := 1; n <= M; n++ {
		check("a", got[2*n-1], wantA[n])
		check("b", got[2*n], wantB[n])
	}
	t.Logf("max |N − reference| = %.2e of max %.3g", maxd, scale)
	if maxd > 1e-12*scale || scale == 0 {
		t.Errorf("kinetic RHS differs from the θ-collocation reference by %.2e (scale %.3g)", maxd, scale)
	}
}

// TestValidate names the offending field and the valid range.
func TestValidate(t *testing.T) {
	good := activeParams(fields.Kinetic, 4)
	if err := good.Validate(); err != nil {
		t.Fatalf("valid parameters rejected: %v", err)
	}
	cases := []struct {
		mod  func(p *fields.Params)
		want string
	}{
		{func(p *fields.Params) { p.Inclusions.Harmonics = 1 }, "Inclusions.Harmonics = 1: must be in [2, 128]"},
		{func(p *fields.Params) { p.Inclusions.Alignment = 1.5 }, "Inclusions.Alignment = 1.5: must be in [−1, 1]"},
		{func(p *fields.Params) { p.Inclusions.Model = fields.Moments; p.Inclusions.Speed = 1 }, "Inclusions.Speed = 1 ℓ₀/τ₀: must be 0 for the moment model"},
		{func(p *fields.Params) { p.Inclusions.RotDiffusion = -1 }, "Inclusions.RotDiffusion = -1 1/τ₀"},
		{func(p *fields.Params) { p.Lipid.Interface = 0 }, "Lipid.Interface = 0 ℓ₀: must be finite and > 0"},
		{func(p *fields.Params) { p.Lipid = fields.Lipid{} }, "Inclusions.Partition = 0.7: needs a lipid model"},
		{func(p *fields.Params) { p.Lipid.Model = fields.Passive }, "Lipid.Backreaction = true: needs the cahn-hilliard lipid model"},
		{func(p *fields.Params) { p.Grid.Nx = 7 }, "Grid: spectral: grid nx = 7"},
		{func(p *fields.Params) { p.Stepping.DtMin = 1 }, "Stepping.DtMin = 1 τ₀: must be in (0, DtMax = 0.01]"},
		{func(p *fields.Params) { p.Stepping.Courant = 3 }, "Stepping.Courant = 3: must be in (0, 2]"},
		{func(p *fields.Params) { p.Membrane.Viscosity = 0 }, "Membrane: membrane viscosity = 0"},
		{func(p *fields.Params) {
			p.Inclusions.Model = fields.NoInclusions
			p.Lipid.Model = fields.NoLipid
			p.Lipid.Backreaction = false
		}, "nothing to evolve"},
	}
	for _, c := range cases {
		p := good
		c.mod(&p)
		err := p.Validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("error %v, want it to contain %q", err, c.want)
		}
	}
}

// TestNonFinite: bad input data and a corrupted state are reported with
// the field, step and grid point.
func TestNonFinite(t *testing.T) {
	r := newRig(t, activeParams(fields.Moments, 0))
	data := r.m.Grid().NewReal()
	data[5*r.m.Grid().Nx+3] = math.NaN()
	var nf *fields.NonFiniteError
	if err := r.m.SetFromReal("Q12", data); !errors.As(err, &nf) || nf.Field != "Q12" || nf.I != 3 || nf.J != 5 {
		t.Errorf("SetFromReal: error %v, want a NonFiniteError for Q12 at (3, 5)", err)
	}
	r.run(t, 3)
	r.m.Spectral(field(t, r.m, "phi"))[7] = complex(math.Inf(1), 0)
	_, err := r.s.Step()
	if !errors.As(err, &nf) || nf.Field != "phi" || nf.Step != 3 {
		t.Errorf("Step: error %v, want a NonFiniteError for phi after step 3", err)
	}
	if r.m.Steps() != 3 {
		t.Errorf("a failed step advanced the step count to %d", r.m.Steps())
	}
}

// TestStepAllocatesNothing: Step, Diagnostics and UpdateViews allocate
// nothing (testing.AllocsPerRun), with every coupling on and the
// coefficient cache forced to recompute.
func TestStepAllocatesNothing(t *testing.T) {
	for _, model := range []fields.InclusionModel{fields.Moments, fields.Kinetic} {
		p := activeParams(model, 4)
		p.Stepping.Fixed = false
		p.Stepping.CacheSize = 1
		r := newRig(t, p)
		if err := r.m.InitIsotropic(0.3, rand.New(rand.NewPCG(9, 9))); err != nil {
			t.Fatal(err)
		}
		r.run(t, 2)
		if a := testing.AllocsPerRun(5, func() {
			if _, err := r.s.Step(); err != nil {
				t.Fatal(err)
			}
		}); a != 0 {
			t.Errorf("%v: Step allocates %g times", model, a)
		}
		if a := testing.AllocsPerRun(3, func() { r.m.Diagnostics(); r.m.UpdateViews() }); a != 0 {
			t.Errorf("%v: Diagnostics and UpdateViews allocate %g times", model, a)
		}
		if a := testing.AllocsPerRun(2, func() { r.s.SetLevel(r.s.Level() + 1); r.run(t, 1) }); a != 0 {
			t.Errorf("%v: a step that recomputes coefficients allocates %g times", model, a)
		}
	}
}

var _ spectral.Plan // keep the import for helpers shared with other files
