package config

import (
	"fmt"
	"math"
	"runtime"
	"slices"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// Config is the whole configuration of memix in SI units. Its struct tags
// are the schema (see the package documentation): key names, defaults,
// units (from the field types), valid ranges and documentation.
//
// A Config is a value: copies are independent. Build one with Default,
// Load or Parse, change it with Set, and check it with Validate.
type Config struct {
	Temperature Temperature       `key:"temperature" default:"300 K" range:"(0,inf)" doc:"Absolute temperature T. It sets the energy unit kT = k_B·T (k_B = 1.380649e-23 J/K, exact) of every value given in kT."`
	Membrane    MembraneSection   `key:"membrane" doc:"The membrane: a flat, incompressible two-dimensional fluid."`
	Subphase    SubphaseSection   `key:"subphase" doc:"The fluid on each side of the membrane. The upper and lower sides are interchangeable; two names keep a configuration readable."`
	Grid        GridSection       `key:"grid" doc:"The periodic box and its grid."`
	Units       UnitsSection      `key:"units" doc:"The reduced units the solvers work in (see Reduce). They change no physics, only the scale of the numbers inside the solver and in reduced outputs."`
	Inclusions  InclusionsSection `key:"inclusions" doc:"The active inclusions (motor proteins, pumps, trapped swimmers): force dipoles with an orientation, stirring the membrane (memix run, memix stability)."`
	Lipids      LipidsSection     `key:"lipids" doc:"The lipid composition φ, advected by the membrane flow (memix run)."`
	Time        TimeSection       `key:"time" doc:"Time stepping of memix run."`
	Output      OutputSection     `key:"output" doc:"What memix run writes, and how often."`
	Initial     InitialSection    `key:"initial" doc:"The initial state of memix run."`

	meta *meta // provenance; immutable once built, shared by copies
}

// MembraneSection is the key group "membrane".
type MembraneSection struct {
	Viscosity SurfaceViscosity           `key:"viscosity" default:"1e-9 Pa*s*m" range:"(0,inf)" doc:"Surface shear viscosity η_m (a 2D viscosity). Fluid lipid bilayers: about 1e-10 to 1e-9 Pa*s*m, with reported values spanning orders of magnitude (bounds from Waugh, Biophys. J. 38, 29 (1982)). 1 sP (surface poise) = 1e-3 Pa*s*m."`
	Friction  Friction                   `key:"friction" default:"0 Pa*s/m" range:"[0,inf)" doc:"Uniform substrate friction ξ: traction per membrane area per velocity. A bilayer over a water gap h has ξ ≈ η/h, about 1e6 Pa*s/m for h = 1 nm (order of magnitude). 0 for a free membrane."`
	Rule      string                     `key:"viscosity_rule" default:"constant" enum:"constant|log-linear|linear" doc:"How the membrane viscosity depends on the lipid composition φ (needs lipids.model): constant (membrane.viscosity everywhere), log-linear (ln η_m = x ln η₊ + (1 − x) ln η₋ with x = (1 + φ)/2; the Grunberg–Nissan mixing rule, Nature 164, 799 (1949), from memory) or linear (η_m = x η₊ + (1 − x) η₋). φ is clamped to [−1, 1] first. With a rule other than constant the flow is solved iteratively."`
	Plus      Optional[SurfaceViscosity] `key:"viscosity_plus" range:"(0,inf)" fallback:"membrane.viscosity" doc:"Membrane viscosity η₊ of the phase φ = +1 (e.g. the ordered phase, often 10 to 100 times more viscous than the disordered one)."`
	Minus     Optional[SurfaceViscosity] `key:"viscosity_minus" range:"(0,inf)" fallback:"membrane.viscosity" doc:"Membrane viscosity η₋ of the phase φ = −1."`
	Tolerance float64                    `key:"solver_tolerance" default:"1e-8" range:"(0,0.01]" doc:"Relative residual at which the iterative flow solve (composition-dependent viscosity) stops."`
	MaxIter   int                        `key:"solver_iterations" default:"1000" range:"[1,1000000]" doc:"Iteration cap of the iterative flow solve; reaching it stops the run with an error naming the residual and the viscosity contrast."`
}

// Variable reports whether the membrane viscosity depends on composition.
func (m MembraneSection) Variable() bool { return m.Rule != "constant" }

// PhaseViscosities returns η₊ and η₋ (membrane.viscosity where not given).
func (m MembraneSection) PhaseViscosities() (plus, minus SurfaceViscosity) {
	return m.Plus.Or(m.Viscosity), m.Minus.Or(m.Viscosity)
}

func (m MembraneSection) check(at string, root *Config, report func(*FieldError)) {
	if m.Variable() && root.Lipids.Model == "none" {
		report(&FieldError{Key: at + ".viscosity_rule", Value: m.Rule, Range: "constant without lipids",
			Err: fmt.Errorf("%w: a composition-dependent viscosity needs lipids.model passive or phase", ErrConflict)})
	}
	if !m.Variable() {
		for _, k := range []struct {
			name string
			v    Optional[SurfaceViscosity]
		}{{"viscosity_plus", m.Plus}, {"viscosity_minus", m.Minus}} {
			if k.v.Valid {
				report(&FieldError{Key: at + "." + k.name, Value: root.valueText(theSchema().byKey[at+"."+k.name], float64(k.v.V)), Range: "not set with viscosity_rule constant",
					Err: fmt.Errorf("%w: phase viscosities are used only by the log-linear and linear rules; set membrane.viscosity_rule", ErrConflict)})
			}
		}
	}
}

// SubphaseSection is the key group "subphase".
type SubphaseSection struct {
	Upper SideSection `key:"upper" doc:"The fluid above the membrane."`
	Lower SideSection `key:"lower" doc:"The fluid below the membrane."`
}

// SideSection is "subphase.upper" or "subphase.lower".
type SideSection struct {
	Kind      string           `key:"kind" default:"deep" enum:"none|deep|wall|slip" doc:"Boundary condition of the fluid layer: none (air; no traction), deep (unbounded fluid), wall (a layer of thickness depth over a no-slip wall), slip (a layer of thickness depth over a stress-free bottom)."`
	Viscosity Viscosity        `key:"viscosity" default:"0.89 mPa*s" range:"(0,inf)" doc:"Bulk viscosity η of the fluid. Water: 0.89 mPa*s at 25 °C, 0.69 mPa*s at 37 °C (standard tables; quoted from memory). Ignored for kind none."`
	Depth     Optional[Length] `key:"depth" range:"(0,inf)" fallback:"required for kind wall or slip, not allowed for none or deep" doc:"Thickness H of the fluid layer between the membrane and the wall (kind wall) or the stress-free bottom (kind slip)."`
}

// GridSection is the key group "grid".
type GridSection struct {
	N       int              `key:"n" default:"128" range:"[4,65536]" even:"true" doc:"Grid points along each side of the box; nx and ny override it."`
	Nx      Optional[int]    `key:"nx" range:"[4,65536]" even:"true" fallback:"grid.n" doc:"Grid points along x."`
	Ny      Optional[int]    `key:"ny" range:"[4,65536]" even:"true" fallback:"grid.n" doc:"Grid points along y."`
	Box     Length           `key:"box" default:"10 um" range:"(0,inf)" doc:"Side of the periodic box; lx and ly override it."`
	Lx      Optional[Length] `key:"lx" range:"(0,inf)" fallback:"grid.box" doc:"Box length along x."`
	Ly      Optional[Length] `key:"ly" range:"(0,inf)" fallback:"grid.box" doc:"Box length along y."`
	FFT     string           `key:"fft" default:"auto" enum:"auto|fftw|gonum" doc:"FFT implementation: fftw (FFTW 3 through cgo) or gonum (pure Go); auto takes fftw when it is compiled in, else gonum."`
	Threads int              `key:"threads" default:"0" range:"[0,1024]" doc:"Threads for each transform; 0 takes every core of the machine."`
	Measure bool             `key:"fft_measure" default:"false" doc:"Let FFTW time candidate algorithms when planning: faster transforms, slower start, and results that may differ in the last bits between runs. false keeps runs reproducible bit for bit."`
}

// UnitsSection is the key group "units".
type UnitsSection struct {
	Length Optional[Length] `key:"length" range:"(0,inf)" fallback:"grid.lx, the box length along x" doc:"Length unit ℓ₀ of the reduced units."`
	Time   Optional[Time]   `key:"time" range:"(0,inf)" fallback:"the active time η_m/|σ₀c₀| with active inclusions, else the lipid diffusion time ℓ₀²/D_φ, else ℓ₀²·η_m/(k_B·T)" doc:"Time unit τ₀ of the reduced units. The unit of surface viscosity is always membrane.viscosity (the reduced η_m is 1) and the unit of temperature is temperature."`
}

// Optional is a key without a fixed default. Valid reports whether the
// key was given; its fallback (documented in the schema) applies
// otherwise. It is shaped like database/sql.Null.
type Optional[T any] struct {
	V     T
	Valid bool
}

// Some returns a given Optional.
func Some[T any](v T) Optional[T] { return Optional[T]{V: v, Valid: true} }

// Or returns o.V if o is valid, else def.
func (o Optional[T]) Or(def T) T {
	if o.Valid {
		return o.V
	}
	return def
}

func (Optional[T]) isOptional() {}

// SubphaseKind returns the kind of s as a flow.SubphaseKind.
func (s SideSection) SubphaseKind() (flow.SubphaseKind, error) {
	return flow.ParseSubphaseKind(s.Kind)
}

// check holds the rules across keys of a subphase side.
func (s SideSection) check(at string, root *Config, report func(*FieldError)) {
	kind, err := s.SubphaseKind()
	if err != nil {
		return // reported by the enum rule
	}
	depth := at + ".depth"
	switch {
	case kind.HasDepth() && !s.Depth.Valid:
		report(&FieldError{Key: depth, Unit: "m", Range: "> 0",
			Err: fmt.Errorf("%w: kind %s needs the depth of the layer", ErrMissing, kind)})
	case !kind.HasDepth() && s.Depth.Valid:
		report(&FieldError{Key: depth, Value: root.valueText(theSchema().byKey[depth], float64(s.Depth.V)),
			Range: "not set for kind " + kind.String(), Err: fmt.Errorf("%w: a depth is only used by kind wall or slip, and %s.kind is %s: remove the depth or change the kind", ErrConflict, at, kind)})
	}
}

// Size returns the grid points along x and y.
func (g GridSection) Size() (nx, ny int) { return g.Nx.Or(g.N), g.Ny.Or(g.N) }

// Lengths returns the box lengths along x and y.
func (g GridSection) Lengths() (lx, ly Length) { return g.Lx.Or(g.Box), g.Ly.Or(g.Box) }

// Spacing returns the larger grid spacing, max(lx/nx, ly/ny).
func (g GridSection) Spacing() Length {
	nx, ny := g.Size()
	lx, ly := g.Lengths()
	return Length(math.Max(float64(lx)/float64(nx), float64(ly)/float64(ny)))
}

// ThreadCount returns the threads a transform uses: grid.threads, or the
// number of cores when it is 0.
func (g GridSection) ThreadCount() int {
	if g.Threads > 0 {
		return g.Threads
	}
	return runtime.NumCPU()
}

// Backend returns the FFT backend, resolving "auto".
func (g GridSection) Backend() spectral.Backend {
	if g.FFT == "auto" || g.FFT == "" {
		return spectral.DefaultBackend()
	}
	return spectral.Backend(g.FFT)
}

// PlanOptions returns the options for spectral.NewPlan.
func (g GridSection) PlanOptions() spectral.Options {
	return spectral.Options{Backend: g.Backend(), Threads: g.ThreadCount(), Measure: g.Measure}
}

func (g GridSection) check(at string, _ *Config, report func(*FieldError)) {
	if g.FFT != string(spectral.FFTW) || slices.Contains(spectral.Backends(), spectral.FFTW) {
		return
	}
	var names []string
	for _, b := range spectral.Backends() {
		names = append(names, string(b))
	}
	report(&FieldError{Key: at + ".fft", Value: g.FFT, Range: "auto|" + joinBar(names),
		Err: fmt.Errorf("%w: this binary was built without FFTW (nofftw tag or no cgo)", ErrRange)})
}

// LengthUnit returns ℓ₀: units.length, or the box length along x.
func (c Config) LengthUnit() Length {
	lx, _ := c.Grid.Lengths()
	return c.Units.Length.Or(lx)
}

// TimeUnit returns τ₀: units.time if given; else the active time
// η_m/|σ₀c₀| when the inclusions are active; else the lipid diffusion time
// ℓ₀²/D_φ when there are lipids; else the viscous-thermal time
// ℓ₀²·η_m/(k_B·T).
func (c Config) TimeUnit() Time {
	if c.Units.Time.Valid {
		return c.Units.Time.V
	}
	l := float64(c.LengthUnit())
	switch {
	case c.Inclusions.Active():
		return Time(float64(c.Membrane.Viscosity) / math.Abs(float64(c.ActiveStress())))
	case c.Lipids.Model != "none":
		return Time(l * l / float64(c.Lipids.Diffusion))
	}
	return Time(l * l * float64(c.Membrane.Viscosity) / float64(c.KT()))
}

// KT returns k_B·T in J.
func (c Config) KT() Energy { return Energy(Boltzmann * float64(c.Temperature)) }

// Resolved returns a copy of c with every fallback that derives from
// other keys filled in (grid.nx, grid.ny, grid.lx, grid.ly, units.length,
// units.time): the configuration a run records. Keys whose fallback is
// "not set" (a depth on a deep side) stay unset.
func (c Config) Resolved() Config {
	r := c
	nx, ny := c.Grid.Size()
	lx, ly := c.Grid.Lengths()
	r.Grid.Nx, r.Grid.Ny = Some(nx), Some(ny)
	r.Grid.Lx, r.Grid.Ly = Some(lx), Some(ly)
	r.Units.Length = Some(c.LengthUnit())
	r.Units.Time = Some(c.TimeUnit())
	m := c.meta.clone()
	for _, k := range []string{"grid.nx", "grid.ny", "grid.lx", "grid.ly", "units.length", "units.time"} {
		if m.sources[k] == FromDefault {
			m.sources[k] = Derived
		}
	}
	r.meta = m
	return r
}

// FlowMembrane returns the membrane with its subphases in SI units. c
// must be valid.
func (c Config) FlowMembrane() flow.Membrane {
	side := func(s SideSection) flow.Subphase {
		kind, _ := s.SubphaseKind()
		sp := flow.Subphase{Kind: kind, Viscosity: float64(s.Viscosity)}
		if kind.HasDepth() {
			sp.Depth = float64(s.Depth.V)
		}
		return sp
	}
	return flow.Membrane{
		Viscosity: float64(c.Membrane.Viscosity),
		Friction:  float64(c.Membrane.Friction),
		Upper:     side(c.Subphase.Upper),
		Lower:     side(c.Subphase.Lower),
	}
}
