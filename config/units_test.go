package config

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// ulp is the unit round-off of float64, 2^-52.
const ulp = 0x1p-52

func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// TestParseQuantity checks values against the definitions of the units
// (SI prefixes and the SI/CGS unit definitions; k_B exact). Where the
// expected value is a float literal, the parser rounds once (decimal
// exponents are added before conversion) and must agree exactly; where a
// non-decimal factor (60 s, 3600 s, π/180, k_B·T) is multiplied in, at most
// three roundings separate the two computations, so the tolerance is 4 ulp.
func TestParseQuantity(t *testing.T) {
	kT := Boltzmann * 300
	p := Parser{KT: kT}
	tests := []struct {
		in    string
		want  float64
		dim   Dim
		exact bool
	}{
		{"1e-9 Pa*s*m", 1e-9, DimSurfViscosity, true},
		{"0.89 mPa*s", 0.00089, DimViscosity, true},
		{"200 nm", 2e-7, DimLength, true},
		{"200nm", 2e-7, DimLength, true},
		{"160 pN*nm", 1.6e-19, DimEnergy, true},
		{"500 um^-2", 5e14, DimAreaDensity, true},
		{"500 µm⁻²", 5e14, DimAreaDensity, true},
		{"1 um^2/s", 1e-12, DimDiffusivity, true},
		{"2.5e3 Pa*s/m", 2500, DimFriction, true},
		{"300 K", 300, DimTemperature, true},
		{"1e-3 sP", 1e-6, DimSurfViscosity, true},
		{"4 s", 4, DimTime, true},
		{"1/s", 1, DimRate, true},
		{"0.5 s^-1", 0.5, DimRate, true},
		{"5 um", 5e-6, DimLength, true},
		{"5 µm", 5e-6, DimLength, true}, // micro sign U+00B5
		{"5 μm", 5e-6, DimLength, true}, // Greek mu U+03BC
		{"2 cP", 0.002, DimViscosity, true},
		{"1 kg", 1, DimMass, true},
		{"3 Å", 3e-10, DimLength, true},
		{"1 mN/m", 1e-3, DimTension, true},
		{"1e-9", 1e-9, Dimensionless, true},
		{"-3.5", -3.5, Dimensionless, true},
		{".5e3 m", 500, DimLength, true},
		{"1. m", 1, DimLength, true},
		{"7 kg/(m*s)", 7, DimViscosity, true},
		{"7 kg*m^-1*s^-1", 7, DimViscosity, true},
		{"7 Pa s", 7, DimViscosity, true},
		{"7 Pa·s·m", 7, DimSurfViscosity, true},
		{"1 (m/s)^2", 1, 2 * DimVelocity, true},
		{"50 %", 0.5, Dimensionless, true},
		{"1 m/s/s", 1, DimVelocity - DimTime, true},
		{"40 kT", 40 * kT, DimEnergy, true},
		{"40 k_BT", 40 * kT, DimEnergy, true},
		{"2 min", 120, DimTime, false},
		{"1 h", 3600, DimTime, false},
		{"3.6 km/h", 1, DimVelocity, false},
		{"180 deg", math.Pi, Dimensionless, false},
		{"1 eV", 1.602176634e-19, DimEnergy, false},
	}
	worst := 0.0
	for _, tt := range tests {
		q, err := p.Parse(tt.in)
		if err != nil {
			t.Errorf("Parse(%q): %v", tt.in, err)
			continue
		}
		worst = max(worst, relErr(q.Value, tt.want))
		if q.Dim != tt.dim {
			t.Errorf("Parse(%q) dimension %s (%s), want %s (%s)", tt.in, q.Dim, q.Dim.Unit(), tt.dim, tt.dim.Unit())
		}
		if tt.exact && q.Value != tt.want {
			t.Errorf("Parse(%q) = %v, want exactly %v", tt.in, q.Value, tt.want)
		}
		if e := relErr(q.Value, tt.want); !tt.exact && e > 4*ulp {
			t.Errorf("Parse(%q) = %v, want %v (relative error %.2g > 4 ulp)", tt.in, q.Value, tt.want, e)
		}
	}
	t.Logf("largest relative error %.2g (%.1f ulp; tolerance 0 or 4 ulp)", worst, worst/ulp)
}

