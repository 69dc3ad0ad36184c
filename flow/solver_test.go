package flow_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

const eps = 0x1p-52 // float64 machine epsilon

// roundTripTol is the relative round-off bound of a forward plus inverse
// FFT of a field with n points: each transform contributes about
// eps·log2(n) (practice, no source), times a safety factor of 10.
func roundTripTol(n int) float64 { return 2 * 10 * eps * math.Log2(float64(n)) }

func gridForTest(t testing.TB, nx, ny int, lx, ly float64) *spectral.Grid {
	t.Helper()
	g, err := spectral.NewGrid(nx, ny, lx, ly)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

func planForTest(t testing.TB, g *spectral.Grid) spectral.Plan {
	t.Helper()
	p, err := spectral.NewPlan(g, spectral.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(p.Close)
	return p
}

func solverForTest(t testing.TB, g *spectral.Grid, m flow.Membrane) *flow.Solver {
	t.Helper()
	s, err := flow.NewSolver(g, m)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// membranesForTest covers every subphase kind on each side, with and
// without friction, so that D(0) is zero in some cases and positive in
// others.
func membranesForTest() map[string]flow.Membrane {
	return map[string]flow.Membrane{
		"none/none":          {Viscosity: 1.3},
		"none/none+friction": {Viscosity: 0.7, Friction: 2.5},
		"deep/deep":          {Viscosity: 1, Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 0.4}, Lower: flow.Subphase{Kind: flow.Deep, Viscosity: 0.6}},
		"wall/none":          {Viscosity: 0.5, Lower: flow.Subphase{Kind: flow.Wall, Viscosity: 1.1, Depth: 0.3}},
		"slip/deep":          {Viscosity: 2, Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 0.9}, Lower: flow.Subphase{Kind: flow.Slip, Viscosity: 1.7, Depth: 0.8}},
		"wall/slip+friction": {Viscosity: 0.9, Friction: 0.3, Upper: flow.Subphase{Kind: flow.Slip, Viscosity: 0.2, Depth: 2}, Lower: flow.Subphase{Kind: flow.Wall, Viscosity: 1.4, Depth: 0.05}},
	}
}

// solveReal transforms (fx, fy), solves and transforms back.
func solveReal(s *flow.Solver, p spectral.Plan, fx, fy []float64) (ux, uy []float64) {
	g := s.Grid()
	sx, sy := g.NewSpectral(), g.NewSpectral()
	p.Forward(sx, fx)
	p.Forward(sy, fy)
	s.Solve(sx, sy, sx, sy)
	ux, uy = g.NewReal(), g.NewReal()
	p.Inverse(ux, sx)
	p.Inverse(uy, sy)
	return ux, uy
}

// TestSingleModeOracles checks the exact single-mode solutions of MODEL.md
// §1 (derived from the Fourier solution û = P f̂/D): a force F₀ cos(k·x) e
// drives u = P(k̂) e F₀ cos(k·x)/D(k), so a transverse force (e ⊥ k) gives
// F₀ cos(k·x) e/D(k), a longitudinal one (e ∥ k) gives u = 0, and an
// oblique one keeps only its transverse part. A uniform force F gives
// F/D(0) when D(0) > 0 and 0 otherwise (the k = 0 rule). The only error is
// the round trip through the FFT: tolerance roundTripTol relative to
// F₀/D(k).
func TestSingleModeOracles(t *testing.T) {
	grids := [][4]float64{{32, 32, 1, 1}, {48, 24, 3, 1.25}, {16, 40, 0.5, 2}}
	for name, m := range membranesForTest() {
		for _, gs := range grids {
			g := gridForTest(t, int(gs[0]), int(gs[1]), gs[2], gs[3])
			t.Run(fmt.Sprintf("%s/%v", name, g), func(t *testing.T) {
				s := solverForTest(t, g, m)
				p := planForTest(t, g)
				type mode struct {
					nx, ny int     // wave numbers in units of 2π/L
					ex, ey float64 // force direction
				}
				modes := []mode{
					{3, 0, 0, 1},      // transverse: f = F₀ cos(kx) ŷ
					{3, 0, 1, 0},      // longitudinal: f = F₀ cos(kx) x̂
					{0, 2, 1, 0},      // transverse along y
					{2, -5, 0.6, 0.8}, // oblique
					{1, 1, -0.3, 1.1}, // oblique, not unit
					{0, 0, 0.8, -0.5}, // uniform: the k = 0 rule
				}
				const f0 = 2.5
				for _, md := range modes {
					kx := 2 * math.Pi * float64(md.nx) / g.Lx
					ky := 2 * math.Pi * float64(md.ny) / g.Ly
					k := math.Hypot(kx, ky)
					// Expected amplitude vector P(k̂)e/D(k); at k = 0 the rule.
					var ax, ay float64
					if k == 0 {
						if d0 := m.D0(); d0 > 0 {
							ax, ay = md.ex/d0, md.ey/d0
						}
					} else {
						c := (kx*md.ex + ky*md.ey) / (k * k)
						d := m.D(k)
						ax, ay = (md.ex-c*kx)/d, (md.ey-c*ky)/d
					}
					fx, fy := g.NewReal(), g.NewReal()
					for j := 0; j < g.Ny; j++ {
						for i := 0; i < g.Nx; i++ {
							c := f0 * math.Cos(kx*g.X(i)+ky*g.Y(j))
							fx[j*g.Nx+i], fy[j*g.Nx+i] = c*md.ex, c*md.ey
						}
					}
					ux, uy := solveReal(s, p, fx, fy)
					scale := f0 * math.Hypot(md.ex, md.ey) / m.D(k)
					if k == 0 && m.D0() == 0 {
						scale = f0 * math.Hypot(md.ex, md.ey) // expect exact zero up to round-off of f
					}
					tol := roundTripTol(g.RealLen()) * scale
					for j := 0; j < g.Ny; j++ {
						for i := 0; i < g.Nx; i++ {
							c := f0 * math.Cos(kx*g.X(i)+ky*g.Y(j))
							idx := j*g.Nx + i
							if dx, dy := math.Abs(ux[idx]-c*ax), math.Abs(uy[idx]-c*ay); dx > tol || dy > tol {
								t.Fatalf("mode %+v at (%d,%d): u = (%g, %g), want (%g, %g); error (%.2g, %.2g) > %.2g",
									md, i, j, ux[idx], uy[idx], c*ax, c*ay, dx, dy, tol)
							}
						}
					}
				}
			})
		}
	}
}

// TestSolveZeroesNyquist: the stated contract that the Nyquist row and
// column of the velocity are zero.
func TestSolveZeroesNyquist(t *testing.T) {
	g := gridForTest(t, 8, 6, 1, 1)
	s := solverForTest(t, g, membranesForTest()["deep/deep"])
	fx, fy := g.NewSpectral(), g.NewSpectral()
	for i := range fx {
		fx[i], fy[i] = complex(1, 0.5), complex(-0.25, 2)
	}
	s.Solve(fx, fy, fx, fy)
	nk := g.Nkx()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < nk; i++ {
			if (i == nk-1 || j == g.Ny/2) && (fx[j*nk+i] != 0 || fy[j*nk+i] != 0) {
				t.Fatalf("Nyquist mode (%d,%d) = %v, %v, want 0", i, j, fx[j*nk+i], fy[j*nk+i])
			}
		}
	}
}

