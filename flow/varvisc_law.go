package flow

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// ViscosityRule is how the membrane viscosity η_m depends on the lipid
// composition φ, whose two phases are φ = +1 (phase A) and φ = −1 (phase B).
type ViscosityRule int

const (
	// ConstantViscosity: η_m = η_A whatever φ is (η_B is ignored).
	ConstantViscosity ViscosityRule = iota
	// LogLinearViscosity: ln η_m = x_A ln η_A + x_B ln η_B with the phase-A
	// fraction x_A = (1+φ)/2 and x_B = 1 − x_A, the Grunberg–Nissan mixing
	// rule [memory; Grunberg & Nissan, Nature 164, 799 (1949)]. At φ = 0 it
	// gives the geometric mean sqrt(η_A η_B).
	LogLinearViscosity
	// LinearViscosity: η_m = x_A η_A + x_B η_B. At φ = 0 it gives the
	// arithmetic mean (η_A + η_B)/2.
	LinearViscosity
)

var viscRuleNames = [...]string{
	ConstantViscosity:  "constant",
	LogLinearViscosity: "log-linear",
	LinearViscosity:    "linear",
}

// String returns the configuration name of the rule.
func (r ViscosityRule) String() string {
	if r < 0 || int(r) >= len(viscRuleNames) {
		return fmt.Sprintf("ViscosityRule(%d)", int(r))
	}
	return viscRuleNames[r]
}

// ParseViscosityRule returns the rule named s ("constant", "log-linear" or
// "linear", case-insensitive).
func ParseViscosityRule(s string) (ViscosityRule, error) {
	for r, name := range viscRuleNames {
		if strings.EqualFold(strings.TrimSpace(s), name) {
			return ViscosityRule(r), nil
		}
	}
	return 0, fmt.Errorf("unknown viscosity rule %q: valid rules are constant, log-linear, linear", s)
}

// ViscosityLaw gives the membrane viscosity η_m(φ) of a two-phase membrane.
// Viscosities are surface viscosities [viscosity·length, e.g. Pa·s·m, or
// the reduced unit]. The composition is clamped to [−1, 1] before the rule
// is evaluated, so η_m always lies between η_A and η_B: overshoots of φ
// beyond the pure phases (common in Cahn–Hilliard dynamics) never produce
// a viscosity outside the range of the two phases.
type ViscosityLaw struct {
	Rule   ViscosityRule
	PhaseA float64 // η_A, the viscosity of the phase φ = +1
	PhaseB float64 // η_B, the viscosity of the phase φ = −1 (unused by ConstantViscosity)
}

// Validate reports every inconsistency at once.
func (l ViscosityLaw) Validate() error {
	var errs []error
	if l.Rule < ConstantViscosity || l.Rule > LinearViscosity {
		errs = append(errs, fmt.Errorf("viscosity rule = %d: valid rules are constant, log-linear, linear", int(l.Rule)))
	}
	if !(l.PhaseA > 0 && !math.IsInf(l.PhaseA, 0)) {
		errs = append(errs, fmt.Errorf("phase A membrane viscosity = %g: must be finite and > 0", l.PhaseA))
	}
	if l.Rule != ConstantViscosity && !(l.PhaseB > 0 && !math.IsInf(l.PhaseB, 0)) {
		errs = append(errs, fmt.Errorf("phase B membrane viscosity = %g: must be finite and > 0 for rule %s", l.PhaseB, l.Rule))
	}
	return errors.Join(errs...)
}

// clampPhi returns φ clamped to [−1, 1]; NaN stays NaN.
func clampPhi(phi float64) float64 {
	if phi > 1 {
		return 1
	}
	if phi < -1 {
		return -1
	}
	return phi
}

// At returns η_m(φ) for one composition value. A NaN φ gives NaN.
func (l ViscosityLaw) At(phi float64) float64 {
	ca, cb := l.coeffs()
	return l.eval(ca, cb, phi)
}

// coeffs returns what the rule mixes: ln η_A and ln η_B for the log-linear
// rule, η_A and η_B otherwise.
func (l ViscosityLaw) coeffs() (ca, cb float64) {
	if l.Rule == LogLinearViscosity {
		return math.Log(l.PhaseA), math.Log(l.PhaseB)
	}
	return l.PhaseA, l.PhaseB
}

// eval evaluates the rule at φ with the coefficients of coeffs. The mixing
// is written x_A c_A + x_B c_B (not mean ± φ·half-difference) so that the
// pure phases come out without cancellation.
func (l ViscosityLaw) eval(ca, cb, phi float64) float64 {
	if math.IsNaN(phi) {
		return phi
	}
	xa := (1 + clampPhi(phi)) / 2
	switch l.Rule {
	case LogLinearViscosity:
		return math.Exp(xa*ca + (1-xa)*cb)
	case LinearViscosity:
		return xa*ca + (1-xa)*cb
	default:
		return l.PhaseA
	}
}

// Fill sets dst[i] = η_m(phi[i]) for every i, with the same arithmetic as
// At. dst may be the same slice as phi. It allocates nothing and panics if
// the lengths differ. A NaN in phi gives a NaN in dst, which
// VarSolver.SetViscosity then rejects with the grid point named.
func (l ViscosityLaw) Fill(dst, phi []float64) {
	if len(dst) != len(phi) {
		panic(fmt.Sprintf("flow: ViscosityLaw.Fill lengths %d and %d differ", len(dst), len(phi)))
	}
	ca, cb := l.coeffs()
	for i, p := range phi {
		dst[i] = l.eval(ca, cb, p)
	}
}

// Contrast returns the largest viscosity contrast η_max/η_min the law can
// produce: max(η_A, η_B)/min(η_A, η_B), and 1 for ConstantViscosity.
func (l ViscosityLaw) Contrast() float64 {
	if l.Rule == ConstantViscosity {
		return 1
	}
	return math.Max(l.PhaseA, l.PhaseB) / math.Min(l.PhaseA, l.PhaseB)
}

// ViscosityContrast returns max(eta)/min(eta) of a viscosity field, the
// quantity that sets the iteration count of VarSolver (which grows about
// as its square root). It returns NaN for an empty field or one holding
// a NaN, and +Inf if the minimum is not positive.
func ViscosityContrast(eta []float64) float64 {
	if len(eta) == 0 {
		return math.NaN()
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range eta {
		if math.IsNaN(v) {
			return math.NaN()
		}
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	if !(lo > 0) {
		return math.Inf(1)
	}
	return hi / lo
}
