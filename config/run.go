package config

import (
	"errors"
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/stability"
)

// The sections below configure the time-dependent run (memix run): the
// active inclusions, the lipid composition, time stepping, outputs and
// initial conditions. Their values reach the solver through ReduceRun.

// InclusionsSection is the key group "inclusions".
type InclusionsSection struct {
	Model     string                `key:"model" default:"moments" enum:"none|moments|kinetic" doc:"How the orientation distribution Ψ(x, θ) of the inclusions is represented: moments (density c and order tensor Q, closed at the fourth moment; self-propulsion not allowed), kinetic (angular Fourier modes up to inclusions.harmonics), or none (no inclusions: a lipid-only run)."`
	Harmonics int                   `key:"harmonics" default:"8" range:"[2,128]" doc:"Highest angular harmonic M of the kinetic model; modes beyond it are dropped. Increase it until results stop changing (memix stability reports the truncation at which growth rates converge)."`
	Closure   string                `key:"closure" default:"quadratic" enum:"quadratic|truncation" doc:"Closure of the moment model for the fourth angular moment m₄: quadratic (m₄ = 4q²/c, exact for perfect alignment) or truncation (m₄ = 0, exact without harmonics beyond the second)."`
	Dipole    Energy                `key:"dipole" default:"20 kT" range:"[0,inf)" doc:"Magnitude |σ₀| of the force dipole of one inclusion (force times arm length, e.g. 4 pN × 10 nm = 40 pN*nm ≈ 10 kT). Motor proteins are of order 1 to 100 kT (order of magnitude, common practice). The sign comes from inclusions.kind."`
	Kind      string                `key:"kind" default:"extensile" enum:"extensile|contractile" doc:"Sign of the dipole: extensile (pusher, σ₀ < 0) pushes fluid out along its axis, contractile (puller, σ₀ > 0) pulls it in (sign convention of Saintillan & Shelley, Phys. Fluids 20, 123304 (2008))."`
	Density   AreaDensity           `key:"density" default:"100 um^-2" range:"(0,inf)" doc:"Mean number density c₀ of inclusions per membrane area. The active stress amplitude is σ₀·c₀."`
	Alignment float64               `key:"alignment" default:"1" range:"[-1,1]" doc:"Flow-alignment parameter β of Jeffery's equation ṗ = W·p + β(I − pp)·E·p: 1 for thin rods, 0 for disks, negative for objects that align across the stretching direction. Phenomenological for membrane inclusions."`
	Speed     Velocity              `key:"speed" default:"0 um/s" range:"[0,inf)" doc:"Self-propulsion speed V₀ along the orientation (kinetic model only; 0 for motors that only exert dipoles)."`
	Radius    Length                `key:"radius" default:"5 nm" range:"(0,inf)" doc:"Radius of an inclusion, used to compute the diffusivities when they are not given (membrane proteins: 1 to 5 nm, from memory)."`
	RotDiff   Optional[Rate]        `key:"rot_diffusion" range:"[0,inf)" fallback:"k_B·T over the rotational drag of a disk of inclusions.radius in this membrane (as memix mobility computes it)" doc:"Rotational diffusivity D_r of one inclusion. Give it for elongated or clustered inclusions, which turn far more slowly than a disk of their radius."`
	TransDiff Optional[Diffusivity] `key:"trans_diffusion" range:"[0,inf)" fallback:"k_B·T over the translational drag of a disk of inclusions.radius in this membrane (as memix mobility computes it)" doc:"Translational diffusivity D_t of one inclusion."`
	Partition float64               `key:"partition" default:"0" range:"[-100,100]" doc:"Preferential partitioning χ of the inclusions into one lipid phase (needs lipids.model): the flux of inclusions is −D_t(∇c − χ c∇φ), so at equilibrium c ∝ exp(χφ); χ > 0 favours the φ = +1 phase."`
}