// TestGammaSum: the precomputed per-mode traction equals Γ₊ + Γ₋ of the
// subphases at |k| (same arithmetic, so equal to a few ulps), and
// η_m k² + Γ + ξ reproduces 1/InvD.
func TestGammaSum(t *testing.T) {
	g := gridForTest(t, 16, 12, 2, 1)
	for name, m := range membranesForTest() {
		s := solverForTest(t, g, m)
		gs, inv, k2 := s.GammaSum(), s.InvD(), g.K2()
		for idx := range gs {
			k := math.Sqrt(k2[idx])
			want := m.Upper.Gamma(k) + m.Lower.Gamma(k)
			if math.Abs(gs[idx]-want) > 4*eps*want {
				t.Fatalf("%s: GammaSum[%d] = %g, want %g", name, idx, gs[idx], want)
			}
			d := m.Viscosity*k2[idx] + gs[idx] + m.Friction
			if d > 0 && math.Abs(inv[idx]*d-1) > 8*eps {
				t.Fatalf("%s: InvD[%d]·D = %g, want 1", name, idx, inv[idx]*d)
			}
		}
	}
}

// bandLimitedForce returns a random real force density whose modes are
// confined to |n| ≤ band (and no Nyquist modes), from a seeded generator.
func bandLimitedForce(g *spectral.Grid, p spectral.Plan, seed uint64, band int) (fx, fy []complex128) {
	rng := rand.New(rand.NewPCG(seed, 0x6d656d6978))
	fx, fy = g.NewSpectral(), g.NewSpectral()
	r := g.NewReal()
	for _, dst := range [][]complex128{fx, fy} {
		for i := range r {
			r[i] = rng.NormFloat64()
		}
		p.Forward(dst, r)
		nk := g.Nkx()
		for j := 0; j < g.Ny; j++ {
			my := g.ModeY(j)
			for i := 0; i < nk; i++ {
				if i > band || my > band || my < -band || i == nk-1 || j == g.Ny/2 {
					dst[j*nk+i] = 0
				}
			}
		}
	}
	return fx, fy
}

