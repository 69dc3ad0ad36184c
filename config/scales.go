package config

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
)

// Scales are the lengths the membrane hydrodynamics sets, with advice on
// whether the grid resolves them and the box holds them. A length that
// does not exist for the configuration (no subphase, no wall, no friction)
// is +Inf.
type Scales struct {
	// SaffmanDelbruck is η_m/(η₊ + η₋), both subphase viscosities summed
	// (sides of kind none count 0; some papers divide by one side only).
	SaffmanDelbruck Length
	// WallUpper and WallLower are the screening lengths sqrt(η_m·H/η) of
	// a wall side alone (the 2D Brinkman limit D ≈ η_m k² + η/H, valid
	// when it is much longer than H).
	WallUpper, WallLower Length
	// Screening is 1/sqrt(D(0)/η_m): every wall side and the friction
	// together. Flows decay exponentially beyond it.
	Screening Length
	// Friction is sqrt(η_m/ξ).
	Friction Length
	// Spacing is the larger grid spacing, Box the shorter box side.
	Spacing, Box Length
	// Advice compares the grid and the box with the lengths above.
	Advice []Advice
}

// Level grades a piece of advice.
type Level int

const (
	OK   Level = iota // nothing to do
	Note              // worth knowing, not a problem
	Warn              // results may be wrong or misleading
)

func (l Level) String() string {
	switch l {
	case OK:
		return "ok"
	case Note:
		return "note"
	case Warn:
		return "warn"
	}
	return fmt.Sprintf("Level(%d)", int(l))
}

// Advice is one remark on resolution or regime.
type Advice struct {
	Level Level
	Text  string
}

// Thresholds of the resolution advice [practice; rules of thumb, no
// source]: a length is resolved with at least pointsGood grid points along
// it and marginal down to pointsPoor; a box holds a length well when it is
// boxGood lengths long, and barely below boxPoor.
const (
	pointsGood = 4
	pointsPoor = 2
	boxGood    = 10
	boxPoor    = 3
	// brinkmanRatio: sqrt(η_m H/η) is a fair estimate of a wall's
	// screening length when it exceeds the depth H this many times
	// [practice].
	brinkmanRatio = 3
)

// namedLength is a length with the words that name it in advice.
type namedLength struct {
	name string
	l    float64
}

