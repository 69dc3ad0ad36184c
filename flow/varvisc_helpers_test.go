package flow_test

// Helpers of the variable-viscosity tests. Their names start with vv so
// that they cannot collide with helpers of the other flow tests.

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// vvFFTTol is the relative round-off of one transform of n points, the
// same scale the spectral tests use: 2ε log₂ n.
func vvFFTTol(n int) float64 { return 2 * vvEps * math.Log2(float64(n)) }

func vvGrid(t testing.TB, nx, ny int, lx, ly float64) *spectral.Grid {
	t.Helper()
	g, err := spectral.NewGrid(nx, ny, lx, ly)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

func vvPlan(t testing.TB, g *spectral.Grid, b spectral.Backend) spectral.Plan {
	t.Helper()
	p, err := spectral.NewPlan(g, spectral.Options{Backend: b})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(p.Close)
	return p
}

func vvVarSolver(t testing.TB, p spectral.Plan, m flow.Membrane, opt flow.PCGOptions) *flow.VarSolver {
	t.Helper()
	s, err := flow.NewVarSolver(p, m, opt)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// vvMembranes are the subphase configurations every solver test runs:
// no subphase, deep on both sides, a wall-bounded layer (D(0) > 0), a
// free-slip layer, and substrate friction alone (D(0) > 0).
func vvMembranes() []struct {
	name string
	m    flow.Membrane
} {
	return []struct {
		name string
		m    flow.Membrane
	}{
		{"none", flow.Membrane{Viscosity: 1}},
		{"deep", flow.Membrane{Viscosity: 1, Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 2}, Lower: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}}},
		{"wall", flow.Membrane{Viscosity: 1, Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 1}, Lower: flow.Subphase{Kind: flow.Wall, Viscosity: 3, Depth: 0.2}}},
		{"slip", flow.Membrane{Viscosity: 1, Lower: flow.Subphase{Kind: flow.Slip, Viscosity: 2, Depth: 0.4}}},
		{"friction", flow.Membrane{Viscosity: 1, Friction: 5}},
	}
}

// vvDamp returns Γ₊(k) + Γ₋(k) + ξ.
func vvDamp(m flow.Membrane, k float64) float64 {
	return m.Upper.Gamma(k) + m.Lower.Gamma(k) + m.Friction
}

// vvLambdaMin returns a lower bound of the smallest eigenvalue of the
// variable-viscosity operator A on its solution space: for divergence-free
// u, ⟨u, Au⟩ ≥ Σ_k (η_min k² + Γ(k) + ξ)|û_k|² (because ⟨2E:E⟩ = Σ k²|û_k|²
// for divergence-free periodic fields), so λ_min ≥ min over the modes of
// the solution space of η_min k² + Γ + ξ, with k = 0 counted only when
// D(0) > 0.
func vvLambdaMin(g *spectral.Grid, m flow.Membrane, etaMin float64) float64 {
	lo := math.Inf(1)
	if d0 := vvDamp(m, 0); d0 > 0 {
		lo = d0
	}
	k2 := g.K2()
	for idx := 1; idx < len(k2); idx++ {
		k := math.Sqrt(k2[idx])
		lo = math.Min(lo, etaMin*k2[idx]+vvDamp(m, k))
	}
	return lo
}

// vvNorm returns the box L² norm sqrt(⟨|v|²⟩) of a spectral vector field.
func vvNorm(g *spectral.Grid, vx, vy []complex128) float64 {
	return math.Sqrt(g.MeanSquare(vx) + g.MeanSquare(vy))
}

// vvRandomForce returns the coefficients of a real random force density
// with independent uniform values in [−1, 1) at each grid point (all modes
// present, including k = 0 and the Nyquist modes).
func vvRandomForce(g *spectral.Grid, p spectral.Plan, seed uint64) (fx, fy []complex128) {
	rng := rand.New(rand.NewPCG(seed, 7))
	f := g.NewReal()
	fx, fy = g.NewSpectral(), g.NewSpectral()
	for _, dst := range [][]complex128{fx, fy} {
		for i := range f {
			f[i] = 2*rng.Float64() - 1
		}
		p.Forward(dst, f)
	}
	return fx, fy
}

