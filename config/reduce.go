package config

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// Units is a system of reduced units: the SI values of the units of
// length, time, surface viscosity and temperature. The unit of mass
// follows as M₀ = η₀·τ₀ (a surface viscosity is a mass per time), so every
// dimension has a unit: a quantity of dimension m^a·kg^b·s^c·K^d has the
// unit ℓ₀^a·M₀^b·τ₀^c·T₀^d.
type Units struct {
	Length           Length           // ℓ₀
	Time             Time             // τ₀
	SurfaceViscosity SurfaceViscosity // η₀
	Temperature      Temperature      // T₀
}

// Scale returns the SI value of the reduced unit of dimension d. With
// M₀ = η₀τ₀ the unit ℓ₀^a·M₀^b·τ₀^c is computed as ℓ₀^a·η₀^b·τ₀^(b+c), so
// that the unit of surface viscosity is η₀ exactly (the reduced η_m is 1).
func (u Units) Scale(d Dim) float64 {
	e := d.Exps()
	return math.Pow(float64(u.Length), float64(e[0])) *
		math.Pow(float64(u.SurfaceViscosity), float64(e[1])) *
		math.Pow(float64(u.Time), float64(e[1]+e[2])) *
		math.Pow(float64(u.Temperature), float64(e[3]))
}

// ToReduced returns q in reduced units.
func (u Units) ToReduced(q Physical) float64 { return q.SI() / u.Scale(q.Dimension()) }

// FromReduced returns the SI value of x, a reduced value of dimension d.
func (u Units) FromReduced(x float64, d Dim) float64 { return x * u.Scale(d) }

// Energy returns the reduced unit of energy, η₀·ℓ₀²/τ₀, in J.
func (u Units) Energy() Energy { return Energy(u.Scale(DimEnergy)) }

// ReducedUnits returns the reduced units of c: ℓ₀ = units.length (default the box
// length along x), τ₀ = units.time (default ℓ₀²·η_m/(k_B·T)), η₀ the
// membrane viscosity, T₀ the temperature.
func (c Config) ReducedUnits() Units {
	return Units{
		Length:           c.LengthUnit(),
		Time:             c.TimeUnit(),
		SurfaceViscosity: c.Membrane.Viscosity,
		Temperature:      c.Temperature,
	}
}

// Reduced is a configuration turned into the values the solvers use.
type Reduced struct {
	Units      Units
	MembraneSI flow.Membrane    // η_m, ξ, η, H in SI units
	Membrane   flow.Membrane    // the same in reduced units; Viscosity is 1
	Grid       *spectral.Grid   // box lengths in units of ℓ₀
	Plan       spectral.Options // FFT backend, threads, planning
	KT         float64          // k_B·T in reduced energy units (1 with the default τ₀)
	Scales     Scales           // derived lengths (SI) and resolution advice
}

// Reduce validates c and converts it to reduced units. The returned grid
// and membranes are new; c is not modified.
func Reduce(c Config) (*Reduced, error) {
	if err := c.Validate(); err != nil {
		return nil, err
	}
	u := c.ReducedUnits()
	si := c.FlowMembrane()
	red := si
	red.Viscosity = u.ToReduced(c.Membrane.Viscosity)
	red.Friction = u.ToReduced(c.Membrane.Friction)
	for _, s := range []*flow.Subphase{&red.Upper, &red.Lower} {
		s.Viscosity = u.ToReduced(Viscosity(s.Viscosity))
		s.Depth = u.ToReduced(Length(s.Depth))
	}
	nx, ny := c.Grid.Size()
	lx, ly := c.Grid.Lengths()
	g, err := spectral.NewGrid(nx, ny, u.ToReduced(lx), u.ToReduced(ly))
	if err != nil {
		return nil, fmt.Errorf("config: reduced grid: %w", err) // Validate has checked the sizes
	}
	return &Reduced{
		Units:      u,
		MembraneSI: si,
		Membrane:   red,
		Grid:       g,
		Plan:       c.Grid.PlanOptions(),
		KT:         u.ToReduced(c.KT()),
		Scales:     c.Scales(),
	}, nil
}
