package config

import (
	"math"
	"strconv"
	"strings"
)

// FormatSI writes v, an SI value of dimension d, as the shortest decimal
// that parses back to exactly v, followed by the SI unit of d:
// "1e-09 Pa*s*m", "300 K", "128" (dimensionless). It is the form of the
// resolved configuration.
func FormatSI(v float64, d Dim) string {
	s := strconv.FormatFloat(v, 'g', -1, 64)
	if u := d.Unit(); u != "" {
		s += " " + u
	}
	return s
}

// displayUnit is a unit for people: a name and its value in SI units.
type displayUnit struct {
	name string
	si   float64
}

// displayUnits lists, smallest first, the units FormatHuman chooses from
// for d; nil for dimensions written in SI.
func displayUnits(d Dim) []displayUnit {
	switch d {
	case DimLength:
		return []displayUnit{{"nm", 1e-9}, {"µm", 1e-6}, {"mm", 1e-3}, {"m", 1}}
	case DimArea:
		return []displayUnit{{"nm²", 1e-18}, {"µm²", 1e-12}, {"mm²", 1e-6}, {"m²", 1}}
	case DimTime:
		return []displayUnit{{"ns", 1e-9}, {"µs", 1e-6}, {"ms", 1e-3}, {"s", 1}}
	case DimRate:
		return []displayUnit{{"s⁻¹", 1}}
	case DimEnergy:
		return []displayUnit{{"pN·nm", 1e-21}, {"J", 1}}
	case DimForce:
		return []displayUnit{{"fN", 1e-15}, {"pN", 1e-12}, {"nN", 1e-9}, {"µN", 1e-6}, {"mN", 1e-3}, {"N", 1}}
	case DimVelocity:
		return []displayUnit{{"nm/s", 1e-9}, {"µm/s", 1e-6}, {"mm/s", 1e-3}, {"m/s", 1}}
	case DimViscosity:
		return []displayUnit{{"mPa·s", 1e-3}, {"Pa·s", 1}}
	case DimSurfViscosity:
		return []displayUnit{{"Pa·s·m", 1}}
	case DimFriction:
		return []displayUnit{{"Pa·s/m", 1}}
	case DimDiffusivity:
		return []displayUnit{{"µm²/s", 1e-12}, {"m²/s", 1}}
	case DimAreaDensity:
		return []displayUnit{{"µm⁻²", 1e12}}
	case DimTension:
		return []displayUnit{{"µN/m", 1e-6}, {"mN/m", 1e-3}, {"N/m", 1}}
	case DimPressure:
		return []displayUnit{{"Pa", 1}, {"kPa", 1e3}, {"MPa", 1e6}}
	}
	return nil
}

// FormatHuman writes v, an SI value of dimension d, with four significant
// digits in a readable unit: the largest listed unit in which the number is
// at least 1 ("200 nm", "0.89 mPa·s" is written "0.89 mPa·s" because
// mPa·s is the smallest listed viscosity unit). The text parses back to v
// within the rounding to four digits. Infinite values are written "∞".
func FormatHuman(v float64, d Dim) string {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		s := "∞"
		if v < 0 {
			s = "−∞"
		} else if math.IsNaN(v) {
			s = "NaN"
		}
		return s
	}
	s, _ := humanForm(v, d)
	return s
}

// humanForm is FormatHuman for a finite v that also returns the SI value
// of the unit chosen (1 if the unit is the SI one).
func humanForm(v float64, d Dim) (string, float64) {
	units := displayUnits(d)
	if units == nil {
		s := formatG(v)
		if u := d.Unit(); u != "" {
			s += " " + u
		}
		return s, 1
	}
	best := units[0]
	for _, u := range units {
		if math.Abs(v) >= u.si {
			best = u
		}
	}
	return formatG(v/best.si) + " " + best.name, best.si
}

// formatG writes x with four significant digits without trailing zeros.
func formatG(x float64) string {
	s := strconv.FormatFloat(x, 'g', 4, 64)
	if strings.Contains(s, "e") {
		m, e, _ := strings.Cut(s, "e")
		if strings.Contains(m, ".") {
			m = strings.TrimRight(strings.TrimRight(m, "0"), ".")
		}
		// e+05 → e5, e-07 → e-7
		sign := ""
		if e[0] == '-' {
			sign = "-"
		}
		e = strings.TrimLeft(e[1:], "0")
		return m + "e" + sign + e
	}
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	return s
}