// Scales computes the derived lengths of c and the resolution advice. c
// should be valid; invalid values give meaningless lengths.
func (c Config) Scales() Scales {
	m := c.FlowMembrane()
	s := Scales{
		SaffmanDelbruck: Length(m.SaffmanDelbruck()),
		WallUpper:       Length(wallScreening(m.Viscosity, m.Upper)),
		WallLower:       Length(wallScreening(m.Viscosity, m.Lower)),
		Screening:       Length(m.ScreeningLength()),
		Friction:        Length(m.FrictionLength()),
		Spacing:         c.Grid.Spacing(),
	}
	lx, ly := c.Grid.Lengths()
	s.Box = min(lx, ly)

	// The lengths the grid must resolve: every one that exists.
	var ls []namedLength
	add := func(name string, l Length) {
		if !math.IsInf(float64(l), 0) && l > 0 {
			ls = append(ls, namedLength{name, float64(l)})
		}
	}
	add("Saffman–Delbrück length", s.SaffmanDelbruck)
	add("screening length of the upper wall", s.WallUpper)
	add("screening length of the lower wall", s.WallLower)
	add("friction length", s.Friction)
	screened := len(ls) > 0
	var reach namedLength // the length beyond which flows fade
	if !math.IsInf(float64(s.Screening), 0) {
		// Flows decay exponentially beyond the screening length, so it is
		// what the box must hold, whatever the other lengths.
		reach = namedLength{"combined screening length", float64(s.Screening)}
		var sources []string
		for _, src := range []struct {
			name string
			l    Length
		}{{"screening length of the upper wall", s.WallUpper}, {"screening length of the lower wall", s.WallLower}, {"friction length", s.Friction}} {
			if !math.IsInf(float64(src.l), 0) {
				sources = append(sources, src.name)
			}
		}
		if len(sources) == 1 { // a single source keeps its own name
			reach.name = sources[0]
		}
	} else if len(ls) > 0 {
		reach = ls[0] // only the Saffman–Delbrück length exists
	} else {
		screened = false
	}

	var adv []Advice
	if !screened {
		adv = append(adv, Advice{Note, "no hydrodynamic length: nothing outside the membrane resists its flow (no subphase, no friction), so the box is the only length"})
	} else {
		small := ls[0]
		for _, l := range ls[1:] {
			if l.l < small.l {
				small = l
			}
		}
		adv = append(adv, resolutionAdvice(small, s.Spacing))
		adv = append(adv, boxAdvice(reach, s.Box))
	}
	if m.D0() == 0 && m.SubphaseViscosity() > 0 {
		adv = append(adv, Advice{Note, "nothing screens the flow (no wall, no friction): beyond the Saffman–Delbrück length a point force's flow decays only as 1/r, so periodic images contribute at any box size"})
	}
	for _, side := range []struct {
		name string
		sp   flow.Subphase
		l    Length
	}{{"upper", m.Upper, s.WallUpper}, {"lower", m.Lower, s.WallLower}} {
		switch side.sp.Kind {
		case flow.Wall:
			if float64(side.l) < brinkmanRatio*side.sp.Depth {
				adv = append(adv, Advice{Note, fmt.Sprintf("the %s wall's screening length %v is not much longer than its depth %v: the estimate sqrt(η_m·H/η) assumes wavelengths much longer than the depth and is rough here", side.name, side.l, Length(side.sp.Depth))})
			}
		case flow.Slip:
			// Γ = ηk·tanh(kH) ≈ ηH·k² for kH ≪ 1 [derived]: a slip layer
			// adds to the membrane viscosity at long wavelength.
			adv = append(adv, Advice{Note, fmt.Sprintf("the %s slip layer does not screen the flow; at wavelengths much longer than its depth it adds η·H = %v to the membrane viscosity", side.name, SurfaceViscosity(side.sp.Viscosity*side.sp.Depth))})
		}
	}
	if eta := float64(c.Membrane.Viscosity); eta < 1e-11 || eta > 1e-7 {
		adv = append(adv, Advice{Note, fmt.Sprintf("membrane.viscosity %v is far from the 1e-10 to 1e-9 Pa·s·m of fluid lipid bilayers: check its unit (1 sP = 1e-3 Pa·s·m)", c.Membrane.Viscosity)})
	}
	s.Advice = adv
	return s
}

// wallScreening returns sqrt(η_m·H/η) for a wall side, +Inf otherwise.
func wallScreening(etaM float64, s flow.Subphase) float64 {
	if s.Kind != flow.Wall {
		return math.Inf(1)
	}
	return math.Sqrt(etaM * s.Depth / s.Viscosity)
}

func resolutionAdvice(small namedLength, spacing Length) Advice {
	pts := small.l / float64(spacing)
	l := Length(small.l)
	switch {
	case pts >= pointsGood:
		return Advice{OK, fmt.Sprintf("spacing %v resolves the %s %v with %.3g points per length", spacing, small.name, l, pts)}
	case pts >= pointsPoor:
		return Advice{Warn, fmt.Sprintf("spacing %v resolves the %s %v with only %.3g points per length (%d or more advised): raise grid.n", spacing, small.name, l, pts, pointsGood)}
	}
	return Advice{Warn, fmt.Sprintf("spacing %v does not resolve the %s %v (%.3g points per length): raise grid.n or shrink grid.box", spacing, small.name, l, pts)}
}

func boxAdvice(large namedLength, box Length) Advice {
	n := float64(box) / large.l
	l := Length(large.l)
	switch {
	case n >= boxGood:
		return Advice{OK, fmt.Sprintf("box %v holds %.3g times the %s %v", box, n, large.name, l)}
	case n >= boxPoor:
		return Advice{Note, fmt.Sprintf("box %v holds only %.3g times the %s %v: periodic images of a flow interact noticeably (%d or more advised)", box, n, large.name, l, boxGood)}
	}
	return Advice{Warn, fmt.Sprintf("box %v holds only %.3g times the %s %v: flows reach across the periodic box; enlarge grid.box", box, n, large.name, l)}
}
