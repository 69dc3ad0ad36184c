package stability

// ActiveDrive returns the flow-driven part of the active growth rate at
// wavenumber k ≥ 0, −(βσ₀c₀/4)·k²/D(k) (MODEL.md §2.3; derivation in
// kinetic.go). At k = 0 it returns 0: the force ∇·Σ has no k = 0 component.
// The limit k → 0 may differ: 0 with a deep subphase (∝ k), with a wall or
// friction (∝ k²), but −βσ₀c₀/(4η_m) with no subphase and no friction.
func (p Active) ActiveDrive(k float64) float64 {
	if k == 0 {
		return 0
	}
	return -p.Alignment * p.Stress / 4 * k * k / p.Membrane.D(k)
}

// Rate returns the closed-form growth rate of the active (Q_12) mode at
// wavenumber k for V₀ = 0 (the Speed field is ignored):
//
//	s_act(k) = −(βσ₀c₀/4)·k²/D(k) − 4D_r − D_t k².
//
// For V₀ ≠ 0 use the kinetic operator.
func (p Active) Rate(k float64) float64 {
	return p.ActiveDrive(k) + p.passive(2, k)
}

// PassiveRate returns the growth rate −n²D_r − D_t k² of angular mode n at
// wavenumber k for V₀ = 0: every mode except the active one (for n = 2
// it is the Q_11 mode, which the flow does not drive).
func (p Active) PassiveRate(n int, k float64) float64 { return p.passive(n, k) }

func (p Active) passive(n int, k float64) float64 {
	return -float64(n*n)*p.RotDiff - p.TransDiff*k*k
}

// CriticalStress returns, for V₀ = 0 (closed form), the active stress σ₀c₀
// at which the uniform isotropic state first becomes unstable to a
// wavenumber in [kMin, kMax], found by root finding on the largest growth
// rate as a function of σ₀c₀ (see Critical). Instability needs −βσ₀c₀ > 0,
// so the result has the sign of −β; β = 0 is an error.
func (p Active) CriticalStress(kMin, kMax float64) (Critical, error) {
	rate := func(stress, k float64) float64 {
		q := p
		q.Stress = stress
		return q.Rate(k)
	}
	return criticalStress(rate, p, kMin, kMax)
}