// TestPowerBalance: for a Stokes flow the power of the force equals the
// dissipation (MODEL.md §3, energy check; derived from the force balance).
// Both sides are sums of positive per-mode terms (Σ|P f̂|²/D), each with a
// relative round-off of a few tens of operations, and the sums are of
// positive terms, so the relative difference stays at tens of eps at most;
// observed ≤ 20·eps over these cases (see the log), allowed 100·eps
// (safety 5).
func TestPowerBalance(t *testing.T) {
	grids := [][4]float64{{64, 64, 1, 1}, {96, 48, 4, 1.5}}
	for name, m := range membranesForTest() {
		for gi, gs := range grids {
			g := gridForTest(t, int(gs[0]), int(gs[1]), gs[2], gs[3])
			s := solverForTest(t, g, m)
			p := planForTest(t, g)
			fx, fy := bandLimitedForce(g, p, uint64(7+gi), 20)
			fx[0], fy[0] = 0.3, -0.2 // a net force exercises the k = 0 rule
			ux, uy := g.NewSpectral(), g.NewSpectral()
			s.Solve(ux, uy, fx, fy)
			b := flow.NewPowerBudget(s)
			pw := b.Power(fx, fy, ux, uy)
			mem, sub, fr := b.DissipationParts(ux, uy)
			diss := mem + sub + fr
			rel := math.Abs(pw-diss) / pw
			t.Logf("%s %v: power %.6g, dissipation %.6g (membrane %.3g, subphase %.3g, friction %.3g), rel diff %.2g = %.1f eps",
				name, g, pw, diss, mem, sub, fr, rel, rel/eps)
			if !(rel <= 100*eps) {
				t.Errorf("%s %v: power %g, dissipation %g: relative difference %.3g > %.3g", name, g, pw, diss, rel, 100*eps)
			}
			if d := b.Dissipation(ux, uy); d != diss {
				t.Errorf("Dissipation %g differs from the sum of its parts %g", d, diss)
			}
			// Parts that the membrane does not have must be exactly zero.
			if m.Friction == 0 && fr != 0 {
				t.Errorf("%s: friction dissipation %g without friction", name, fr)
			}
			if m.Upper.Kind == flow.None && m.Lower.Kind == flow.None && sub != 0 {
				t.Errorf("%s: subphase dissipation %g without subphases", name, sub)
			}
		}
	}
}

// TestDissipationOfShear checks each dissipation part on a flow known in
// closed form (not a solver output): u = (A sin(k y), 0) has
// E₁₂ = (A k/2) cos(k y), so ⟨2η_m E:E⟩ = 2η_m·2⟨E₁₂²⟩ = η_m A²k²/2,
// the subphases dissipate Γ(k)·2·|A/2|² = Γ(k)A²/2, and friction ξA²/2
// (box averages of sin² are 1/2). Relative round-off tolerance as in
// TestPowerBalance.
func TestDissipationOfShear(t *testing.T) {
	m := membranesForTest()["wall/slip+friction"]
	g := gridForTest(t, 16, 32, 1, 2)
	s := solverForTest(t, g, m)
	p := planForTest(t, g)
	const a = 0.7
	k := 2 * math.Pi * 3 / g.Ly
	ux, uy := g.NewReal(), g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			ux[j*g.Nx+i] = a * math.Sin(k*g.Y(j))
		}
	}
	sx, sy := g.NewSpectral(), g.NewSpectral()
	p.Forward(sx, ux)
	p.Forward(sy, uy)
	mem, sub, fr := flow.NewPowerBudget(s).DissipationParts(sx, sy)
	gam := m.Upper.Gamma(k) + m.Lower.Gamma(k)
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"membrane", mem, m.Viscosity * a * a * k * k / 2},
		{"subphase", sub, gam * a * a / 2},
		{"friction", fr, m.Friction * a * a / 2},
	} {
		if math.Abs(c.got-c.want) > 1000*eps*c.want {
			t.Errorf("%s dissipation %.16g, want %.16g", c.name, c.got, c.want)
		}
	}
}

