// Package stability computes linear growth rates of the uniform states of
// memix's field equations and the answers derived from them: the
// fastest-growing wavenumber and wavelength, the band of unstable
// wavelengths, the critical activity, and the unstable modes of a periodic
// box. These are model predictions from the linearised equations, not
// measurements; every rate should also be reproducible by seeding a small
// single-mode perturbation in the nonlinear solver and fitting its growth.
//
// # Active inclusions (MODEL.md §2.3)
//
// About the uniform isotropic state Ψ₀ = c₀/2π, a perturbation ∝ e^{ikx}
// of the kinetic model grows or decays at the eigenvalues of a linear
// operator in angular Fourier modes (derivation in kinetic.go). For V₀ = 0
// it has the closed form
//
//	s_act(k) = −(βσ₀c₀/4)·k²/D(k) − 4D_r − D_t k²   (Active.Rate)
//
// for the mode with the director at 45° to k, and −n²D_r − D_t k² for every
// other mode (Active.PassiveRate), where D(k) = η_m k² + Γ₊(k) + Γ₋(k) + ξ
// is the membrane's transverse resistance (flow.Membrane.D). Growth needs
// −βσ₀ > 0: extensile inclusions (σ₀ < 0) aligning like rods (β > 0), or
// contractile ones with β < 0. The active term −(βσ₀c₀/4)k²/D(k) (Active.
// ActiveDrive) vanishes like k at long wavelength over a deep subphase, like
// k² over a wall or on a substrate, and tends to a constant with no
// subphase: so a deep subphase stabilises the longest wavelengths and the
// threshold is set at finite k.
//
// For any V₀ the Kinetic operator, truncated at |n| ≤ M, gives the rates
// as eigenvalues (gonum/mat); Rates raises M until they converge and
// reports M and the last change. The Moment operator is the (c, m, Q)
// moment model with the third moment dropped; it coincides with the kinetic
// operator at M = 2 and with s_act at V₀ = 0.
//
// # Lipid composition (MODEL.md §3)
//
// CahnHilliard.Rate is s(k) = −Mk²(3φ₀² − 1 + ε²k²) in the reduced units
// of the Cahn–Hilliard equation.
//
// # Derived answers
//
// Fastest, UnstableBands, BoxModes and the CriticalStress methods work on
// any growth-rate curve rate(k) (a method value such as p.Rate, kin.Rate or
// ch.Rate): continuous maxima by a log-spaced scan refined by golden-section
// search, band edges and thresholds by bisection.
//
// # Units
//
// The package has no unit system of its own (like package flow): give
// every quantity in one consistent system, SI or memix's reduced units.
// Dimensions: σ₀c₀ force/length (energy per area), β dimensionless, D_r
// 1/time, D_t length²/time, V₀ length/time, D(k) force·time/length³,
// wavenumbers 1/length, growth rates 1/time; for Cahn–Hilliard M
// length²/time, ε length, φ₀ dimensionless.
//
// # Concurrency and allocation
//
// Active and CahnHilliard are plain values. Kinetic and Moment own scratch
// matrices and must not be shared between goroutines; their eigenvalue
// calls allocate inside gonum/mat (this is analysis, not the time loop).
package stability