// LipidsSection is the key group "lipids".
type LipidsSection struct {
	Model        string      `key:"model" default:"passive" enum:"none|passive|phase" doc:"Equation of the lipid composition φ ∈ [−1, 1]: passive (advection and diffusion), phase (Cahn–Hilliard phase separation with phases φ = ±1: ordered and disordered domains), or none."`
	Diffusion    Diffusivity `key:"diffusion" default:"1 um^2/s" range:"(0,inf)" doc:"For passive: the lipid diffusivity D_φ (fluid bilayers: about 1 to 10 um^2/s, from memory). For phase: the mobility M of ∂tφ = M∇²μ with μ = φ³ − φ − ε²∇²φ, which is also the diffusivity far from the interfaces divided by 2."`
	Interface    Length      `key:"interface" default:"120 nm" range:"(0,inf)" doc:"Interface parameter ε of the phase model: the equilibrium profile across a flat boundary is tanh(x/(√2 ε)), so the boundary is about 2√2 ε wide. Real boundaries between lipid phases are nanometres wide, but the phase field needs at least 2 grid points across ε√2 (memix run checks this), so ε is in practice a numerical width chosen from the grid; the line tension carries the physics. The default suits the default grid."`
	LineTension  Force       `key:"line_tension" default:"1 pN" range:"(0,inf)" doc:"Line tension γ of the boundary between the phases (energy per length; lipid domains: about 0.1 to 10 pN, from memory). It sets the free-energy density A = 3γ/(2√2 ε) of the phase model; used by lipids.backreaction."`
	Backreaction bool        `key:"backreaction" default:"false" doc:"Let the line tension push on the membrane (the Korteweg force −Aφ∇μ), so that domains also coarsen by the flow they drive (phase model only)."`
}

// TimeSection is the key group "time".
type TimeSection struct {
	End      Optional[Time] `key:"end" range:"(0,inf)" fallback:"100 τ₀ (units.time)" doc:"Simulated time at which the run stops."`
	MaxSteps int            `key:"max_steps" default:"0" range:"[0,1e12]" doc:"Stop after this many steps even before time.end; 0 for no limit."`
	DtMax    Optional[Time] `key:"dt_max" range:"(0,inf)" fallback:"time.end / 200" doc:"Largest time step. The step is chosen below it from the flow's Courant number, rotation rate and the active growth rate, on a ladder of 4 levels per factor of 2."`
	DtMin    Optional[Time] `key:"dt_min" range:"(0,inf)" fallback:"time.dt_max / 2^20" doc:"Smallest time step: a run whose step must fall below it stops with an error naming the step (a sign of a blow-up or of too coarse a grid)."`
	Courant  float64        `key:"courant" default:"0.5" range:"(0,2]" doc:"Largest advective Courant number max|u|·dt/h (h the grid spacing); also the limit on the rotation and active growth per step."`
	Fixed    bool           `key:"fixed" default:"false" doc:"Keep dt = time.dt_max on every step and ignore the limits (for convergence studies; stability is then up to you)."`
}

// OutputSection is the key group "output".
type OutputSection struct {
	Snapshots      int              `key:"snapshots" default:"20" range:"[0,100000]" doc:"Number of HDF5 snapshots over the run, evenly spaced in time (plus the initial state); 0 writes none."`
	Rows           int              `key:"rows" default:"400" range:"[1,10000000]" doc:"Number of rows of series.csv over the run, evenly spaced in time (plus the initial state)."`
	CheckpointWall Time             `key:"checkpoint_wall" default:"10 min" range:"(0,inf)" doc:"Wall-clock time between checkpoints (a checkpoint is also written at the end and on SIGINT or SIGTERM). A checkpoint holds the exact state: --resume continues bit for bit."`
	Figures        bool             `key:"figures" default:"true" doc:"Render PNG figures into figures/ at the end of the run."`
	MixLength      Optional[Length] `key:"mix_length" range:"(0,inf)" fallback:"grid.lx" doc:"Length L of the multiscale mix-norm weight (1 + k²L²)^(-1/2)."`
	Threshold      float64          `key:"threshold" default:"0.1" range:"(0,1)" doc:"Mixing threshold: summary.json reports when each mix-norm first falls to this fraction of its initial value."`
}

