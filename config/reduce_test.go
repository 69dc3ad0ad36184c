package config

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/memix-sim/memix/flow"
)

func mustParse(t *testing.T, yaml string) Config {
	t.Helper()
	c, err := Parse([]byte(yaml), "test.yaml")
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func loadExamples(t *testing.T) []Config {
	var cs []Config
	for _, f := range exampleFiles(t) {
		c, err := Load(f)
		if err != nil {
			t.Fatal(err)
		}
		cs = append(cs, c)
	}
	return cs
}

// TestUnits checks the reduced unit of each base dimension and the energy
// unit η₀ℓ₀²/τ₀ against an independent evaluation; with the thermal time
// unit τ₀ = ℓ₀²η₀/(k_BT) the energy unit is k_BT. The two computations
// differ by about eight roundings, so the tolerance is 16 ulp.
func TestUnits(t *testing.T) {
	worst := 0.0
	defer func() {
		t.Logf("largest relative difference of η₀ℓ₀²/τ₀ and kT: %.1f ulp (tolerance 16)", worst/ulp)
	}()
	thermal := mustParse(t, "inclusions: {model: none}\nlipids: {model: none}\n")
	for _, c := range append(loadExamples(t), Default(), thermal) {
		u := c.ReducedUnits()
		if u.Scale(DimLength) != float64(u.Length) || u.Scale(DimTime) != float64(u.Time) || u.Scale(DimTemperature) != float64(u.Temperature) {
			t.Errorf("%s: base units %+v", c.File(), u)
		}
		if u.Scale(DimSurfViscosity) != float64(c.Membrane.Viscosity) {
			t.Errorf("%s: surface viscosity unit %v, want η_m exactly", c.File(), u.Scale(DimSurfViscosity))
		}
		l0 := float64(u.Length)
		want := float64(c.Membrane.Viscosity) * l0 * l0 / float64(u.Time)
		if c.Inclusions.Model == "none" && c.Lipids.Model == "none" {
			want = float64(c.KT())
		}
		e := relErr(float64(u.Energy()), want)
		worst = max(worst, e)
		if e > 16*ulp {
			t.Errorf("%s: energy unit %v, want %v (relative %.2g)", c.File(), u.Energy(), want, e)
		}
		if u.Scale(Dimensionless) != 1 {
			t.Errorf("dimensionless scale %v", u.Scale(Dimensionless))
		}
	}
}

// TestReducedRoundTrip: FromReduced inverts ToReduced for any dimension to
// two roundings (x/s·s), tolerance 4 ulp.
func TestReducedRoundTrip(t *testing.T) {
	u := Default().ReducedUnits()
	rng := rand.New(rand.NewPCG(5, 6))
	for range 5000 {
		var e [4]int
		for i := range e {
			e[i] = rng.IntN(9) - 4
		}
		d, _ := makeDim(e)
		x := math.Exp(rng.NormFloat64() * 10)
		r := u.ToReduced(Quantity{x, d})
		if back := u.FromReduced(r, d); relErr(back, x) > 4*ulp {
			t.Fatalf("%v of %v: %v → %v → %v", x, e, x, r, back)
		}
	}
}

// TestReduce checks the reduced membrane against the SI one. The flow
// kernel is unit-covariant: D_SI(k) = D_red(k·ℓ₀)·η₀/ℓ₀² (D has the
// dimension of a friction). Each side takes about fifteen roundings
// (products, k², the argument kH of coth/tanh, whose condition number is
// below 1), so the tolerance is 64 ulp; the observed maximum is printed.
func TestReduce(t *testing.T) {
	cases := append(loadExamples(t),
		Default(),
		mustParse(t, "membrane: {friction: 1e5 Pa*s/m}\nsubphase: {upper: {kind: slip, depth: 2 um}, lower: {kind: wall, depth: 300 nm, viscosity: 2 mPa*s}}\nunits: {length: 1 um, time: 1 ms}\n"))
	worst := 0.0
	for _, c := range cases {
		r, err := Reduce(c)
		if err != nil {
			t.Fatal(err)
		}
		if r.Membrane.Viscosity != 1 {
			t.Errorf("%s: reduced η_m = %v, want exactly 1", c.File(), r.Membrane.Viscosity)
		}
		if r.MembraneSI != c.FlowMembrane() {
			t.Errorf("%s: SI membrane %+v", c.File(), r.MembraneSI)
		}
		l0 := float64(r.Units.Length)
		dScale := r.Units.Scale(DimFriction)
		for _, k := range []float64{0, 1e3, 1e5, 1e6, 3e6, 1e7, 1e8, 1e9} {
			si := r.MembraneSI.D(k)
			red := r.Membrane.D(k*l0) * dScale
			e := relErr(red, si)
			if si == 0 {
				e = math.Abs(red)
			}
			worst = max(worst, e)
			if e > 64*ulp {
				t.Errorf("%s: D(%g /m): SI %v, reduced·scale %v (relative %.2g)", c.File(), k, si, red, e)
			}
		}
		nx, ny := c.Grid.Size()
		lx, ly := c.Grid.Lengths()
		if r.Grid.Nx != nx || r.Grid.Ny != ny || r.Grid.Lx != float64(lx)/l0 || r.Grid.Ly != float64(ly)/l0 {
			t.Errorf("%s: reduced grid %v", c.File(), r.Grid)
		}
		if e := relErr(r.Membrane.SaffmanDelbruck()*l0, r.MembraneSI.SaffmanDelbruck()); e > 8*ulp && !math.IsInf(r.MembraneSI.SaffmanDelbruck(), 1) {
			t.Errorf("%s: L_SD reduced·ℓ₀ off by %.2g", c.File(), e)
		}
		if want := float64(c.KT()) * float64(r.Units.Time) / (float64(c.Membrane.Viscosity) * l0 * l0); relErr(r.KT, want) > 16*ulp {
			t.Errorf("%s: reduced kT = %v, want kT·τ₀/(η₀ℓ₀²) = %v", c.File(), r.KT, want)
		}
	}
	t.Logf("largest relative difference of D(k), SI against reduced: %.2g (%.1f ulp; tolerance 64)", worst, worst/ulp)

	bad := Default()
	bad.Grid.N = 3
	if _, err := Reduce(bad); err == nil {
		t.Error("Reduce accepted an invalid configuration")
	}
}

// TestScales checks the derived lengths against hand-evaluated formulas
// (MODEL.md §1: L_SD = η_m/(η₊+η₋), the length of Saffman & Delbrück,
// PNAS 72, 3111 (1975), with both sides summed; ℓ_H = sqrt(η_m H/η), the
// 2D Brinkman limit [derived]; sqrt(η_m/ξ) [derived]) and
// the combination rule 1/ℓ² = Σ 1/ℓᵢ² implied by D(0)/η_m = Σ ηᵢ/(Hᵢη_m)
// + ξ/η_m [derived]. Each length is a couple of roundings: 4 ulp.
func TestScales(t *testing.T) {
	c := mustParse(t, `
membrane: {viscosity: 1e-9 Pa*s*m, friction: 4e4 Pa*s/m}
subphase:
  upper: {kind: wall, depth: 1 um, viscosity: 1 mPa*s}
  lower: {kind: wall, depth: 200 nm, viscosity: 0.8 mPa*s}
grid: {n: 128, box: 10 um}
`)
	s := c.Scales()
	checks := []struct {
		name      string
		got, want float64
	}{
		{"Saffman–Delbrück", float64(s.SaffmanDelbruck), 1e-9 / 1.8e-3},
		{"upper wall", float64(s.WallUpper), math.Sqrt(1e-9 * 1e-6 / 1e-3)},
		{"lower wall", float64(s.WallLower), math.Sqrt(1e-9 * 2e-7 / 0.8e-3)},
		{"friction", float64(s.Friction), math.Sqrt(1e-9 / 4e4)},
		{"combined", float64(s.Screening), 1 / math.Sqrt(1/sq(s.WallUpper)+1/sq(s.WallLower)+1/sq(s.Friction))},
		{"spacing", float64(s.Spacing), 1e-5 / 128},
		{"box", float64(s.Box), 1e-5},
	}
	for _, ch := range checks {
		if e := relErr(ch.got, ch.want); e > 4*ulp {
			t.Errorf("%s: %v, want %v (relative %.2g)", ch.name, ch.got, ch.want, e)
		}
	}
	// Hand values, four digits: 5.556e-7 m, 1e-6 m, 5e-7 m, 1.581e-7 m.
	for _, hv := range []struct {
		got, want float64
	}{{float64(s.SaffmanDelbruck), 5.556e-7}, {float64(s.WallUpper), 1e-6}, {float64(s.WallLower), 5e-7}, {float64(s.Friction), 1.581e-7}} {
		if relErr(hv.got, hv.want) > 1e-3 {
			t.Errorf("%v, hand value %v", hv.got, hv.want)
		}
	}

	free := Default()
	free.Subphase.Upper.Kind, free.Subphase.Lower.Kind = "none", "none"
	fs := free.Scales()
	if !math.IsInf(float64(fs.SaffmanDelbruck), 1) || !math.IsInf(float64(fs.Screening), 1) || !math.IsInf(float64(fs.Friction), 1) {
		t.Errorf("no subphase: %+v", fs)
	}
}

func sq(l Length) float64 { return float64(l) * float64(l) }

// TestAdvice checks the resolution advice in each regime.
func TestAdvice(t *testing.T) {
	tests := []struct {
		yaml  string
		level Level
		want  string
	}{
		// L_SD = 1e-9/1.78e-3 = 561.8 nm; spacing 10 µm/128 = 78.1 nm: 7.19 points.
		{"", OK, "resolves the Saffman–Delbrück length 561.8 nm with 7.19 points per length"},
		{"", OK, "box 10 µm holds 17.8 times the Saffman–Delbrück length"},
		{"", Note, "decays only as 1/r"},
		{"grid: {n: 48}", Warn, "only 2.7 points per length"},
		{"grid: {n: 16}", Warn, "does not resolve the Saffman–Delbrück length"},
		{"grid: {box: 1 um, n: 64}", Warn, "enlarge grid.box"},
		{"grid: {box: 3 um, n: 64}", Note, "interact noticeably"},
		{"subphase: {upper: {kind: none}, lower: {kind: none}}", Note, "no hydrodynamic length"},
		{"subphase: {lower: {kind: slip, depth: 1 um}}", Note, "adds η·H = 8.9e-10 Pa·s·m"},
		{"subphase: {lower: {kind: wall, depth: 5 um}}", Note, "not much longer than its depth 5 µm"},
		// Friction only: sqrt(1e-9/1e6) = 31.62 nm sets both checks.
		{"membrane: {friction: 1e6 Pa*s/m}\nsubphase: {upper: {kind: none}, lower: {kind: none}}\ngrid: {box: 1 um, n: 128}", OK, "holds 31.6 times the friction length"},
		{"membrane: {friction: 1e6 Pa*s/m}\nsubphase: {lower: {kind: wall, depth: 10 nm}}", OK, "combined screening length"},
		{"membrane: {viscosity: 1e-3 Pa*s*m}", Note, "check its unit"},
	}
	for _, tt := range tests {
		s := mustParse(t, tt.yaml).Scales()
		found := false
		var all []string
		for _, a := range s.Advice {
			all = append(all, fmt.Sprintf("%v: %s", a.Level, a.Text))
			if a.Level == tt.level && strings.Contains(a.Text, tt.want) {
				found = true
			}
		}
		if !found {
			t.Errorf("%q: no %v advice containing %q in\n%s", tt.yaml, tt.level, tt.want, strings.Join(all, "\n"))
		}
	}
}

// TestFlowMembrane: the flow membrane carries the kinds and depths.
func TestFlowMembrane(t *testing.T) {
	c := mustParse(t, "subphase: {upper: {kind: slip, depth: 2 um}, lower: {kind: none}}")
	m := c.FlowMembrane()
	if m.Upper.Kind != flow.Slip || m.Upper.Depth != 2e-6 || m.Lower.Kind != flow.None || m.Lower.Depth != 0 {
		t.Errorf("%+v", m)
	}
	if err := m.Validate(); err != nil {
		t.Error(err)
	}
}
