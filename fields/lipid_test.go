package fields_test

import (
	"math"
	"math/cmplx"
	"testing"

	"github.com/memix-sim/memix/fields"
)

func lipidParams(nx, ny int, lx, ly, dt float64, l fields.Lipid) fields.Params {
	p := baseParams(nx, ny, lx, ly, dt)
	p.Inclusions.Model = fields.NoInclusions
	p.Lipid = l
	return p
}

// TestPassiveLipidDecay: without flow a single mode of ∂tφ = D_φ∇²φ decays
// as e^{−D_φk²t} (the heat equation; practice). ETDRK4 integrates this
// linear part exactly, so the only error is the round-off of one product
// e^{Lh}·φ per step: the tolerance is 4ε per step.
func TestPassiveLipidDecay(t *testing.T) {
	const D, dt, steps = 0.1, 0.05, 200
	p := lipidParams(16, 12, 2*math.Pi, 3, dt, fields.Lipid{Model: fields.Passive, Diffusivity: D})
	r := newRig(t, p)
	if err := r.m.AddMode("phi", 2, -1, 0.3, 0.7); err != nil {
		t.Fatal(err)
	}
	f := field(t, r.m, "phi")
	c0 := coefAt(r.m, f, 2, -1)
	r.run(t, steps)
	k2 := 4.0 + math.Pow(2*math.Pi/3, 2)
	want := c0 * complex(math.Exp(-D*k2*r.m.Time()), 0)
	got := coefAt(r.m, f, 2, -1)
	if e := cmplx.Abs(got-want) / cmplx.Abs(want); e > 4*eps*steps {
		t.Errorf("passive mode: relative error %.2e, tolerance %.2e", e, 4*eps*steps)
	}
}

// TestCahnHilliardSpinodalGrowth: a small mode about a uniform φ₀ in the
// spinodal region grows at s(k) = −Mk²(3φ₀² − 1 + ε²k²) [Cahn & Hilliard,
// J. Chem. Phys. 28, 258 (1958); linearised form as in MODEL.md §3]; a
// mode beyond the cut-off decays at the same formula. With amplitude 10⁻⁶
// the nonlinear correction to the fundamental is of relative order 10⁻¹²;
// the explicit part (−3φ₀²Mk² of the linearisation) has rate·dt ≤ 0.008,
// so the ETDRK4 error in s is of order (0.008)⁴ ≈ 4·10⁻⁹ relative or less.
// The FFT round-off of φ³ (about 10⁻¹⁶ of φ₀³ per step) is 10⁻¹⁰ of the
// mode after it has decayed by e^{−8.5}. Tolerance 10⁻⁸.
func TestCahnHilliardSpinodalGrowth(t *testing.T) {
	const M, e, phi0 = 1.0, 0.5, 0.2
	p := lipidParams(32, 8, 4*math.Pi, math.Pi, 0.01, fields.Lipid{Model: fields.CahnHilliard, Mobility: M, Interface: e})
	for _, n := range []int{2, 5} { // k = 1 (unstable), 2.5 (stable)
		r := newRig(t, p)
		if err := r.m.SetLipidUniform(phi0); err != nil {
			t.Fatal(err)
		}
		if err := r.m.AddMode("phi", n, 0, 1e-6, 0.3); err != nil {
			t.Fatal(err)
		}
		f := field(t, r.m, "phi")
		a0 := cmplx.Abs(coefAt(r.m, f, n, 0))
		r.run(t, 200)
		k := float64(n) / 2
		want := -M * k * k * (3*phi0*phi0 - 1 + e*e*k*k)
		got := math.Log(cmplx.Abs(coefAt(r.m, f, n, 0))/a0) / r.m.Time()
		t.Logf("k = %g: s = %.12g, want %.12g, relative error %.2e", k, got, want, relErr(got, want))
		if relErr(got, want) > 1e-8 {
			t.Errorf("k = %g: s = %g, want %g", k, got, want)
		}
	}
}