// vvSmoothForce is vvRandomForce with the modes beyond |k| = kc removed
// smoothly (factor exp(−k²/kc²)): a force with the length scale of the
// domains rather than of the grid.
func vvSmoothForce(g *spectral.Grid, p spectral.Plan, seed uint64, kc float64) (fx, fy []complex128) {
	fx, fy = vvRandomForce(g, p, seed)
	for idx, k2 := range g.K2() {
		w := complex(math.Exp(-k2/(kc*kc)), 0)
		fx[idx] *= w
		fy[idx] *= w
	}
	return fx, fy
}

// vvDomainPhi returns a composition field of domains: n disks of phase
// φ = +1 in a matrix of φ = −1, radii uniform in [rmin, rmax], centres
// uniform in the box, each with the equilibrium Cahn–Hilliard interface
// profile tanh(d/(√2 w)) of width w (d the signed distance to the rim,
// periodic images included). Overlapping disks merge. Invented demo data.
func vvDomainPhi(g *spectral.Grid, seed uint64, n int, rmin, rmax, w float64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 11))
	type disk struct{ x, y, r float64 }
	disks := make([]disk, n)
	for i := range disks {
		disks[i] = disk{rng.Float64() * g.Lx, rng.Float64() * g.Ly, rmin + (rmax-rmin)*rng.Float64()}
	}
	phi := g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			s := 0.0 // largest phase-A fraction (1+φ)/2 over the disks
			for _, d := range disks {
				dx := math.Remainder(g.X(i)-d.x, g.Lx)
				dy := math.Remainder(g.Y(j)-d.y, g.Ly)
				r := math.Hypot(dx, dy)
				s = math.Max(s, (1+math.Tanh((d.r-r)/(math.Sqrt2*w)))/2)
			}
			phi[j*g.Nx+i] = 2*s - 1
		}
	}
	return phi
}

// vvDomainEta returns the log-linear viscosity of vvDomainPhi (12 disks,
// radii 6–14 % of Lx, interface width 2 grid spacings) with phase
// viscosities η_A = contrast (the disks) and η_B = 1 (the matrix).
func vvDomainEta(g *spectral.Grid, contrast float64) []float64 {
	phi := vvDomainPhi(g, 1, 12, 0.06*g.Lx, 0.14*g.Lx, 2*g.MinSpacing())
	law := flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: contrast, PhaseB: 1}
	law.Fill(phi, phi)
	return phi
}

// vvDissipation returns ⟨2η_m E:E⟩ computed independently of VarSolver's
// operator: all four velocity gradients by spectral differentiation
// (Grid.Dx, Grid.Dy), the full strain rate E (trace included) in real
// space, and the grid average. (A dissipation helper is being written in
// another flow file; this private copy keeps the check independent of it.)
func vvDissipation(g *spectral.Grid, p spectral.Plan, eta []float64, ux, uy []complex128) float64 {
	s := g.NewSpectral()
	grad := make([][]float64, 4) // ∂x ux, ∂y ux, ∂x uy, ∂y uy
	for n, op := range []struct {
		d func(dst, src []complex128)
		u []complex128
	}{{g.Dx, ux}, {g.Dy, ux}, {g.Dx, uy}, {g.Dy, uy}} {
		op.d(s, op.u)
		grad[n] = g.NewReal()
		p.Inverse(grad[n], s)
	}
	var sum float64
	for i, e := range eta {
		exx, eyy := grad[0][i], grad[3][i]
		exy := (grad[1][i] + grad[2][i]) / 2
		sum += 2 * e * (exx*exx + eyy*eyy + 2*exy*exy)
	}
	return sum / float64(len(eta))
}

// vvTractionPower returns Σ_k (Γ(k) + ξ)|û_k|² over the full spectrum.
func vvTractionPower(g *spectral.Grid, m flow.Membrane, ux, uy []complex128) float64 {
	var sum float64
	nk := g.Nkx()
	k2 := g.K2()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < nk; i++ {
			idx := j*nk + i
			a, b := ux[idx], uy[idx]
			mag := real(a)*real(a) + imag(a)*imag(a) + real(b)*real(b) + imag(b)*imag(b)
			sum += g.Weight(i) * vvDamp(m, math.Sqrt(k2[idx])) * mag
		}
	}
	return sum
}

// vvLogSlope returns the least-squares slope of ln y against ln x.
func vvLogSlope(x, y []float64) float64 {
	var sx, sy, sxx, sxy float64
	n := float64(len(x))
	for i := range x {
		lx, ly := math.Log(x[i]), math.Log(y[i])
		sx += lx
		sy += ly
		sxx += lx * lx
		sxy += lx * ly
	}
	return (n*sxy - sx*sy) / (n*sxx - sx*sx)
}