// InitialSection is the key group "initial".
type InitialSection struct {
	Inclusions   string           `key:"inclusions" default:"isotropic" enum:"isotropic|aligned|mode|file" doc:"Initial inclusions: isotropic (uniform density, no order, plus a random perturbation of initial.amplitude), aligned (uniform order initial.order along initial.angle), mode (isotropic plus one Fourier mode, see initial.mode_*), file (the inclusion fields of a memix HDF5 file: from a checkpoint every evolved field exactly; from a snapshot c and whichever of the run's fields it holds, Q11 and Q12 standing in for a2 and b2 of the kinetic model, the others zero)."`
	Lipids       string           `key:"lipids" default:"stripes" enum:"uniform|stripes|halves|disks|random|mode|file" doc:"Initial composition: uniform (initial.mean), stripes (initial.stripes pairs of bands across initial.direction), halves (two bands), disks (initial.disks round domains of φ = +1 in φ = −1), random (initial.mean plus noise of initial.amplitude), mode (initial.mean plus one Fourier mode), file (the field phi of a memix HDF5 file)."`
	Seed         int              `key:"seed" default:"1" range:"[0,9007199254740992]" doc:"Seed of the random numbers of the initial state. The same seed gives the same run."`
	Amplitude    float64          `key:"amplitude" default:"0.01" range:"[0,1]" doc:"Relative amplitude of the random perturbation of the isotropic inclusion state (and of the random composition)."`
	Angle        float64          `key:"angle" default:"0" range:"[-360,360]" doc:"Direction of alignment, in degrees from the x axis (initial.inclusions = aligned)."`
	Order        float64          `key:"order" default:"0.5" range:"[0,1]" doc:"Scalar order parameter of the aligned state, 0 (isotropic) to 1 (perfect)."`
	Mean         float64          `key:"mean" default:"0" range:"[-1,1]" doc:"Mean composition φ₀ for uniform, random and mode; phase separation needs |φ₀| < 1/√3 (the spinodal)."`
	Stripes      int              `key:"stripes" default:"4" range:"[1,10000]" doc:"Number of stripe pairs (initial.lipids = stripes)."`
	Direction    string           `key:"direction" default:"x" enum:"x|y" doc:"Axis along which stripes alternate: x gives bands parallel to y."`
	Disks        int              `key:"disks" default:"6" range:"[1,100000]" doc:"Number of round domains (initial.lipids = disks), placed at random without overlap."`
	DiskRadius   Optional[Length] `key:"disk_radius" range:"(0,inf)" fallback:"grid.lx / 10" doc:"Radius of the round domains."`
	ModeField    string           `key:"mode_field" default:"phi" doc:"Field of the single Fourier mode (initial = mode): phi, c, q11, q12 (moment model) or c, a1, b1, a2, b2, … (kinetic model)."`
	ModeX        int              `key:"mode_x" default:"1" range:"[-65536,65536]" doc:"Mode number along x of the single Fourier mode (wavevector 2π·mode_x/lx)."`
	ModeY        int              `key:"mode_y" default:"0" range:"[-65536,65536]" doc:"Mode number along y of the single Fourier mode."`
	ModeAmp      float64          `key:"mode_amplitude" default:"0.01" range:"[0,10]" doc:"Amplitude of the single Fourier mode."`
	File         Optional[string] `key:"file" fallback:"none" doc:"HDF5 file written by memix (a snapshot, the index snapshots.h5 or a checkpoint) to take the composition (initial.lipids = file) or the inclusion fields (initial.inclusions = file) from; a relative path is relative to the working directory of memix run. Its grid must match."`
	FileSnapshot int              `key:"file_snapshot" default:"-1" range:"[-1000000,1000000]" doc:"Snapshot of initial.file to use: 0 the first, −1 the last."`
}

// Sign returns the signed dipole strength σ₀ in J (extensile < 0).
func (s InclusionsSection) Sign() float64 {
	if s.Kind == "contractile" {
		return 1
	}
	return -1
}

// Active reports whether the run has active inclusions.
func (s InclusionsSection) Active() bool { return s.Model != "none" && s.Dipole > 0 }

func (s InclusionsSection) check(at string, root *Config, report func(*FieldError)) {
	if s.Model == "moments" && s.Speed > 0 {
		report(&FieldError{Key: at + ".speed", Value: root.valueText(theSchema().byKey[at+".speed"], float64(s.Speed)),
			Range: "0 with inclusions.model = moments",
			Err:   fmt.Errorf("%w: the moment model has no self-propulsion (truncated moments misjudge its growth rates); use inclusions.model = kinetic", ErrConflict)})
	}
	if s.Partition != 0 && root.Lipids.Model == "none" {
		report(&FieldError{Key: at + ".partition", Value: fmt.Sprint(s.Partition), Range: "0 without lipids",
			Err: fmt.Errorf("%w: partitioning into a lipid phase needs lipids.model passive or phase", ErrConflict)})
	}
}