// TestSurfacePoise checks the surface poise against three independent
// spellings of the same CGS unit (1 sP = 1 g/s = 1 P·cm = 1 dyn·s/cm) and
// against the SI value 1e-3 Pa·s·m quoted in MODEL.md §6. Each value is
// one rounding of a decimal, so they agree exactly.
func TestSurfacePoise(t *testing.T) {
	for _, s := range []string{"1 sP", "1 g/s", "1 P*cm", "1 dyn*s/cm", "1e-3 Pa*s*m", "1 mPa*s*m"} {
		q, err := ParseQuantity(s)
		if err != nil {
			t.Fatalf("%q: %v", s, err)
		}
		if q.Dim != DimSurfViscosity || q.Value != 1e-3 {
			t.Errorf("%q = %v (%s), want 1e-3 Pa*s*m", s, q.Value, q.Dim)
		}
	}
}

// TestKT checks 1 kT at 300 K against MODEL.md §6, k_BT = 4.14 pN·nm at
// 300 K (three significant digits, so the tolerance is half a unit in the
// third digit, 0.5/414).
func TestKT(t *testing.T) {
	p := Parser{KT: Boltzmann * 300}
	a, err := p.Parse("1 kT")
	if err != nil {
		t.Fatal(err)
	}
	b, _ := p.Parse("4.14 pN*nm")
	if e := relErr(a.Value, b.Value); e > 0.5/414 {
		t.Errorf("1 kT at 300 K = %v J, want 4.14 pN*nm = %v J within %.2g (got %.2g)", a.Value, b.Value, 0.5/414, e)
	}
	if _, err := ParseQuantity("1 kT"); !errors.Is(err, ErrUnit) || !strings.Contains(err.Error(), "temperature") {
		t.Errorf("kT without a temperature: %v, want an error about the temperature", err)
	}
}

func TestParseErrors(t *testing.T) {
	tests := []struct {
		in   string
		err  error
		want string // in the message
	}{
		{"", ErrSyntax, "empty"},
		{"nm", ErrSyntax, "expected a number"},
		{"abc", ErrSyntax, "expected a number"},
		{"inf", ErrSyntax, "infinite"},
		{"NaN m", ErrSyntax, "NaN"},
		{"1e400", ErrSyntax, "outside the range"},
		{"1e-400 m", ErrSyntax, "outside the range"},
		{"1e99999 m", ErrSyntax, "outside the range"},
		{"1.2.3", ErrSyntax, "second decimal point"},
		{"5 furlong", ErrUnit, `"furlong"`},
		{"5 Pas", ErrUnit, "did you mean Pa*s?"},
		{"25 °C", ErrUnit, "absolute"},
		{"5 mM", ErrUnit, "concentrations"},
		{"2 kg/m*s", ErrSyntax, "ambiguous"},
		{"2 kg/m s", ErrSyntax, "ambiguous"},
		{"2 m2", ErrSyntax, "m^2"},
		{"2 m^", ErrSyntax, "exponent"},
		{"2 m^123", ErrSyntax, "too large"},
		{"2 m^30", ErrSyntax, "exceeds"},
		{"2 (m", ErrSyntax, "unclosed"},
		{"2 m)", ErrSyntax, "unexpected"},
		{"2 ((((((((((m))))))))))", ErrSyntax, "nested"},
		{"2 m*", ErrSyntax, "at the end"},
		{"2 m/", ErrSyntax, "at the end"},
		{"2 mkg", ErrUnit, `"mkg"`},
		{"2 \xff", ErrSyntax, "UTF-8"},
	}
	for _, tt := range tests {
		_, err := ParseQuantity(tt.in)
		var qe *QuantityError
		if !errors.As(err, &qe) {
			t.Errorf("Parse(%q): error %v is not a *QuantityError", tt.in, err)
			continue
		}
		if !errors.Is(err, tt.err) || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("Parse(%q) = %v; want %v mentioning %q", tt.in, err, tt.err, tt.want)
		}
	}
}

