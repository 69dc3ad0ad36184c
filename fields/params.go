package fields

import (
	"errors"
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// InclusionModel selects how the orientation distribution Ψ(x, θ) of the
// active inclusions is represented.
type InclusionModel int

const (
	// Moments evolves c, Q₁₁ and Q₁₂ with a closure for m₄ (MODEL.md §2.2).
	Moments InclusionModel = iota
	// Kinetic evolves the angular Fourier modes m₀ … m_M of Ψ (MODEL.md §2.1).
	Kinetic
	// NoInclusions evolves no inclusion field (lipid-only runs).
	NoInclusions
)

var inclusionNames = [...]string{Moments: "moments", Kinetic: "kinetic", NoInclusions: "none"}

// String returns the configuration name of the model.
func (m InclusionModel) String() string {
	if m < 0 || int(m) >= len(inclusionNames) {
		return fmt.Sprintf("InclusionModel(%d)", int(m))
	}
	return inclusionNames[m]
}

// Closure is the closure of the moment model for the fourth angular moment
// m₄ = ∫Ψ e^{4iθ} dθ.
type Closure int

const (
	// Truncation sets m₄ = 0: exact when Ψ has no harmonics beyond |n| = 2.
	Truncation Closure = iota
	// Quadratic sets m₄ = 4q²/c (q = Q₁₁ + iQ₁₂): exact for perfect
	// alignment. Where c ≤ 0 (an unphysical state) m₄ is set to 0.
	Quadratic
)

var closureNames = [...]string{Truncation: "truncation", Quadratic: "quadratic"}

// String returns the configuration name of the closure.
func (c Closure) String() string {
	if c < 0 || int(c) >= len(closureNames) {
		return fmt.Sprintf("Closure(%d)", int(c))
	}
	return closureNames[c]
}

// LipidModel selects the equation of the lipid composition φ.
type LipidModel int

const (
	// NoLipid evolves no composition field.
	NoLipid LipidModel = iota
	// Passive: ∂tφ + u·∇φ = D_φ ∇²φ.
	Passive
	// CahnHilliard: ∂tφ + u·∇φ = M ∇²μ, μ = φ³ − φ − ε²∇²φ.
	CahnHilliard
)

var lipidNames = [...]string{NoLipid: "none", Passive: "passive", CahnHilliard: "cahn-hilliard"}

// String returns the configuration name of the lipid model.
func (l LipidModel) String() string {
	if l < 0 || int(l) >= len(lipidNames) {
		return fmt.Sprintf("LipidModel(%d)", int(l))
	}
	return lipidNames[l]
}

// Inclusions holds the reduced parameters of the active inclusions. Units
// are those of the package documentation (ℓ₀, τ₀, η_m, c₀).
type Inclusions struct {
	Model InclusionModel
	// Harmonics is the angular truncation M of the kinetic model: modes
	// 0 ≤ n ≤ M are evolved, m_n = 0 beyond. 2 ≤ M ≤ 128. Ignored otherwise.
	Harmonics int
	// Closure of the moment model. Ignored otherwise.
	Closure Closure
	// Activity is the reduced active stress amplitude σ_a = σ₀c₀τ₀/η_m,
	// signed as σ₀: extensile (pusher) < 0, contractile (puller) > 0.
	Activity float64
	// Alignment is the flow-alignment parameter β ∈ [−1, 1] of
	// θ̇ = ω/2 + β p⊥·E·p.
	Alignment float64
	// Speed is the self-propulsion speed V₀ ≥ 0 in ℓ₀/τ₀ (kinetic model
	// only; the moment model requires 0).
	Speed float64
	// TransDiffusion is D_t ≥ 0 in ℓ₀²/τ₀; RotDiffusion is D_r ≥ 0 in 1/τ₀.
	TransDiffusion, RotDiffusion float64
	// Partition χ (dimensionless) drives inclusions up the gradient of φ:
	// the flux of every angular mode is J_n = −D_t(∇m_n − χ m_n ∇φ), so in
	// equilibrium c ∝ e^{χφ}; χ > 0 favours the φ = +1 phase. It needs a
	// lipid model. The coupling is one-way: φ does not feel the inclusions.
	Partition float64
}

// Lipid holds the reduced parameters of the lipid composition.
type Lipid struct {
	Model LipidModel
	// Diffusivity D_φ ≥ 0 in ℓ₀²/τ₀ (Passive).
	Diffusivity float64
	// Mobility M > 0 in ℓ₀²/τ₀ (CahnHilliard): ∂tφ = M∇²μ with μ
	// dimensionless; physically M = M_phys·A_phys·τ₀/ℓ₀².
	Mobility float64
	// Interface ε > 0 in ℓ₀ (CahnHilliard): the equilibrium profile is
	// tanh(x/(√2ε)).
	Interface float64
	// Energy A ≥ 0 in η_m/τ₀ (energy per area; CahnHilliard): the free
	// energy is F = A ∫[(φ²−1)²/4 + (ε²/2)|∇φ|²] d²x, so the line tension
	// of a flat interface is (2√2/3)εA in η_m ℓ₀/τ₀.
	Energy float64
	// Backreaction adds the Korteweg force f_φ = −Aφ∇μ of the line tension
	// to the membrane force balance (CahnHilliard only).
	Backreaction bool
}

// GridSpec is the periodic grid: Nx × Ny points (even, ≥ 4) on the box
// Lx × Ly (in ℓ₀).
type GridSpec struct {
	Nx, Ny int
	Lx, Ly float64
}

// New returns the spectral grid of the spec.
func (s GridSpec) New() (*spectral.Grid, error) { return spectral.NewGrid(s.Nx, s.Ny, s.Lx, s.Ly) }

// Stepping configures the ETDRK4 time stepper and its step-size control.
//
// The step is chosen from a ladder dt_j = DtMax·2^(−j/LevelsPerOctave),
// j = 0, 1, …, as the largest level within every limit: advection
// (max|v| + V₀)·dt/h ≤ Courant with h the smaller grid spacing and v the
// velocity that carries the fields, rotation n_max·max(|ω|/2 + |β||e|)·dt ≤
// RotationLimit with n_max the highest angular harmonic (2 for moments),
// and the linear active growth rate s_max·dt ≤ ActiveLimit with
// s_max = |βσ_a|/4·max_k k²/D(k). The level rises by one at most per step
// and only when the larger step fits with a margin of 2^(1/(2·LevelsPerOctave)),
// so it does not flicker. A limit below DtMin stops the run with a
// [StepError]. Coefficients of the last CacheSize levels are kept.
type Stepping struct {
	DtMax, DtMin    float64 // ceiling and floor of the step, τ₀; 0 < DtMin ≤ DtMax
	Courant         float64 // (0, 2]
	RotationLimit   float64 // (0, 2]
	ActiveLimit     float64 // (0, 2]
	LevelsPerOctave int     // [1, 64]
	CacheSize       int     // [1, 64]
	// Fixed keeps dt = DtMax on every step and ignores the limits (they are
	// still reported). For verification; stability is then the caller's
	// responsibility.
	Fixed bool
}

// DefaultStepping returns the stepping options memix uses unless told
// otherwise, with ceiling dtMax and floor dtMax·2⁻²⁰. The limits are
// well inside the stability region of the explicit part of ETDRK4 (its
// stability interval on the imaginary axis reaches about 2.8 [practice]).
func DefaultStepping(dtMax float64) Stepping {
	return Stepping{
		DtMax: dtMax, DtMin: dtMax * 0x1p-20,
		Courant: 0.5, RotationLimit: 0.5, ActiveLimit: 0.5,
		LevelsPerOctave: 4, CacheSize: 4,
	}
}

// Params holds every parameter of the model in reduced units (see the
// package documentation).
type Params struct {
	// Membrane is the reduced membrane: Viscosity in units of η_m (1 unless
	// the caller chooses another unit), subphase viscosities η·ℓ₀/η_m,
	// depths H/ℓ₀, friction ξℓ₀²/η_m.
	Membrane flow.Membrane
	// Viscosity makes the membrane viscosity depend on the lipid
	// composition: η_m(x) = Viscosity.At(φ(x)), with PhaseA the reduced
	// viscosity of the phase φ = +1 and PhaseB that of φ = −1 (units of
	// η_m, like Membrane.Viscosity; φ is clamped to [−1, 1]). The zero
	// value (rule constant, both phases 0) keeps the uniform
	// Membrane.Viscosity and the direct Fourier solve. A rule other than
	// constant needs a lipid model; Membrane then supplies the subphases
	// and friction, and its Viscosity is not used by the flow.
	Viscosity flow.ViscosityLaw
	// Solver configures the iterative flow solve of a composition-dependent
	// viscosity (relative-residual tolerance, iteration cap, preconditioner
	// viscosity, warm or cold starts); the zero value selects the flow
	// package's defaults. Ignored for a uniform viscosity.
	Solver     flow.PCGOptions
	Inclusions Inclusions
	Lipid      Lipid
	Grid       GridSpec
	Stepping   Stepping
}

// VariableViscosity reports whether the membrane viscosity depends on the
// composition (Viscosity.Rule is not constant).
func (p Params) VariableViscosity() bool { return p.Viscosity.Rule != flow.ConstantViscosity }

// minViscosity returns the smallest membrane viscosity the parameters
// allow: Membrane.Viscosity, or the smaller phase viscosity of a
// composition-dependent law (which clamps φ, so η_m stays between them).
func (p Params) minViscosity() float64 {
	if p.VariableViscosity() {
		return math.Min(p.Viscosity.PhaseA, p.Viscosity.PhaseB)
	}
	return p.Membrane.Viscosity
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// Validate returns every invalid parameter at once, each error naming the
// field, its value and the valid range.
func (p Params) Validate() error {
	var errs []error
	bad := func(format string, a ...any) { errs = append(errs, fmt.Errorf("fields: "+format, a...)) }
	if err := p.Membrane.Validate(); err != nil {
		bad("Membrane: %w", err)
	}
	if v := p.Viscosity; !p.VariableViscosity() {
		if v.PhaseA != 0 || v.PhaseB != 0 {
			bad("Viscosity = {rule %v, PhaseA %g, PhaseB %g} (η_m units): the phase viscosities must be 0 with the constant rule, which uses Membrane.Viscosity; choose the log-linear or linear rule", v.Rule, v.PhaseA, v.PhaseB)
		}
	} else {
		if err := v.Validate(); err != nil {
			bad("Viscosity (phase viscosities in η_m units): %w", err)
		}
		if p.Lipid.Model == NoLipid {
			bad("Viscosity.Rule = %v: a composition-dependent viscosity needs a lipid model (Lipid.Model is %v); use the constant rule or choose a lipid model", v.Rule, p.Lipid.Model)
		}
		if err := p.Solver.Validate(); err != nil {
			bad("Solver: %w", err)
		}
	}
	in := p.Inclusions
	switch in.Model {
	case Moments:
		if in.Closure != Truncation && in.Closure != Quadratic {
			bad("Inclusions.Closure = %d: valid are %v and %v", int(in.Closure), Truncation, Quadratic)
		}
		if in.Speed != 0 {
			bad("Inclusions.Speed = %g ℓ₀/τ₀: must be 0 for the moment model (truncated moments misrepresent self-propulsion); use the kinetic model", in.Speed)
		}
	case Kinetic:
		if in.Harmonics < 2 || in.Harmonics > 128 {
			bad("Inclusions.Harmonics = %d: must be in [2, 128] for the kinetic model", in.Harmonics)
		}
	case NoInclusions:
	default:
		bad("Inclusions.Model = %d: valid are %v, %v and %v", int(in.Model), Moments, Kinetic, NoInclusions)
	}
	if in.Model != NoInclusions {
		if !finite(in.Activity) {
			bad("Inclusions.Activity = %g (reduced σ₀c₀τ₀/η_m): must be finite", in.Activity)
		}
		if !(in.Alignment >= -1 && in.Alignment <= 1) {
			bad("Inclusions.Alignment = %g: must be in [−1, 1]", in.Alignment)
		}
		if !(in.Speed >= 0) || !finite(in.Speed) {
			bad("Inclusions.Speed = %g ℓ₀/τ₀: must be finite and ≥ 0", in.Speed)
		}
		if !(in.TransDiffusion >= 0) || !finite(in.TransDiffusion) {
			bad("Inclusions.TransDiffusion = %g ℓ₀²/τ₀: must be finite and ≥ 0", in.TransDiffusion)
		}
		if !(in.RotDiffusion >= 0) || !finite(in.RotDiffusion) {
			bad("Inclusions.RotDiffusion = %g 1/τ₀: must be finite and ≥ 0", in.RotDiffusion)
		}
		if !finite(in.Partition) {
			bad("Inclusions.Partition = %g: must be finite", in.Partition)
		}
		if in.Partition != 0 && p.Lipid.Model == NoLipid {
			bad("Inclusions.Partition = %g: needs a lipid model (Lipid.Model is none); set it to 0 or choose a lipid model", in.Partition)
		}
	}
	l := p.Lipid
	switch l.Model {
	case NoLipid:
	case Passive:
		if !(l.Diffusivity >= 0) || !finite(l.Diffusivity) {
			bad("Lipid.Diffusivity = %g ℓ₀²/τ₀: must be finite and ≥ 0", l.Diffusivity)
		}
	case CahnHilliard:
		if !(l.Mobility > 0) || !finite(l.Mobility) {
			bad("Lipid.Mobility = %g ℓ₀²/τ₀: must be finite and > 0", l.Mobility)
		}
		if !(l.Interface > 0) || !finite(l.Interface) {
			bad("Lipid.Interface = %g ℓ₀: must be finite and > 0", l.Interface)
		}
		if !(l.Energy >= 0) || !finite(l.Energy) {
			bad("Lipid.Energy = %g η_m/τ₀: must be finite and ≥ 0", l.Energy)
		}
	default:
		bad("Lipid.Model = %d: valid are %v, %v and %v", int(l.Model), NoLipid, Passive, CahnHilliard)
	}
	if in.Model == NoInclusions && l.Model == NoLipid {
		bad("Inclusions.Model and Lipid.Model are both none: nothing to evolve")
	}
	if l.Backreaction && l.Model != CahnHilliard {
		bad("Lipid.Backreaction = true: needs the %v lipid model (Lipid.Model is %v)", CahnHilliard, l.Model)
	}
	if _, err := p.Grid.New(); err != nil {
		bad("Grid: %w", err)
	}
	s := p.Stepping
	if !(s.DtMax > 0) || !finite(s.DtMax) {
		bad("Stepping.DtMax = %g τ₀: must be finite and > 0", s.DtMax)
	}
	if !(s.DtMin > 0 && s.DtMin <= s.DtMax) {
		bad("Stepping.DtMin = %g τ₀: must be in (0, DtMax = %g]", s.DtMin, s.DtMax)
	}
	for _, c := range []struct {
		name string
		v    float64
	}{{"Courant", s.Courant}, {"RotationLimit", s.RotationLimit}, {"ActiveLimit", s.ActiveLimit}} {
		if !(c.v > 0 && c.v <= 2) {
			bad("Stepping.%s = %g: must be in (0, 2]", c.name, c.v)
		}
	}
	if s.LevelsPerOctave < 1 || s.LevelsPerOctave > 64 {
		bad("Stepping.LevelsPerOctave = %d: must be in [1, 64]", s.LevelsPerOctave)
	}
	if s.CacheSize < 1 || s.CacheSize > 64 {
		bad("Stepping.CacheSize = %d: must be in [1, 64]", s.CacheSize)
	}
	return errors.Join(errs...)
}
