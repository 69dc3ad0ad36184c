package flow

import (
	"math"

	"github.com/memix-sim/memix/internal/special"
)

// Closed-form drag coefficients of a rigid disk of radius a in a membrane.
// Translational drag λ = F/U, rotational drag λ_R = torque/Ω; the
// diffusivities are D = k_BT/λ (Einstein). Viscosities as in [Membrane]:
// etaM the surface viscosity η_m, etaS the summed bulk viscosity η₊ + η₋,
// xi the friction coefficient ξ. The functions do not validate their
// arguments (InclusionMobility does); outside their stated range they
// return the formula's value, which may be meaningless or negative.

// Petrov–Schwille fit constants [Petrov & Schwille, Biophys. J. 94, L41
// (2008); b₂ as corrected in Biophys. J. 103, 375 (2012); the 2008 paper
// printed b₂ = 0.61465].
const (
	psC1 = 0.73761
	psB1 = 2.74819
	psC2 = 0.52119
	psB2 = 0.51465
)

// SaffmanDelbruckDrag returns λ = 4πη_m/[ln(2/ε) − γ], ε = a·etaS/etaM,
// γ Euler's constant [Saffman & Delbrück, PNAS 72, 3111 (1975)]. Valid
// for ε ≪ 1: it underestimates D by about 4ε/(π(ln(2/ε) − γ)), measured
// against the memix numerical solution of the full Hughes–Pailthorpe–White
// problem as 0.018 % at ε = 10⁻³, 0.26 % at 10⁻², 4.4 % at 0.1 and 18 % at
// 0.3; the bracket vanishes at ε = 2e^{−γ} ≈ 1.12, beyond which the form
// is meaningless.
func SaffmanDelbruckDrag(etaM, etaS, a float64) float64 {
	eps := a * etaS / etaM
	return 4 * math.Pi * etaM / (math.Log(2/eps) - special.EulerGamma)
}

// PetrovSchwilleDrag returns the translational drag of a disk in a
// membrane between deep subphases from the Petrov–Schwille closed-form fit
// to the Hughes–Pailthorpe–White solution [Hughes, Pailthorpe & White,
// J. Fluid Mech. 110, 349 (1981); Petrov & Schwille, Biophys. J. 94, L41
// (2008), with the exponent b₂ = 0.51465 of the correction, Biophys. J.
// 103, 375 (2012)], ε = a·etaS/etaM:
//
//	k_BT/λ = k_BT/(4πη_m) · [ln(2/ε) − γ + 4ε/π − (ε²/2) ln(2/ε)]
//	                      / [1 − (ε³/π) ln(2/ε) + c₁ε^{b₁}/(1 + c₂ε^{b₂})]
//
// with c₁ = 0.73761, b₁ = 2.74819, c₂ = 0.52119, b₂ = 0.51465. Accurate to
// about 2×10⁻⁴ relative for 10⁻³ ≤ ε ≤ 10³ (the authors' comparison with
// an independent HPW solution, as quoted in the memix model notes; the
// memix Galerkin solution agrees to that level); it reduces to
// Saffman–Delbrück as ε → 0 and to λ = 8a·etaS as ε → ∞.
func PetrovSchwilleDrag(etaM, etaS, a float64) float64 {
	return 4 * math.Pi * etaM / petrovSchwille(a*etaS/etaM, psB2)
}

// petrovSchwille returns 4πη_m/λ, the bracket ratio of PetrovSchwilleDrag,
// for exponent b2.
func petrovSchwille(eps, b2 float64) float64 {
	l := math.Log(2 / eps)
	num := l - special.EulerGamma + 4*eps/math.Pi - eps*eps/2*l
	den := 1 - eps*eps*eps/math.Pi*l + psC1*math.Pow(eps, psB1)/(1+psC2*math.Pow(eps, b2))
	return num / den
}

