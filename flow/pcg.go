package flow

import (
	"fmt"
	"math"
)

// Defaults of PCGOptions.
const (
	// DefaultPCGTolerance is the default relative residual at which VarSolver
	// stops: well below the spatial and temporal discretisation errors of a
	// typical run, and far above round-off.
	DefaultPCGTolerance = 1e-8
	// DefaultPCGMaxIterations is the default iteration cap. CG needs about
	// ½ sqrt(κ) ln(2/tol) iterations for condition number κ; at the default
	// tolerance the cap allows viscosity contrasts of several thousand.
	DefaultPCGMaxIterations = 1000
)

// ViscosityMean selects the uniform viscosity η̄ of VarSolver's
// preconditioner P/(η̄k² + Γ + ξ). Every choice lies between the smallest and
// the largest value of the viscosity field, which is all the condition
// number bound (≤ η_max/η_min) needs; without subphase and friction η̄ only
// scales the preconditioner and cannot change the iterates at all. With
// subphase or friction it sets where the viscous modes sit relative to the
// traction-dominated ones; measured on domain-like fields at contrast 100
// (BenchmarkVarSolverMean), the geometric, arithmetic and extremes means
// need the same number of iterations and the harmonic mean 1–3 % more.
type ViscosityMean int

const (
	// GeometricMean: η̄ = exp⟨ln η_m⟩, the box average of ln η_m. The
	// default: it ties for the fewest iterations, is symmetric under
	// exchange of the phases, and for the log-linear rule (without clamping)
	// it is the viscosity of the mean composition, η_m(⟨φ⟩), which stays
	// fixed while a conserved composition evolves.
	GeometricMean ViscosityMean = iota
	// ArithmeticMean: η̄ = ⟨η_m⟩.
	ArithmeticMean
	// HarmonicMean: η̄ = 1/⟨1/η_m⟩.
	HarmonicMean
	// ExtremesMean: η̄ = sqrt(min η_m · max η_m), which centres the viscous
	// part of the preconditioned spectrum on 1 in log scale.
	ExtremesMean
)

var viscMeanNames = [...]string{
	GeometricMean:  "geometric",
	ArithmeticMean: "arithmetic",
	HarmonicMean:   "harmonic",
	ExtremesMean:   "extremes",
}

// String names the mean.
func (m ViscosityMean) String() string {
	if m < 0 || int(m) >= len(viscMeanNames) {
		return fmt.Sprintf("ViscosityMean(%d)", int(m))
	}
	return viscMeanNames[m]
}

// PCGOptions configures VarSolver. The zero value selects every default.
type PCGOptions struct {
	// Tolerance is the relative residual ‖Pf − Au‖/‖Pf‖ (box L² norms of
	// the force density) at which a solve stops; 0 selects
	// DefaultPCGTolerance. Valid: 0 ≤ Tolerance < 1.
	Tolerance float64
	// MaxIterations caps the CG iterations of one solve; 0 selects
	// DefaultPCGMaxIterations. Valid: ≥ 0.
	MaxIterations int
	// Mean is the preconditioner's uniform viscosity η̄.
	Mean ViscosityMean
	// ColdStart makes every solve start from u = 0. By default a solve
	// starts from the velocity of the last converged solve (or the one given
	// to SetGuess), which in a time stepper is close to the answer.
	ColdStart bool
}

// Validate returns an error naming the first option out of its valid
// range, as NewVarSolver would.
func (o PCGOptions) Validate() error {
	_, err := o.withDefaults()
	return err
}

// withDefaults validates o and fills in the defaults.
func (o PCGOptions) withDefaults() (PCGOptions, error) {
	if !(o.Tolerance >= 0 && o.Tolerance < 1) {
		return o, fmt.Errorf("flow: PCG tolerance = %g (relative residual, dimensionless): must be in [0, 1); 0 selects %g", o.Tolerance, float64(DefaultPCGTolerance))
	}
	if o.MaxIterations < 0 {
		return o, fmt.Errorf("flow: PCG iteration cap = %d: must be ≥ 0; 0 selects %d", o.MaxIterations, DefaultPCGMaxIterations)
	}
	if o.Mean < GeometricMean || o.Mean > ExtremesMean {
		return o, fmt.Errorf("flow: preconditioner viscosity mean = %d: valid are geometric, arithmetic, harmonic, extremes", int(o.Mean))
	}
	if o.Tolerance == 0 {
		o.Tolerance = DefaultPCGTolerance
	}
	if o.MaxIterations == 0 {
		o.MaxIterations = DefaultPCGMaxIterations
	}
	return o, nil
}

// PCGResult describes one VarSolver solve.
type PCGResult struct {
	// Iterations is the number of CG iterations (operator applications
	// beyond the residual evaluations): 1 for uniform viscosity, 0 when the
	// starting guess already met the tolerance.
	Iterations int
	// Residual is the final relative residual ‖Pf − Au‖/‖Pf‖, recomputed
	// from the returned velocity (not the recursively updated residual of
	// CG), and 0 when Pf = 0.
	Residual float64
}

// ConvergenceError reports a VarSolver solve that did not reach its
// tolerance within the iteration cap, or whose residual became NaN or
// infinite (a non-finite force). The velocity returned alongside it is the
// last iterate.
type ConvergenceError struct {
	Iterations int     // iterations done
	Residual   float64 // relative residual reached (NaN or Inf if non-finite)
	Tolerance  float64 // relative residual asked for
	Contrast   float64 // viscosity contrast η_max/η_min of the field solved with
}

func (e *ConvergenceError) Error() string {
	if math.IsNaN(e.Residual) || math.IsInf(e.Residual, 0) {
		return fmt.Sprintf("flow: variable-viscosity solve failed: residual %g after %d iterations (a force or velocity is not finite; viscosity contrast %.3g)",
			e.Residual, e.Iterations, e.Contrast)
	}
	return fmt.Sprintf("flow: variable-viscosity solve did not converge: relative residual %.3g after %d iterations, tolerance %.3g (viscosity contrast %.3g; raise the iteration cap, loosen the tolerance or reduce the contrast)",
		e.Residual, e.Iterations, e.Tolerance, e.Contrast)
}
