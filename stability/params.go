package stability

import (
	"errors"
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
)

// MaxModes is the largest angular truncation the kinetic operator accepts
// and the ceiling of the automatic convergence loop.
const MaxModes = 512

// Active holds the parameters of the active inclusions and their membrane,
// in any consistent unit system (memix passes reduced units; see the
// package documentation for the dimensions).
type Active struct {
	Membrane flow.Membrane // viscosity, friction and subphases: D(k)

	// Stress is σ₀c₀, the active stress amplitude: dipole strength times
	// number density [force/length]. Signed: extensile (pusher) < 0,
	// contractile (puller) > 0.
	Stress float64
	// Alignment is the flow-alignment parameter β of Jeffery's equation,
	// in [−1, 1] (1 for thin rods).
	Alignment float64
	// RotDiff is the rotational diffusivity D_r > 0 [1/time].
	RotDiff float64
	// TransDiff is the translational diffusivity D_t ≥ 0 [length²/time].
	TransDiff float64
	// Speed is the self-propulsion speed V₀ ≥ 0 [length/time]; 0 for motors
	// that only exert dipoles.
	Speed float64
	// Modes is the angular truncation M (modes |n| ≤ M) of the kinetic
	// operator: 0 selects it by convergence (see Rates), otherwise
	// 4 ≤ Modes ≤ MaxModes.
	Modes int
}

// Validate reports every invalid parameter at once, each with its value,
// unit and valid range.
func (p Active) Validate() error {
	var errs []error
	if err := p.Membrane.Validate(); err != nil {
		errs = append(errs, err)
	}
	finite := func(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
	if !finite(p.Stress) {
		errs = append(errs, fmt.Errorf("active stress σ₀c₀ = %g force/length: must be finite", p.Stress))
	}
	if !(p.Alignment >= -1 && p.Alignment <= 1) {
		errs = append(errs, fmt.Errorf("alignment β = %g (dimensionless): must be in [−1, 1]", p.Alignment))
	}
	if !(p.RotDiff > 0) || !finite(p.RotDiff) {
		errs = append(errs, fmt.Errorf("rotational diffusivity D_r = %g 1/time: must be finite and > 0", p.RotDiff))
	}
	if !(p.TransDiff >= 0) || !finite(p.TransDiff) {
		errs = append(errs, fmt.Errorf("translational diffusivity D_t = %g length²/time: must be finite and ≥ 0", p.TransDiff))
	}
	if !(p.Speed >= 0) || !finite(p.Speed) {
		errs = append(errs, fmt.Errorf("self-propulsion speed V₀ = %g length/time: must be finite and ≥ 0", p.Speed))
	}
	if p.Modes != 0 && (p.Modes < 4 || p.Modes > MaxModes) {
		errs = append(errs, fmt.Errorf("angular modes M = %d: must be 0 (automatic) or in [4, %d]", p.Modes, MaxModes))
	}
	return errors.Join(errs...)
}

// CahnHilliard holds the parameters of the reduced Cahn–Hilliard equation
// ∂tφ = ∇·(M∇μ), μ = φ³ − φ − ε²∇²φ (MODEL.md §3): phases φ = ±1, μ
// dimensionless.
type CahnHilliard struct {
	Mobility float64 // M > 0 [length²/time]
	Width    float64 // interface parameter ε > 0 [length]
	Mean     float64 // uniform composition φ₀ about which to linearise
}

// Validate reports every invalid parameter at once.
func (c CahnHilliard) Validate() error {
	var errs []error
	if !(c.Mobility > 0) || math.IsInf(c.Mobility, 0) {
		errs = append(errs, fmt.Errorf("mobility M = %g length²/time: must be finite and > 0", c.Mobility))
	}
	if !(c.Width > 0) || math.IsInf(c.Width, 0) {
		errs = append(errs, fmt.Errorf("interface width ε = %g length: must be finite and > 0", c.Width))
	}
	if math.IsNaN(c.Mean) || math.IsInf(c.Mean, 0) {
		errs = append(errs, fmt.Errorf("mean composition φ₀ = %g (dimensionless): must be finite", c.Mean))
	}
	return errors.Join(errs...)
}

// Rate returns the linear growth rate of a composition mode of wavenumber
// k about the uniform state φ₀: s(k) = −Mk²(3φ₀² − 1 + ε²k²) [Cahn &
// Hilliard, J. Chem. Phys. 28, 258 (1958); MODEL.md §3]. It is positive
// for 0 < k < sqrt(1 − 3φ₀²)/ε inside the spinodal |φ₀| < 1/√3.
func (c CahnHilliard) Rate(k float64) float64 {
	return -c.Mobility * k * k * (3*c.Mean*c.Mean - 1 + c.Width*c.Width*k*k)
}