// TestGradients compares the spectral vorticity and strain rate with the
// analytic derivatives of a trigonometric velocity field the grid
// resolves: u_x = Σ a cos(φ), u_y = Σ b cos(φ), φ = kx x + ky y + c, so
// ∂_j u_i = −(coefficient)·k_j sin φ. Round-off only: tolerance
// roundTripTol × k_max × Σ(|a|+|b|).
func TestGradients(t *testing.T) {
	g := gridForTest(t, 32, 24, 2, 1.5)
	p := planForTest(t, g)
	type md struct {
		nx, ny    int
		a, b, phi float64
	}
	modes := []md{{1, 0, 0.3, 1, 0.2}, {2, -3, 1, -0.5, 1.1}, {-5, 7, 0.25, 0.4, -0.4}, {0, 4, 0.6, 0, 0}}
	n := g.RealLen()
	ux, uy := make([]float64, n), make([]float64, n)
	wOmega, wE11, wE12 := make([]float64, n), make([]float64, n), make([]float64, n)
	var amp, kmax float64
	for _, m := range modes {
		kx := 2 * math.Pi * float64(m.nx) / g.Lx
		ky := 2 * math.Pi * float64(m.ny) / g.Ly
		amp += math.Abs(m.a) + math.Abs(m.b)
		kmax = math.Max(kmax, math.Hypot(kx, ky))
		for j := 0; j < g.Ny; j++ {
			for i := 0; i < g.Nx; i++ {
				ph := kx*g.X(i) + ky*g.Y(j) + m.phi
				c, s := math.Cos(ph), math.Sin(ph)
				idx := j*g.Nx + i
				ux[idx] += m.a * c
				uy[idx] += m.b * c
				dxuy, dyux := -m.b*kx*s, -m.a*ky*s
				wOmega[idx] += dxuy - dyux
				wE11[idx] += -m.a * kx * s
				wE12[idx] += (dyux + dxuy) / 2
			}
		}
	}
	sx, sy := g.NewSpectral(), g.NewSpectral()
	p.Forward(sx, ux)
	p.Forward(sy, uy)
	om, e11, e12, work := g.NewSpectral(), g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
	tol := roundTripTol(n) * kmax * amp
	check := func(name string, s []complex128, want []float64) {
		t.Helper()
		got := g.NewReal()
		p.Inverse(got, s)
		for i := range got {
			if d := math.Abs(got[i] - want[i]); d > tol {
				t.Fatalf("%s at %d: %g, want %g (|diff| %.2g > %.2g)", name, i, got[i], want[i], d, tol)
			}
		}
	}
	flow.Gradients(g, om, e11, e12, sx, sy)
	check("Gradients ω", om, wOmega)
	check("Gradients E11", e11, wE11)
	check("Gradients E12", e12, wE12)
	clear(om)
	flow.Vorticity(g, om, sx, sy, work)
	check("Vorticity", om, wOmega)
	clear(e11)
	clear(e12)
	flow.StrainRate(g, e11, e12, sx, sy)
	check("StrainRate E11", e11, wE11)
	check("StrainRate E12", e12, wE12)
}

// TestKinematicsAliasingPanics: the documented aliasing ban is enforced.
func TestKinematicsAliasingPanics(t *testing.T) {
	g := gridForTest(t, 8, 8, 1, 1)
	a, b, c := g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
	defer func() {
		if recover() == nil {
			t.Fatal("Gradients with omega aliasing ux did not panic")
		}
	}()
	flow.Gradients(g, a, b, c, a, c)
}

// TestHotCallsAllocateNothing proves the allocation contract of Solve,
// the kinematics kernels and the power budget.
func TestHotCallsAllocateNothing(t *testing.T) {
	g := gridForTest(t, 64, 32, 1, 1)
	s := solverForTest(t, g, membranesForTest()["wall/slip+friction"])
	b := flow.NewPowerBudget(s)
	fx, fy, ux, uy := g.NewSpectral(), g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
	o, e1, e2 := g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
	for name, f := range map[string]func(){
		"Solve":       func() { s.Solve(ux, uy, fx, fy) },
		"Solve/alias": func() { s.Solve(fx, fy, fx, fy) },
		"Gradients":   func() { flow.Gradients(g, o, e1, e2, ux, uy) },
		"Vorticity":   func() { flow.Vorticity(g, o, ux, uy, e1) },
		"StrainRate":  func() { flow.StrainRate(g, e1, e2, ux, uy) },
		"Power":       func() { _ = b.Power(fx, fy, ux, uy) },
		"Dissipation": func() { _ = b.Dissipation(ux, uy) },
	} {
		if n := testing.AllocsPerRun(20, f); n != 0 {
			t.Errorf("%s allocates %v times per call, want 0", name, n)
		}
	}
}