// TestCahnHilliardInterface relaxes a pair of flat interfaces started 1.5
// times too wide and compares with the equilibrium of μ = φ³ − φ − ε²φ″ =
// 0, φ = tanh(x/(√2ε)) [Cahn & Hilliard, J. Chem. Phys. 28, 258 (1958)],
// and the excess free energy per length with the line tension 2√2ε/3 (in
// units of A; MODEL.md §3, derived: ∫ε²φ′² dx by equipartition).
//
// Tolerance: the profile tanh(x/w), w = √2ε, has poles at distance πw/2
// from the real axis, so its Fourier coefficients fall as e^{−πwk/2}
// [practice; Trefethen, Spectral Methods in MATLAB (SIAM 2000), ch. 4] and
// truncation at the dealiased k_max leaves an error of that order: we
// allow 10·e^{−πwk_max/2} (1.1·10⁻⁷ here; measured 1.2·10⁻⁸) for the
// profile and, relative, for the line tension (measured 1.8·10⁻⁹). The
// interfaces are 8 apart, so their interaction, of order e^{−2·8/w} =
// 10⁻¹⁰, is below that; the slowest relaxation mode decays at about 0.3/τ₀
// (observed), so t = 80 leaves e^{−24} of the initial misfit.
func TestCahnHilliardInterface(t *testing.T) {
	const M, e, L = 1.0, 0.5, 16.0
	p := lipidParams(128, 4, L, 1, 0.02, fields.Lipid{Model: fields.CahnHilliard, Mobility: M, Interface: e})
	r := newRig(t, p)
	w := math.Sqrt2 * e
	if err := r.m.InitStripes(1, fields.AxisX, 1.5*w); err != nil {
		t.Fatal(err)
	}
	r.run(t, 4000)
	r.views(t)
	phi := r.m.Views()[0].Data
	g := r.m.Grid()
	var maxErr float64
	for i := 0; i < g.Nx; i++ {
		x := g.X(i)
		// Two interfaces, at 0 (rising) and L/2 (falling); the product form
		// is exact up to terms of order e^{−L/w}.
		want := math.Tanh(x/w) * math.Tanh((L/2-x)/w) * math.Tanh((L-x)/w)
		maxErr = math.Max(maxErr, math.Abs(phi[i]-want))
	}
	d := r.diag(t)
	tension := d.FreeEnergy * g.Lx * g.Ly / (2 * g.Ly)
	wantT := 2 * math.Sqrt2 * e / 3
	kmax, _ := g.KMaxDealiased()
	tol := 10 * math.Exp(-math.Pi*w*kmax/2)
	t.Logf("profile max error %.2e; line tension %.12g, want %.12g (relative %.2e); tolerance %.2e", maxErr, tension, wantT, relErr(tension, wantT), tol)
	if maxErr > tol {
		t.Errorf("profile max error %.2e, tolerance %.2e", maxErr, tol)
	}
	if relErr(tension, wantT) > tol {
		t.Errorf("line tension %g, want %g (relative error %.2e, tolerance %.2e)", tension, wantT, relErr(tension, wantT), tol)
	}
}

// TestKortewegEnergy: with back-reaction, the line-tension force
// f_φ = −Aφ∇μ does work at the expense of the free energy: d(A·F)/dt =
// −⟨f_φ·u⟩ − AM⟨|∇μ|²⟩ (MODEL.md §3; derived from ∂tφ = −u·∇φ + M∇²μ
// and μ = δF/δφ, with ∇·u = 0). With the mobility 10⁻¹⁰ the diffusive part
// is negligible, so the change of A·F over an interval must equal minus
// the time integral of the interface power (Simpson's rule on three
// diagnostics). This checks the sign and scale of the force against the
// free energy, which is computed independently (FreeEnergy). The initial
// state is smooth and resolved (stripes of width √2ε, 4.5 grid spacings,
// plus a band-limited mode), so the discrete identity holds up to the
// truncation error of the interfaces, e^{−πwk_max/2} ≈ 10⁻⁷ (see
// TestCahnHilliardInterface), and Simpson's rule adds O(Δt⁴). Tolerance
// 10⁻⁶ relative.
func TestKortewegEnergy(t *testing.T) {
	p := lipidParams(64, 64, 2*math.Pi, 2*math.Pi, 0.001,
		fields.Lipid{Model: fields.CahnHilliard, Mobility: 1e-10, Interface: 0.35, Energy: 2, Backreaction: true})
	r := newRig(t, p)
	if err := r.m.InitStripes(2, fields.AxisX, 0); err != nil {
		t.Fatal(err)
	}
	if err := r.m.AddMode("phi", 1, 2, 0.2, 0); err != nil {
		t.Fatal(err)
	}
	d0 := r.diag(t)
	r.run(t, 10)
	mid := r.diag(t)
	r.run(t, 10)
	d1 := r.diag(t)
	dF := p.Lipid.Energy * (d1.FreeEnergy - d0.FreeEnergy)
	work := -(d1.Time - d0.Time) / 6 * (d0.InterfacePower + 4*mid.InterfacePower + d1.InterfacePower)
	t.Logf("A ΔF = %.12g, −∫⟨f_φ·u⟩dt = %.12g, relative %.1e", dF, work, relErr(dF, work))
	if relErr(dF, work) > 1e-6 || work >= 0 {
		t.Errorf("A ΔF = %g, want −∫⟨f_φ·u⟩dt = %g", dF, work)
	}
}
