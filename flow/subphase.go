package flow

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// SubphaseKind is the boundary condition of the fluid layer on one side of
// the membrane.
type SubphaseKind int

const (
	// None: no fluid (air or vacuum) on this side; no traction.
	None SubphaseKind = iota
	// Deep: an unbounded fluid layer. Γ(k) = η k.
	Deep
	// Wall: a layer of depth H over a no-slip wall. Γ(k) = η k coth(kH).
	Wall
	// Slip: a layer of depth H over a stress-free (free-slip) bottom.
	// Γ(k) = η k tanh(kH).
	Slip
)

var kindNames = [...]string{None: "none", Deep: "deep", Wall: "wall", Slip: "slip"}

// String returns the configuration name of the kind.
func (k SubphaseKind) String() string {
	if k < 0 || int(k) >= len(kindNames) {
		return fmt.Sprintf("SubphaseKind(%d)", int(k))
	}
	return kindNames[k]
}

// ParseSubphaseKind returns the kind named s ("none", "deep", "wall" or
// "slip", case-insensitive).
func ParseSubphaseKind(s string) (SubphaseKind, error) {
	for k, name := range kindNames {
		if strings.EqualFold(strings.TrimSpace(s), name) {
			return SubphaseKind(k), nil
		}
	}
	return 0, fmt.Errorf("unknown subphase kind %q: valid kinds are none, deep, wall, slip", s)
}

// HasDepth reports whether the kind takes a depth.
func (k SubphaseKind) HasDepth() bool { return k == Wall || k == Slip }

// Subphase is the fluid layer on one side of the membrane.
type Subphase struct {
	Kind      SubphaseKind
	Viscosity float64 // bulk viscosity η (ignored for None)
	Depth     float64 // layer depth H (Wall and Slip only)
}

// Validate reports an inconsistent subphase; side names it in messages
// ("upper" or "lower").
func (s Subphase) Validate(side string) error {
	var errs []error
	if s.Kind < None || s.Kind > Slip {
		errs = append(errs, fmt.Errorf("%s subphase: invalid kind %d", side, int(s.Kind)))
	}
	if s.Kind != None && !(s.Viscosity > 0 && !math.IsInf(s.Viscosity, 0)) {
		errs = append(errs, fmt.Errorf("%s subphase viscosity = %g: must be finite and > 0 for kind %s", side, s.Viscosity, s.Kind))
	}
	if s.Kind.HasDepth() && !(s.Depth > 0 && !math.IsInf(s.Depth, 0)) {
		errs = append(errs, fmt.Errorf("%s subphase depth = %g: must be finite and > 0 for kind %s", side, s.Depth, s.Kind))
	}
	return errors.Join(errs...)
}

// Gamma returns the traction coefficient Γ(k) ≥ 0 of the subphase for a
// transverse membrane mode of wavenumber k ≥ 0: the tangential stress the
// layer exerts per unit membrane velocity. The forms follow from the Stokes
// solution of the layer with the membrane velocity imposed at its surface
// (derived; structure as in Stone & Ajdari, J. Fluid Mech. 369, 151 (1998)).
// At k = 0 it returns the limit: η/H for Wall, 0 otherwise.
func (s Subphase) Gamma(k float64) float64 {
	switch s.Kind {
	case Deep:
		return s.Viscosity * k
	case Wall:
		x := k * s.Depth
		if x < 1e-8 {
			// η k coth(kH) = (η/H)(1 + x²/3 + O(x⁴)); the series avoids 0/0.
			return s.Viscosity / s.Depth * (1 + x*x/3)
		}
		return s.Viscosity * k / math.Tanh(x)
	case Slip:
		return s.Viscosity * k * math.Tanh(k*s.Depth)
	default:
		return 0
	}
}

// Membrane is the membrane with its two subphases and substrate friction.
type Membrane struct {
	Viscosity    float64 // surface shear viscosity η_m > 0
	Friction     float64 // uniform substrate friction ξ ≥ 0
	Upper, Lower Subphase
}

// Validate reports every inconsistency at once.
func (m Membrane) Validate() error {
	var errs []error
	if !(m.Viscosity > 0 && !math.IsInf(m.Viscosity, 0)) {
		errs = append(errs, fmt.Errorf("membrane viscosity = %g: must be finite and > 0", m.Viscosity))
	}
	if !(m.Friction >= 0 && !math.IsInf(m.Friction, 0)) {
		errs = append(errs, fmt.Errorf("membrane friction = %g: must be finite and ≥ 0", m.Friction))
	}
	// Append only real errors, so that a valid membrane allocates nothing.
	for _, e := range [...]error{m.Upper.Validate("upper"), m.Lower.Validate("lower")} {
		if e != nil {
			errs = append(errs, e)
		}
	}
	return errors.Join(errs...)
}

// D returns the transverse resistance D(k) = η_m k² + Γ₊(k) + Γ₋(k) + ξ.
func (m Membrane) D(k float64) float64 {
	return m.Viscosity*k*k + m.Upper.Gamma(k) + m.Lower.Gamma(k) + m.Friction
}

// D0 returns D(0) = ξ + η/H of every Wall side: the resistance to uniform
// translation. It is zero when nothing anchors the membrane.
func (m Membrane) D0() float64 { return m.D(0) }

// SubphaseViscosity returns η₊ + η₋, counting only sides with fluid.
func (m Membrane) SubphaseViscosity() float64 {
	var s float64
	for _, side := range []Subphase{m.Upper, m.Lower} {
		if side.Kind != None {
			s += side.Viscosity
		}
	}
	return s
}

// SaffmanDelbruck returns the Saffman–Delbrück length η_m/(η₊ + η₋), with
// both subphase viscosities summed (the convention memix uses throughout;
// some papers divide by one side only). It is +Inf without subphases.
func (m Membrane) SaffmanDelbruck() float64 {
	return m.Viscosity / m.SubphaseViscosity()
}

// FrictionLength returns sqrt(η_m/ξ), +Inf without friction.
func (m Membrane) FrictionLength() float64 { return math.Sqrt(m.Viscosity / m.Friction) }

// ScreeningLength returns the length beyond which the membrane flow is
// screened (exponentially damped): 1/sqrt(D(0)/η_m), combining friction
// and the η/H of every Wall side (the 2D Brinkman limit, D ≈ η_m k² + D(0)
// for kH ≪ 1). It is +Inf when D(0) = 0.
func (m Membrane) ScreeningLength() float64 { return math.Sqrt(m.Viscosity / m.D0()) }