// EvansSackmannDrag returns the translational drag of a disk in a membrane
// with substrate friction ξ acting everywhere, on the disk as well as on
// the surrounding membrane (the continuum model memix solves):
//
//	λ = 4πη_m [ε²/2 + ε K₁(ε)/K₀(ε)],  ε = a sqrt(ξ/η_m).
//
// The exterior force is Evans & Sackmann's [J. Fluid Mech. 194, 553
// (1988)] 4πη_m[ε²/4 + εK₁/K₀]; the friction on the disk itself adds
// ξπa²U = 4πη_m ε²/4 [derived]. Exact for that model at every ε > 0, with
// no subphase traction.
func EvansSackmannDrag(etaM, xi, a float64) float64 {
	eps := a * math.Sqrt(xi/etaM)
	return 4 * math.Pi * etaM * (eps*eps/2 + eps*kRatio(eps))
}

// EvansSackmannExteriorDrag returns Evans & Sackmann's drag
// 4πη_m[ε²/4 + εK₁(ε)/K₀(ε)], ε = a sqrt(ξ/η_m) [J. Fluid Mech. 194, 553
// (1988)]: the force from the surrounding membrane alone, for an
// inclusion that feels no friction itself (e.g. a protein spanning a
// supported bilayer whose friction acts on the lipids only).
func EvansSackmannExteriorDrag(etaM, xi, a float64) float64 {
	eps := a * math.Sqrt(xi/etaM)
	return 4 * math.Pi * etaM * (eps*eps/4 + eps*kRatio(eps))
}

// MembraneRotDrag returns 4πη_m a², the rotational drag of a disk in a
// free membrane without subphase or friction [memory; Saffman, J. Fluid
// Mech. 73, 593 (1976)]: the exterior flow u_φ = Ωa²/r exerts a torque
// 4πη_m a²Ω. It is the ε → 0 limit with subphases, where
// λ_R = 4πη_m a² + (32/3)(η₊+η₋)a³ + O(ε² ln ε) [derived: the subphase
// dissipation of the unperturbed flow; confirmed by the numerical
// solution], i.e. a relative correction 8ε/(3π).
func MembraneRotDrag(etaM, a float64) float64 { return 4 * math.Pi * etaM * a * a }

// BrinkmanRotDrag returns the rotational drag of a disk in a membrane with
// friction ξ acting everywhere and no subphase traction (the 2D Brinkman
// rotlet) [derived]:
//
//	λ_R = 4πη_m a² [1 + ε K₀(ε)/(2K₁(ε)) + ε²/8],  ε = a sqrt(ξ/η_m).
//
// The exterior flow u_φ = Ωa K₁(εr/a)/K₁(ε) exerts the viscous torque
// 2πa²η_m Ω (2 + εK₀/K₁); the friction on the disk adds ξΩπa⁴/2.
func BrinkmanRotDrag(etaM, xi, a float64) float64 {
	eps := a * math.Sqrt(xi/etaM)
	return 4 * math.Pi * etaM * a * a * (1 + eps/(2*kRatio(eps)) + eps*eps/8)
}

// kRatio returns K₁(x)/K₀(x) from the exponentially scaled functions, so
// that it stays finite where K₀ and K₁ underflow (x ≳ 700).
func kRatio(x float64) float64 { return special.KScaled(1, x) / special.KScaled(0, x) }

// ThinDiskRotDrag returns (16/3)·etaS·a³, the torque per angular velocity
// on a thin rigid disk rotating in its own plane between two fluids of
// summed viscosity etaS [memory; Jeffery, Proc. Lond. Math. Soc. 14, 327
// (1915), as quoted in Kim & Karrila, Microhydrodynamics (1991): 32μa³/3
// for one fluid on both faces]. It is the η_m → 0 limit over deep
// subphases: the azimuthal flow is divergence-free, so the membrane's
// incompressibility does not constrain it.
func ThinDiskRotDrag(etaS, a float64) float64 { return 16.0 / 3 * etaS * a * a * a }

// LargeEpsilonDrag returns 8a·etaS, the translational drag over deep
// subphases as ε → ∞ (η_m → 0) [Hughes, Pailthorpe & White, J. Fluid Mech.
// 110, 349 (1981); the large-ε limit of Petrov & Schwille 2008].
func LargeEpsilonDrag(etaS, a float64) float64 { return 8 * a * etaS }