// TestDim checks the balanced base-64 encoding and the SI unit text of
// every named dimension: it parses back to its own dimension with value
// exactly 1.
func TestDim(t *testing.T) {
	if got := DimViscosity.Exps(); got != [4]int{-1, 1, -1, 0} {
		t.Errorf("viscosity exponents %v, want [-1 1 -1 0]", got)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for range 1000 {
		var e [4]int
		for i := range e {
			e[i] = rng.IntN(2*maxExp+1) - maxExp
		}
		d, ok := makeDim(e)
		if !ok || d.Exps() != e {
			t.Fatalf("makeDim(%v) = %v (%v), ok %v", e, d, d.Exps(), ok)
		}
		q, err := ParseQuantity("1 " + d.Unit())
		if d == Dimensionless {
			q, err = ParseQuantity("1")
		}
		if err != nil || q.Dim != d || q.Value != 1 {
			t.Fatalf("unit %q of %v parses to %v, %v", d.Unit(), e, q, err)
		}
	}
	for _, d := range []Dim{DimLength, DimArea, DimTime, DimRate, DimTemperature, DimVelocity, DimForce,
		DimEnergy, DimPressure, DimTension, DimViscosity, DimSurfViscosity, DimFriction, DimDiffusivity, DimAreaDensity} {
		q, err := ParseQuantity("1 " + d.Unit())
		if err != nil || q.Dim != d || q.Value != 1 {
			t.Errorf("%s: unit %q parses to %v, %v", d, d.Unit(), q, err)
		}
		if !strings.Contains(d.Expect(), "e.g.") {
			t.Errorf("%s: Expect() = %q has no example", d, d.Expect())
		}
	}
	if _, ok := makeDim([4]int{maxExp + 1, 0, 0, 0}); ok {
		t.Error("makeDim accepted an exponent beyond maxExp")
	}
}

// TestFormat checks that FormatSI round-trips exactly and FormatHuman
// picks readable units.
func TestFormat(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for range 2000 {
		v := math.Exp(rng.NormFloat64()*20) * float64(1-2*rng.IntN(2))
		for _, d := range []Dim{DimLength, DimSurfViscosity, DimRate, DimAreaDensity, Dimensionless, DimMass - 3*DimLength} {
			q, err := ParseQuantity(FormatSI(v, d))
			if err != nil || q.Value != v || q.Dim != d {
				t.Fatalf("FormatSI(%v, %s) = %q parses to %v, %v", v, d, FormatSI(v, d), q, err)
			}
		}
	}
	tests := []struct {
		v    float64
		d    Dim
		want string
	}{
		{2e-7, DimLength, "200 nm"},
		{5.617977528e-7, DimLength, "561.8 nm"},
		{1e-5, DimLength, "10 µm"},
		{0.00089, DimViscosity, "0.89 mPa·s"},
		{1e-9, DimSurfViscosity, "1e-9 Pa·s·m"},
		{Boltzmann * 300, DimEnergy, "4.142 pN·nm"},
		{1e-12, DimDiffusivity, "1 µm²/s"},
		{math.Inf(1), DimLength, "∞"},
		{24.14, DimTime, "24.14 s"},
	}
	for _, tt := range tests {
		if got := FormatHuman(tt.v, tt.d); got != tt.want {
			t.Errorf("FormatHuman(%v, %s) = %q, want %q", tt.v, tt.d, got, tt.want)
		}
		if math.IsInf(tt.v, 0) {
			continue
		}
		q, err := ParseQuantity(FormatHuman(tt.v, tt.d))
		if err != nil || q.Dim != tt.d || relErr(q.Value, tt.v) > 5e-4 { // four significant digits
			t.Errorf("FormatHuman(%v) = %q parses to %v, %v", tt.v, FormatHuman(tt.v, tt.d), q, err)
		}
	}
}

// FuzzParseQuantity: the parser never panics, accepts only finite values
// of bounded dimension, and whatever it accepts FormatSI writes back
// exactly.
func FuzzParseQuantity(f *testing.F) {
	for _, s := range []string{"1e-9 Pa*s*m", "0.89 mPa*s", "200 nm", "40 kT", "500 um^-2", "1 um^2/s",
		"2.5e3 Pa*s/m", "1e-3 sP", "1/s", "5 µm", "7 kg/(m*s)", "3 µm⁻²", "2 kg/m*s", "1e400", "(((m)))", "5 Pas", ""} {
		f.Add(s)
	}
	p := Parser{KT: Boltzmann * 300}
	f.Fuzz(func(t *testing.T, s string) {
		q, err := p.Parse(s)
		if err != nil {
			var qe *QuantityError
			if !errors.As(err, &qe) || qe.Offset < 0 || qe.Offset > len(s) {
				t.Fatalf("Parse(%q): bad error %#v", s, err)
			}
			return
		}
		if math.IsInf(q.Value, 0) || math.IsNaN(q.Value) {
			t.Fatalf("Parse(%q) = %v", s, q.Value)
		}
		for _, e := range q.Dim.Exps() {
			if e < -maxExp || e > maxExp {
				t.Fatalf("Parse(%q): exponent %d", s, e)
			}
		}
		back, err := p.Parse(FormatSI(q.Value, q.Dim))
		if err != nil || back != q {
			t.Fatalf("Parse(%q) = %v; FormatSI gives %q, which parses to %v, %v", s, q, FormatSI(q.Value, q.Dim), back, err)
		}
	})
}
