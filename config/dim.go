package config

import (
	"strconv"
	"strings"
)

// Dim is a physical dimension: integer exponents of the SI base dimensions
// length (m), mass (kg), time (s) and temperature (K). It is encoded as one
// integer in balanced base 64, d = L + 64·M + 64²·T + 64³·Θ with each
// exponent in [−31, 31], so that dimensions are constants, the zero value
// is dimensionless, and multiplying quantities adds their dimensions:
// DimViscosity = DimPressure + DimTime.
type Dim int32

// The base dimensions.
const (
	Dimensionless Dim = 0
	DimLength     Dim = 1
	DimMass       Dim = 64
	DimTime       Dim = 64 * 64
	DimKelvin     Dim = 64 * 64 * 64
)

// The dimensions memix names; each has a description and an SI unit (see
// Dim.Unit and Dim.String).
const (
	DimTemperature   = DimKelvin
	DimArea          = 2 * DimLength
	DimRate          = -DimTime
	DimVelocity      = DimLength - DimTime
	DimForce         = DimMass + DimLength - 2*DimTime
	DimEnergy        = DimForce + DimLength
	DimPressure      = DimForce - 2*DimLength
	DimTension       = DimForce - DimLength // energy per area
	DimViscosity     = DimPressure + DimTime
	DimSurfViscosity = DimViscosity + DimLength
	DimFriction      = DimViscosity - DimLength
	DimDiffusivity   = DimArea - DimTime
	DimAreaDensity   = -DimArea
)

// maxExp bounds every exponent the parser builds, well inside the
// encodable [−31, 31]; it rejects nonsense such as m^200.
const maxExp = 24

// Exps returns the exponents of length, mass, time and temperature.
func (d Dim) Exps() [4]int {
	var e [4]int
	x := int(d)
	for i := range e {
		r := ((x+32)%64+64)%64 - 32
		e[i] = r
		x = (x - r) / 64
	}
	return e
}

// makeDim builds a Dim from exponents; ok is false if one is outside
// [−maxExp, maxExp].
func makeDim(e [4]int) (d Dim, ok bool) {
	scale := 1
	for _, x := range e {
		if x < -maxExp || x > maxExp {
			return 0, false
		}
		d += Dim(x * scale)
		scale *= 64
	}
	return d, true
}

// dimInfo describes a named dimension: a noun phrase for messages, the SI
// unit memix writes it in (it parses back with factor exactly 1), and an
// example of what a user may type.
type dimInfo struct {
	noun    string // "a surface viscosity"
	unit    string // "Pa*s*m"
	example string // "Pa*s*m or sP"
}

func (d Dim) info() (dimInfo, bool) {
	switch d {
	case Dimensionless:
		return dimInfo{"a dimensionless number", "", "1"}, true
	case DimLength:
		return dimInfo{"a length", "m", "nm or um"}, true
	case DimArea:
		return dimInfo{"an area", "m^2", "um^2"}, true
	case DimMass:
		return dimInfo{"a mass", "kg", "kg"}, true
	case DimTime:
		return dimInfo{"a time", "s", "s or ms"}, true
	case DimRate:
		return dimInfo{"a rate", "s^-1", "1/s"}, true
	case DimTemperature:
		return dimInfo{"a temperature", "K", "K"}, true
	case DimVelocity:
		return dimInfo{"a velocity", "m/s", "um/s"}, true
	case DimForce:
		return dimInfo{"a force (or line tension)", "N", "pN"}, true
	case DimEnergy:
		return dimInfo{"an energy", "J", "kT or pN*nm"}, true
	case DimPressure:
		return dimInfo{"a pressure or stress", "Pa", "Pa"}, true
	case DimTension:
		return dimInfo{"a surface tension (energy per area)", "N/m", "mN/m"}, true
	case DimViscosity:
		return dimInfo{"a viscosity", "Pa*s", "mPa*s"}, true
	case DimSurfViscosity:
		return dimInfo{"a surface viscosity", "Pa*s*m", "Pa*s*m or sP"}, true
	case DimFriction:
		return dimInfo{"a friction coefficient (viscosity per length)", "Pa*s/m", "Pa*s/m"}, true
	case DimDiffusivity:
		return dimInfo{"a diffusivity", "m^2/s", "um^2/s"}, true
	case DimAreaDensity:
		return dimInfo{"a number per area", "m^-2", "um^-2"}, true
	}
	return dimInfo{}, false
}

// Unit returns the SI unit memix writes d in: "Pa*s*m" for a surface
// viscosity, "kg*m^-3" for a dimension without a name, "" for a
// dimensionless number. It parses back with conversion factor exactly 1.
func (d Dim) Unit() string {
	if info, ok := d.info(); ok {
		return info.unit
	}
	return d.baseUnit()
}

// baseUnit writes d as a product of SI base units with exponents.
func (d Dim) baseUnit() string {
	e := d.Exps()
	names := [4]string{"m", "kg", "s", "K"}
	var parts []string
	for _, i := range [4]int{1, 0, 2, 3} { // kg first, as in kg*m^-1*s^-2
		switch e[i] {
		case 0:
		case 1:
			parts = append(parts, names[i])
		default:
			parts = append(parts, names[i]+"^"+strconv.Itoa(e[i]))
		}
	}
	return strings.Join(parts, "*")
}

// String describes d for messages: "a length", or "a quantity in kg*m^-3"
// for a dimension without a name.
func (d Dim) String() string {
	if info, ok := d.info(); ok {
		return info.noun
	}
	return "a quantity in " + d.baseUnit()
}

// Expect describes what a key of dimension d takes, with an example:
// "a surface viscosity, e.g. Pa*s*m or sP".
func (d Dim) Expect() string {
	if d == Dimensionless {
		return "a plain number (dimensionless)"
	}
	if info, ok := d.info(); ok {
		return info.noun + ", e.g. " + info.example
	}
	return d.String()
}
