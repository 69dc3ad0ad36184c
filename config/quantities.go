package config

// Physical is a physical quantity with a known dimension and an SI value.
// The named quantity types below implement it, and so does Quantity.
type Physical interface {
	Dimension() Dim
	SI() float64
}

// The named quantity types guard the boundary between the configuration
// and the solvers: a SurfaceViscosity cannot be passed where a Viscosity is
// wanted without a visible conversion. Each holds its value in SI units
// (the unit in its comment); a config field of one of these types takes
// that dimension, and its unit text, from the type.
type (
	Length           float64 // m
	Area             float64 // m²
	Time             float64 // s
	Rate             float64 // 1/s
	Temperature      float64 // K
	Energy           float64 // J
	Force            float64 // N
	Velocity         float64 // m/s
	Viscosity        float64 // Pa·s, bulk (3D) viscosity
	SurfaceViscosity float64 // Pa·s·m, membrane (2D) viscosity
	Friction         float64 // Pa·s/m, substrate friction per membrane area
	Diffusivity      float64 // m²/s
	AreaDensity      float64 // 1/m², number per membrane area
	Tension          float64 // N/m, energy per area
)

func (Length) Dimension() Dim           { return DimLength }
func (Area) Dimension() Dim             { return DimArea }
func (Time) Dimension() Dim             { return DimTime }
func (Rate) Dimension() Dim             { return DimRate }
func (Temperature) Dimension() Dim      { return DimTemperature }
func (Energy) Dimension() Dim           { return DimEnergy }
func (Force) Dimension() Dim            { return DimForce }
func (Velocity) Dimension() Dim         { return DimVelocity }
func (Viscosity) Dimension() Dim        { return DimViscosity }
func (SurfaceViscosity) Dimension() Dim { return DimSurfViscosity }
func (Friction) Dimension() Dim         { return DimFriction }
func (Diffusivity) Dimension() Dim      { return DimDiffusivity }
func (AreaDensity) Dimension() Dim      { return DimAreaDensity }
func (Tension) Dimension() Dim          { return DimTension }

func (x Length) SI() float64           { return float64(x) }
func (x Area) SI() float64             { return float64(x) }
func (x Time) SI() float64             { return float64(x) }
func (x Rate) SI() float64             { return float64(x) }
func (x Temperature) SI() float64      { return float64(x) }
func (x Energy) SI() float64           { return float64(x) }
func (x Force) SI() float64            { return float64(x) }
func (x Velocity) SI() float64         { return float64(x) }
func (x Viscosity) SI() float64        { return float64(x) }
func (x SurfaceViscosity) SI() float64 { return float64(x) }
func (x Friction) SI() float64         { return float64(x) }
func (x Diffusivity) SI() float64      { return float64(x) }
func (x AreaDensity) SI() float64      { return float64(x) }
func (x Tension) SI() float64          { return float64(x) }

// String methods write a value in a readable unit ("0.89 mPa·s"); see
// FormatHuman.
func (x Length) String() string           { return FormatHuman(float64(x), DimLength) }
func (x Area) String() string             { return FormatHuman(float64(x), DimArea) }
func (x Time) String() string             { return FormatHuman(float64(x), DimTime) }
func (x Rate) String() string             { return FormatHuman(float64(x), DimRate) }
func (x Temperature) String() string      { return FormatHuman(float64(x), DimTemperature) }
func (x Energy) String() string           { return FormatHuman(float64(x), DimEnergy) }
func (x Force) String() string            { return FormatHuman(float64(x), DimForce) }
func (x Velocity) String() string         { return FormatHuman(float64(x), DimVelocity) }
func (x Viscosity) String() string        { return FormatHuman(float64(x), DimViscosity) }
func (x SurfaceViscosity) String() string { return FormatHuman(float64(x), DimSurfViscosity) }
func (x Friction) String() string         { return FormatHuman(float64(x), DimFriction) }
func (x Diffusivity) String() string      { return FormatHuman(float64(x), DimDiffusivity) }
func (x AreaDensity) String() string      { return FormatHuman(float64(x), DimAreaDensity) }
func (x Tension) String() string          { return FormatHuman(float64(x), DimTension) }
