package fields

import (
	"fmt"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// CompositionFlow solves the membrane flow when the membrane viscosity
// depends on the lipid composition φ, η_m = η_m(φ(x)). [ViscosityFlow]
// (flow.VarSolver with a flow.ViscosityLaw) is one. The model calls
// SetComposition with the real-space φ of the state being evaluated before
// every Solve, SetGuess before the first solve of each step and before the
// solve of Diagnostics and UpdateViews, and Dissipation after the solve of
// Diagnostics. None of the methods may retain its arguments, and none may
// allocate if the model's steps are to allocate nothing.
type CompositionFlow interface {
	// SetComposition sets the viscosity field from the composition phi
	// (real-space layout of package spectral: value at grid point (i, j)
	// in phi[j*Nx+i]). It returns an error for a composition the viscosity
	// cannot be computed from (a NaN), and panics on a wrong length.
	SetComposition(phi []float64) error
	// SetGuess sets the velocity coefficients the next Solve starts from;
	// nil slices make it start from zero. The solves that follow start
	// from the last converged velocity until the next SetGuess.
	SetGuess(ux, uy []complex128)
	// Solve sets (ux, uy) to the velocity coefficients driven by the force
	// density coefficients (fx, fy) for the current viscosity field, with
	// the contract of [FlowSolver] (box-normalised coefficients; ux may
	// alias fx and uy fy), and returns the work it did. If it fails (for
	// VarSolver, with a *flow.ConvergenceError) the velocity is not to be
	// used.
	Solve(ux, uy, fx, fy []complex128) (flow.PCGResult, error)
	// Dissipation returns ⟨2η_m(x) E:E⟩ + Σ_k (Γ₊+Γ₋)(k)|û_k|² + ξ⟨|u|²⟩
	// of the velocity coefficients (ux, uy) for the current viscosity
	// field, in η_m/τ₀², without modifying them.
	Dissipation(ux, uy []complex128) float64
}

// ViscosityFlow is the [CompositionFlow] of a viscosity law: η_m =
// law.At(φ) (φ clamped to [−1, 1]), solved by a [flow.VarSolver]
// (preconditioned conjugate gradients, warm-started from the last converged
// velocity unless the options say ColdStart). It owns its scratch; no
// method allocates. It is not safe for concurrent use, and it uses the plan
// it was made with, which must not be used concurrently with it.
type ViscosityFlow struct {
	s   *flow.VarSolver
	law flow.ViscosityLaw
	eta []float64 // η_m at the grid points, scratch of SetComposition
}

// NewViscosityFlow returns the composition-dependent flow of law for
// membrane m (its Viscosity is only the starting field; the subphases and
// friction are used) on the grid of plan, solved with the options opt
// (zero value: the flow package's defaults). It returns an error if m, law
// or opt is invalid.
func NewViscosityFlow(plan spectral.Plan, m flow.Membrane, law flow.ViscosityLaw, opt flow.PCGOptions) (*ViscosityFlow, error) {
	if err := law.Validate(); err != nil {
		return nil, fmt.Errorf("fields: viscosity law: %w", err)
	}
	s, err := flow.NewVarSolver(plan, m, opt)
	if err != nil {
		return nil, err
	}
	return &ViscosityFlow{s: s, law: law, eta: plan.Grid().NewReal()}, nil
}

// Solver returns the underlying solver (for its contrast, viscosity range
// and options).
func (v *ViscosityFlow) Solver() *flow.VarSolver { return v.s }

// Law returns the viscosity law.
func (v *ViscosityFlow) Law() flow.ViscosityLaw { return v.law }

// SetComposition sets the viscosity field to law.At(phi) at every grid
// point. A NaN in phi gives an error naming the grid point, and leaves the
// previous field in place.
func (v *ViscosityFlow) SetComposition(phi []float64) error {
	v.law.Fill(v.eta, phi)
	return v.s.SetViscosity(v.eta)
}

// SetGuess sets the starting velocity of the next solve (projected onto
// the solver's solution space), or zero if ux and uy are nil.
func (v *ViscosityFlow) SetGuess(ux, uy []complex128) {
	if ux == nil && uy == nil {
		v.s.ResetGuess()
		return
	}
	v.s.SetGuess(ux, uy)
}

// Solve solves for the current viscosity field (flow.VarSolver.Solve).
func (v *ViscosityFlow) Solve(ux, uy, fx, fy []complex128) (flow.PCGResult, error) {
	return v.s.Solve(ux, uy, fx, fy)
}

// Dissipation returns the sum of flow.VarSolver.DissipationParts.
func (v *ViscosityFlow) Dissipation(ux, uy []complex128) float64 {
	a, b, c := v.s.DissipationParts(ux, uy)
	return a + b + c
}

// FlowError reports a flow solve of a composition-dependent viscosity that
// failed, in a step or in Diagnostics or UpdateViews. Err is the cause: a
// *flow.ConvergenceError (iterations, residual, tolerance and viscosity
// contrast; reach it with errors.As) or the error of the viscosity field.
// A step that fails leaves the model unchanged.
type FlowError struct {
	Step  int     // steps taken before the failed step (or before the diagnostics)
	Time  float64 // model time at the start of the step, τ₀
	Dt    float64 // the step attempted, τ₀; in stage 1, before the step is chosen, the previous step's size
	Stage int     // the ETDRK4 evaluation 1 … 4 whose solve failed; 0 outside a step
	Err   error
}

func (e *FlowError) Error() string {
	if e.Stage == 0 {
		return fmt.Sprintf("fields: flow solve for the diagnostics after step %d (t = %g τ₀): %v", e.Step, e.Time, e.Err)
	}
	return fmt.Sprintf("fields: step %d at t = %g τ₀ (dt = %g τ₀): flow solve of stage %d of 4: %v",
		e.Step+1, e.Time, e.Dt, e.Stage, e.Err)
}

// Unwrap returns the cause.
func (e *FlowError) Unwrap() error { return e.Err }
