package flow

import (
	"bufio"
	"bytes"
	"errors"
	"github.com/memix-sim/memix/internal/refgen"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// psB2Misprint is the Petrov–Schwille exponent b₂ as printed in Biophys.
// J. 94, L41 (2008), later corrected to 0.51465 (Biophys. J. 103, 375
// (2012)).
const psB2Misprint = 0.61465

type mobilityRef struct {
	formula    string
	eps, value float64
}

func readMobilityRef(t *testing.T, path string) []mobilityRef {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var rows []mobilityRef
	sc := bufio.NewScanner(bytes.NewReader(b))
	for sc.Scan() {
		line := sc.Text()
		if line == "" || strings.HasPrefix(line, "#") || strings.HasPrefix(line, "formula,") {
			continue
		}
		f := strings.Split(line, ",")
		if len(f) != 3 {
			t.Fatalf("%s: bad line %q", path, line)
		}
		r := mobilityRef{formula: f[0]}
		if r.eps, err = strconv.ParseFloat(f[1], 64); err != nil {
			t.Fatal(err)
		}
		if r.value, err = strconv.ParseFloat(f[2], 64); err != nil {
			t.Fatal(err)
		}
		rows = append(rows, r)
	}
	if len(rows) == 0 {
		t.Fatalf("%s: no rows", path)
	}
	return rows
}

// TestClosedFormsAgainstSciPy checks the Go closed forms against an
// independent evaluation (testdata/mobility_gen.py: the formulas typed
// again from their sources, Bessel ratios from scipy.special.k0e/k1e).
// Reduced units η_m = 1, a = 1, so ε sets η_s = ε or ξ = ε².
//
// Tolerance 1e-13 relative: both sides evaluate the same elementary
// expressions with K₀, K₁ good to ~1e-15 (special's tests), so the
// difference is a few ulp amplified by cancellation in the PS numerator
// ln(2/ε) − γ + … near ε ≈ 1 (factor ≲ 10); observed maximum 8.9e-16.
func TestClosedFormsAgainstSciPy(t *testing.T) {
	rows := readMobilityRef(t, filepath.Join("testdata", "mobility_ref.csv"))
	const tol = 1e-13
	var maxErr float64
	for _, r := range rows {
		e := r.eps
		var got float64
		switch r.formula {
		case "sd":
			got = 4 * math.Pi / SaffmanDelbruckDrag(1, e, 1)
		case "ps":
			got = 4 * math.Pi / PetrovSchwilleDrag(1, e, 1)
		case "ps_2008":
			got = petrovSchwille(e, psB2Misprint)
		case "es":
			got = EvansSackmannDrag(1, e*e, 1) / (4 * math.Pi)
		case "es_ext":
			got = EvansSackmannExteriorDrag(1, e*e, 1) / (4 * math.Pi)
		case "brinkman":
			got = BrinkmanRotDrag(1, e*e, 1) / (4 * math.Pi)
		default:
			t.Fatalf("unknown formula %q", r.formula)
		}
		err := math.Abs(got/r.value - 1)
		maxErr = math.Max(maxErr, err)
		if !(err <= tol) {
			t.Errorf("%s(ε = %g) = %.17g, reference %.17g: relative error %.1e > %.0e", r.formula, e, got, r.value, err, tol)
		}
	}
	t.Logf("max relative error %.2e over %d values", maxErr, len(rows))
}

// TestMobilityTableFresh re-runs testdata/mobility_gen.py and fails if the
// committed table differs (same rows, values within 4 ulp).
func TestMobilityTableFresh(t *testing.T) {
	out := filepath.Join(t.TempDir(), "mobility_ref.csv")
	refgen.Run(t, filepath.Join("testdata", "mobility_gen.py"), out)
	committed := readMobilityRef(t, filepath.Join("testdata", "mobility_ref.csv"))
	fresh := readMobilityRef(t, out)
	if len(committed) != len(fresh) {
		t.Fatalf("testdata/mobility_ref.csv is stale: %d rows, generator gives %d; re-run testdata/mobility_gen.py", len(committed), len(fresh))
	}
	for i, c := range committed {
		f := fresh[i]
		ulp := math.Nextafter(math.Abs(c.value), math.Inf(1)) - math.Abs(c.value)
		if c.formula != f.formula || c.eps != f.eps || math.Abs(c.value-f.value) > 4*ulp {
			t.Fatalf("testdata/mobility_ref.csv is stale at row %d: %v, generator gives %v; re-run testdata/mobility_gen.py", i, c, f)
		}
	}
}

func deepMembrane(etaM, etaUp, etaLo float64) Membrane {
	return Membrane{Viscosity: etaM,
		Upper: Subphase{Kind: Deep, Viscosity: etaUp},
		Lower: Subphase{Kind: Deep, Viscosity: etaLo}}
}

// TestInclusionMobilitySelection checks which method Auto picks, that the
// diffusivities are k_BT/λ, and that each estimate equals its closed form
// or the numerical solution.
func TestInclusionMobilitySelection(t *testing.T) {
	const kT = 4.14e-21 // J, k_BT at 300 K
	a := 2e-9
	cases := []struct {
		name       string
		m          Membrane
		trans, rot MobilityMethod
	}{
		{"deep/deep", deepMembrane(1e-10, 1e-3, 1e-3), MethodPetrovSchwille, MethodNumerical},
		{"deep/none", Membrane{Viscosity: 1e-10, Upper: Subphase{Kind: Deep, Viscosity: 1e-3}}, MethodPetrovSchwille, MethodNumerical},
		{"none/none+friction", Membrane{Viscosity: 1e-10, Friction: 1e6}, MethodEvansSackmann, MethodBrinkmanRotation},
		{"wall/deep", Membrane{Viscosity: 1e-10, Upper: Subphase{Kind: Deep, Viscosity: 1e-3}, Lower: Subphase{Kind: Wall, Viscosity: 1e-3, Depth: 2e-9}}, MethodNumerical, MethodNumerical},
		{"deep/deep+friction", Membrane{Viscosity: 1e-10, Friction: 1e5, Upper: Subphase{Kind: Deep, Viscosity: 1e-3}, Lower: Subphase{Kind: Deep, Viscosity: 1e-3}}, MethodNumerical, MethodNumerical},
		{"deep, ε = 4000 > 1e3", deepMembrane(1e-15, 1e-3, 1e-3), MethodNumerical, MethodNumerical},
	}
	for _, c := range cases {
		mob, err := InclusionMobility(c.m, a, kT)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if mob.Translation.Method != c.trans || mob.Rotation.Method != c.rot {
			t.Errorf("%s: methods %s, %s; want %s, %s", c.name, mob.Translation.Method, mob.Rotation.Method, c.trans, c.rot)
		}
		for _, e := range []MobilityEstimate{mob.Translation, mob.Rotation} {
			if e.Diffusivity != kT/e.Drag || !(e.Drag > 0) || e.Source == "" || e.Validity == "" {
				t.Errorf("%s: inconsistent estimate %+v", c.name, e)
			}
		}
		// The forced numerical solution agrees with the automatic choice
		// within the automatic choice's stated error (plus the numerical
		// one).
		num, err := InclusionMobility(c.m, a, kT, WithTranslationMethod(MethodNumerical), WithRotationMethod(MethodNumerical))
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range [][2]MobilityEstimate{{mob.Translation, num.Translation}, {mob.Rotation, num.Rotation}} {
			tol := p[0].RelError + p[1].RelError
			if d := math.Abs(p[0].Drag/p[1].Drag - 1); !(d <= tol) {
				t.Errorf("%s: %s drag %g, numerical %g: relative difference %.2e > stated errors %.2e", c.name, p[0].Method, p[0].Drag, p[1].Drag, d, tol)
			}
		}
	}
	// Reduced sizes: ε = a(η₊+η₋)/η_m = 2e-9·2e-3/1e-10 = 0.04.
	mob, _ := InclusionMobility(cases[0].m, a, kT)
	if math.Abs(mob.Epsilon/0.04-1) > 1e-15 || mob.EpsilonSD != mob.Epsilon || mob.EpsilonScreen != 0 {
		t.Errorf("ε = %g (SD %g, screen %g), want 0.04, 0.04, 0", mob.Epsilon, mob.EpsilonSD, mob.EpsilonScreen)
	}
	mob, _ = InclusionMobility(cases[2].m, a, kT)
	if want := a * math.Sqrt(1e6/1e-10); math.Abs(mob.Epsilon/want-1) > 1e-15 || mob.EpsilonSD != 0 {
		t.Errorf("friction ε = %g, want %g", mob.Epsilon, want)
	}
}

// TestInclusionMobilityForced checks forced closed forms, including one
// used outside its assumptions (flagged with a NaN error estimate).
func TestInclusionMobilityForced(t *testing.T) {
	m := deepMembrane(1, 0.005, 0.005) // ε = 0.01
	mob, err := InclusionMobility(m, 1, 1, WithTranslationMethod(MethodSaffmanDelbruck), WithRotationMethod(MethodMembraneRotation))
	if err != nil {
		t.Fatal(err)
	}
	if mob.Translation.Drag != SaffmanDelbruckDrag(1, 0.01, 1) || mob.Rotation.Drag != MembraneRotDrag(1, 1) {
		t.Errorf("forced forms: %+v", mob)
	}
	if !math.IsNaN(mob.Rotation.RelError) || !strings.Contains(mob.Rotation.Validity, "outside its assumptions") {
		t.Errorf("membrane-only rotation forced over subphases not flagged: %+v", mob.Rotation)
	}
	mob, err = InclusionMobility(m, 1, 1, WithRotationMethod(MethodThinDiskRotation))
	if err != nil || mob.Rotation.Drag != ThinDiskRotDrag(0.01, 1) {
		t.Errorf("thin-disk rotation: %+v, %v", mob.Rotation, err)
	}
	for _, name := range methodNames {
		got, err := ParseMobilityMethod(strings.ToUpper(name))
		if err != nil || got.String() != name {
			t.Errorf("ParseMobilityMethod(%q) = %v, %v", name, got, err)
		}
	}
	if _, err := ParseMobilityMethod("fast"); err == nil {
		t.Error("ParseMobilityMethod accepted an unknown name")
	}
}

// TestInclusionMobilityErrors checks that bad input is named in the error.
func TestInclusionMobilityErrors(t *testing.T) {
	good := deepMembrane(1, 1, 1)
	cases := []struct {
		name   string
		m      Membrane
		a, kT  float64
		opts   []MobilityOption
		substr string
	}{
		{"zero radius", good, 0, 1, nil, "inclusion radius = 0"},
		{"negative radius", good, -1, 1, nil, "inclusion radius = -1"},
		{"NaN radius", good, math.NaN(), 1, nil, "inclusion radius = NaN"},
		{"infinite radius", good, math.Inf(1), 1, nil, "inclusion radius = +Inf"},
		{"kT", good, 1, 0, nil, "kT = 0"},
		{"membrane", Membrane{Viscosity: -1}, 1, 1, nil, "membrane viscosity = -1"},
		{"basis", good, 1, 1, []MobilityOption{WithBasisSize(0)}, "basis size = 0"},
		{"rotation method for translation", good, 1, 1, []MobilityOption{WithTranslationMethod(MethodBrinkmanRotation)}, "not a translational method"},
		{"translation method for rotation", good, 1, 1, []MobilityOption{WithRotationMethod(MethodPetrovSchwille)}, "not a rotational method"},
		{"ES without friction", good, 1, 1, []MobilityOption{WithTranslationMethod(MethodEvansSackmann)}, "needs friction > 0"},
		{"Brinkman without friction", good, 1, 1, []MobilityOption{WithRotationMethod(MethodBrinkmanRotation)}, "needs friction > 0"},
		{"PS without subphase", Membrane{Viscosity: 1, Friction: 1}, 1, 1, []MobilityOption{WithTranslationMethod(MethodPetrovSchwille)}, "needs a subphase"},
		{"SD beyond its range", good, 1, 1, []MobilityOption{WithTranslationMethod(MethodSaffmanDelbruck)}, "ε = a(η₊+η₋)/η_m = 2"},
	}
	for _, c := range cases {
		_, err := InclusionMobility(c.m, c.a, c.kT, c.opts...)
		if err == nil || !strings.Contains(err.Error(), c.substr) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.substr)
		}
	}
	// No finite translational drag: the error says why, and rotation is
	// still reported.
	for _, m := range []Membrane{
		{Viscosity: 1},
		{Viscosity: 1, Upper: Subphase{Kind: Slip, Viscosity: 1, Depth: 1}},
		{Viscosity: 1, Upper: Subphase{Kind: Slip, Viscosity: 1, Depth: 1}, Lower: Subphase{Kind: Slip, Viscosity: 1, Depth: 3}},
	} {
		mob, err := InclusionMobility(m, 1, 1)
		if !errors.Is(err, ErrNoFiniteDrag) || !strings.Contains(err.Error(), "Stokes paradox") {
			t.Errorf("%+v: error %v, want ErrNoFiniteDrag", m, err)
		}
		if !(mob.Rotation.Drag > 0) {
			t.Errorf("%+v: rotation not reported with ErrNoFiniteDrag: %+v", m, mob.Rotation)
		}
	}
}