func (s LipidsSection) check(at string, root *Config, report func(*FieldError)) {
	if s.Backreaction && s.Model != "phase" {
		report(&FieldError{Key: at + ".backreaction", Value: "true", Range: "false unless lipids.model = phase",
			Err: fmt.Errorf("%w: the line-tension force exists only in the phase model", ErrConflict)})
	}
	if s.Model == "phase" {
		lx, ly := root.Grid.Lengths()
		box := math.Min(float64(lx), float64(ly))
		if 2*math.Sqrt2*float64(s.Interface) >= box/2 {
			report(&FieldError{Key: at + ".interface", Value: root.valueText(theSchema().byKey[at+".interface"], float64(s.Interface)), Range: fmt.Sprintf("< %s (a quarter of the box over √2)", Length(box/(4*math.Sqrt2))),
				Err: fmt.Errorf("%w: an interface %s wide does not fit twice in the box %s", ErrConflict, Length(2*math.Sqrt2*float64(s.Interface)), Length(box))})
		}
	}
}

// check compares the steps with each other and with the end time, given
// or derived from their fallbacks (dt_max = end/200, end = 100 τ₀).
func (s TimeSection) check(at string, root *Config, report func(*FieldError)) {
	value := func(key string, x Time) string { return root.valueText(theSchema().byKey[key], float64(x)) }
	if dtMax := root.DtMax(); s.DtMin.Valid && s.DtMin.V > dtMax {
		from := "time.dt_max = " + dtMax.String()
		if !s.DtMax.Valid {
			from += " (time.end / 200)"
		}
		report(&FieldError{Key: at + ".dt_min", Value: value(at+".dt_min", s.DtMin.V), Range: "≤ " + from,
			Err: fmt.Errorf("%w: the smallest step exceeds the largest", ErrConflict)})
	}
	if end := root.EndTime(); s.DtMax.Valid && s.DtMax.V > end {
		from := "time.end = " + end.String()
		if !s.End.Valid {
			from += " (100 τ₀)"
		}
		report(&FieldError{Key: at + ".dt_max", Value: value(at+".dt_max", s.DtMax.V), Range: "≤ " + from,
			Err: fmt.Errorf("%w: the largest step exceeds the whole run", ErrConflict)})
	}
}

func (s InitialSection) check(at string, root *Config, report func(*FieldError)) {
	fromFile := s.Lipids == "file" || s.Inclusions == "file"
	if fromFile && !s.File.Valid {
		report(&FieldError{Key: at + ".file", Range: "a path to a memix HDF5 file",
			Err: fmt.Errorf("%w: initial.lipids = file or initial.inclusions = file needs initial.file", ErrMissing)})
	}
	if !fromFile && s.File.Valid {
		report(&FieldError{Key: at + ".file", Value: s.File.V, Range: "not set unless initial.lipids or initial.inclusions = file",
			Err: fmt.Errorf("%w: initial.file is only read when initial.lipids = file or initial.inclusions = file", ErrConflict)})
	}
	if root.Lipids.Model == "phase" && (s.Lipids == "uniform") {
		report(&FieldError{Key: at + ".lipids", Value: s.Lipids, Range: "not uniform with lipids.model = phase",
			Err: fmt.Errorf("%w: a uniform composition never phase-separates (no fluctuation seeds it); use random or mode", ErrConflict)})
	}
}

// RunProblems returns what stops memix run on a configuration that
// Validate accepts (other commands can use it): nothing to simulate
// (inclusions.model and lipids.model both none), or inclusion
// diffusivities that must be computed but cannot be (no subphase and no
// friction give a disk no finite drag). Each is a FieldError naming the key
// to change.
func (c Config) RunProblems() []*FieldError {
	var out []*FieldError
	if c.Inclusions.Model == "none" && c.Lipids.Model == "none" {
		out = append(out, &FieldError{Key: "inclusions.model", Value: "none", Range: "moments|kinetic unless lipids.model is passive or phase",
			Err: fmt.Errorf("%w: inclusions.model and lipids.model are both none: memix run has nothing to simulate", ErrConflict)})
	}
	if c.Inclusions.Model != "none" {
		if _, _, _, err := c.Diffusivities(); err != nil {
			var fe *FieldError
			if errors.As(err, &fe) {
				out = append(out, fe)
			} else {
				out = append(out, &FieldError{Key: "inclusions.radius", Err: err})
			}
		}
	}
	return out
}

