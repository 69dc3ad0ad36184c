package flow

import (
	"fmt"

	"github.com/memix-sim/memix/spectral"
)

// PowerBudget evaluates the mechanical power balance of a membrane flow on
// one solver's grid and membrane. For a Stokes flow the power the force
// density delivers equals the rate of dissipation:
//
//	⟨f·u⟩ = ⟨2η_m E:E⟩ + Σ_k (Γ₊(k) + Γ₋(k)) |û_k|² + ξ ⟨|u|²⟩.
//
// Both sides are box averages (power per membrane area), computed from
// box-normalised coefficients with [spectral.Grid.Dot]; the subphase sum
// runs over the full spectrum (conjugate modes counted through the grid's
// column weights) and includes the k = 0 mode with Γ(0) = η/H for a Wall
// side. The subphase term is exact for the transverse (divergence-free)
// modes Γ describes.
//
// NewPowerBudget allocates two scratch spectral fields; no method
// allocates. A PowerBudget is not safe for concurrent use.
type PowerBudget struct {
	s        *Solver
	e1, e2   []complex128
	etaM, xi float64
}

// NewPowerBudget returns the power budget for flows of solver s.
func NewPowerBudget(s *Solver) *PowerBudget {
	return &PowerBudget{s: s, e1: s.g.NewSpectral(), e2: s.g.NewSpectral(), etaM: s.m.Viscosity, xi: s.m.Friction}
}

// Power returns ⟨f·u⟩ = ⟨f_x u_x + f_y u_y⟩ from the coefficients of the
// force density (fx, fy) and the velocity (ux, uy). Lengths must match the
// grid.
func (b *PowerBudget) Power(fx, fy, ux, uy []complex128) float64 {
	g := b.s.g
	return g.Dot(fx, ux) + g.Dot(fy, uy)
}

// Dissipation returns the total dissipation rate of the velocity (ux, uy):
// the sum of the three parts of DissipationParts.
func (b *PowerBudget) Dissipation(ux, uy []complex128) float64 {
	m, s, f := b.DissipationParts(ux, uy)
	return m + s + f
}

// DissipationParts returns the dissipation rates of the velocity (ux, uy)
// in the membrane, ⟨2η_m E:E⟩ = 2η_m⟨E₁₁² + 2E₁₂² + E₂₂²⟩ (E₂₂ = ∂y u_y is
// computed, not assumed to be −E₁₁), in the two subphases,
// Σ_k (Γ₊+Γ₋)|û_k|², and in the substrate friction, ξ⟨|u|²⟩. Lengths must
// match the grid; the velocity is not modified.
func (b *PowerBudget) DissipationParts(ux, uy []complex128) (membrane, subphase, friction float64) {
	g := b.s.g
	if len(ux) != g.SpecLen() || len(uy) != g.SpecLen() {
		panic(fmt.Sprintf("flow: DissipationParts lengths %d, %d, want %d", len(ux), len(uy), g.SpecLen()))
	}
	StrainRate(g, b.e1, b.e2, ux, uy)
	ee := g.MeanSquare(b.e1) + 2*g.MeanSquare(b.e2)
	g.Dy(b.e1, uy)
	ee += g.MeanSquare(b.e1)
	membrane = 2 * b.etaM * ee
	subphase = weightedSum(g, b.s.gamma, ux) + weightedSum(g, b.s.gamma, uy)
	friction = b.xi * (g.MeanSquare(ux) + g.MeanSquare(uy))
	return membrane, subphase, friction
}

// weightedSum returns Σ_k w_k |s_k|² over the full spectrum of the real
// field with half-spectrum coefficients s, for a weight w_k = w(|k|) that
// is even in k.
func weightedSum(g *spectral.Grid, w []float64, s []complex128) float64 {
	nk := g.Nkx()
	var sum float64
	for j := 0; j < g.Ny; j++ {
		row := j * nk
		for i := 0; i < nk; i++ {
			v := s[row+i]
			sum += g.Weight(i) * w[row+i] * (real(v)*real(v) + imag(v)*imag(v))
		}
	}
	return sum
}