// EndTime returns time.end, or 100 τ₀.
func (c Config) EndTime() Time { return c.Time.End.Or(100 * c.TimeUnit()) }

// DtMax returns time.dt_max, or time.end/200.
func (c Config) DtMax() Time { return c.Time.DtMax.Or(c.EndTime() / 200) }

// DtMin returns time.dt_min, or dt_max/2^20.
func (c Config) DtMin() Time { return c.Time.DtMin.Or(c.DtMax() * 0x1p-20) }

// ActiveStress returns the signed active stress amplitude σ₀c₀ in N/m
// (extensile < 0); 0 without active inclusions.
func (c Config) ActiveStress() Tension {
	if !c.Inclusions.Active() {
		return 0
	}
	return Tension(c.Inclusions.Sign() * float64(c.Inclusions.Dipole) * float64(c.Inclusions.Density))
}

// Diffusivities returns the inclusions' rotational and translational
// diffusivities in SI units: the values given, or k_B·T over the drag of a
// disk of inclusions.radius in this membrane (flow.InclusionMobility, the
// computation of memix mobility). how says where each value comes from.
// It fails when a diffusivity must be computed and the membrane gives no
// finite drag (no subphase and no friction: give the value instead).
func (c Config) Diffusivities() (dr Rate, dt Diffusivity, how [2]string, err error) {
	in := c.Inclusions
	how = [2]string{"given (inclusions.rot_diffusion)", "given (inclusions.trans_diffusion)"}
	if in.RotDiff.Valid && in.TransDiff.Valid {
		return in.RotDiff.V, in.TransDiff.V, how, nil
	}
	mob, merr := flow.InclusionMobility(c.FlowMembrane(), float64(in.Radius), float64(c.KT()))
	if !in.RotDiff.Valid {
		if mob.Rotation.Drag <= 0 || math.IsNaN(mob.Rotation.Diffusivity) {
			return 0, 0, how, &FieldError{Key: "inclusions.rot_diffusion", Unit: DimRate.Unit(), Range: "≥ 0",
				Err: fmt.Errorf("%w: cannot compute it from inclusions.radius = %s: %v; give it explicitly", ErrMissing, in.Radius, merr)}
		}
		dr = Rate(mob.Rotation.Diffusivity)
		how[0] = fmt.Sprintf("k_BT/λ_R of a disk of radius %s (%s)", in.Radius, mob.Rotation.Method)
	} else {
		dr = in.RotDiff.V
	}
	if !in.TransDiff.Valid {
		if merr != nil {
			return 0, 0, how, &FieldError{Key: "inclusions.trans_diffusion", Unit: DimDiffusivity.Unit(), Range: "≥ 0",
				Err: fmt.Errorf("%w: cannot compute it from inclusions.radius = %s: %v; give it explicitly", ErrMissing, in.Radius, merr)}
		}
		dt = Diffusivity(mob.Translation.Diffusivity)
		how[1] = fmt.Sprintf("k_BT/λ_T of a disk of radius %s (%s)", in.Radius, mob.Translation.Method)
	} else {
		dt = in.TransDiff.V
	}
	return dr, dt, how, nil
}

// Stability returns the linear-stability parameters of the configured
// inclusions and lipids in SI units (rates in 1/s, wavenumbers in 1/m):
// the active-inclusion model (angular truncation left to the convergence
// loop of package stability) and, for lipids.model = phase, the
// Cahn–Hilliard branch about initial.mean (ok false otherwise).
func (c Config) Stability() (act stability.Active, ch stability.CahnHilliard, chOK bool, err error) {
	dr, dt, _, err := c.Diffusivities()
	if err != nil {
		return act, ch, false, err
	}
	act = stability.Active{
		Membrane:  c.FlowMembrane(),
		Stress:    float64(c.ActiveStress()),
		Alignment: c.Inclusions.Alignment,
		RotDiff:   float64(dr),
		TransDiff: float64(dt),
		Speed:     float64(c.Inclusions.Speed),
	}
	if c.Lipids.Model == "phase" {
		ch = stability.CahnHilliard{Mobility: float64(c.Lipids.Diffusion), Width: float64(c.Lipids.Interface), Mean: c.Initial.Mean}
		chOK = true
	}
	return act, ch, chOK, nil
}
