package main

import (
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/flow"
)

// eulerGamma is the Euler–Mascheroni constant (common knowledge; digits
// from memory, as in OEIS A001620).
const eulerGamma = 0.5772156649015329

// roundOff is the relative tolerance for a value the command prints
// against the same formula evaluated independently in a test: a handful
// of logarithms, powers and divisions, each exact to half an ulp, give
// a few 1e-16; 1e-13 leaves a factor of several hundred.
const roundOff = 1e-13

// deepConfig is a membrane between two deep water layers (test data).
const deepConfig = `
temperature: 300 K
membrane: {viscosity: 1e-9 Pa*s*m}
subphase:
  upper: {kind: deep, viscosity: 1 mPa*s}
  lower: {kind: deep, viscosity: 1 mPa*s}
grid: {n: 64, box: 10 um}
`

// TestMobilityExamples: every example gives the library's diffusivities
// and drags, in JSON and CSV, and says they are predictions.
func TestMobilityExamples(t *testing.T) {
	files, _ := filepath.Glob("../../examples/*.yaml")
	for _, f := range files {
		c, _ := config.Load(f)
		mob, err := flow.InclusionMobility(c.FlowMembrane(), 2e-9, float64(c.KT()))
		if err != nil {
			t.Fatal(err)
		}
		doc := memixJSON(t, "mobility", f, "--radius", "2nm")
		for name, want := range map[string]float64{
			"translational_diffusivity": mob.Translation.Diffusivity,
			"translational_drag":        mob.Translation.Drag,
			"rotational_diffusivity":    mob.Rotation.Diffusivity,
			"rotational_drag":           mob.Rotation.Drag,
		} {
			r := row(t, doc, "coefficients", "name", name)
			if got := num(t, r["value"]); got != want {
				t.Errorf("%s %s: %g, want %g (flow.InclusionMobility)", f, name, got, want)
			}
		}
		if doc["epsilon"] != mob.Epsilon || doc["epsilon_definition"] != mob.EpsilonDef {
			t.Errorf("%s: ε %v (%v), want %v", f, doc["epsilon"], doc["epsilon_definition"], mob.Epsilon)
		}
		if r := row(t, doc, "methods", "quantity", "translation"); r["method"] != mob.Translation.Method.String() || r["source"] != mob.Translation.Source {
			t.Errorf("%s: method row %v", f, r)
		}

		out, _, code := memix(t, "mobility", f, "--csv")
		if code != 0 || csvBlock(t, out, "coefficients")[0][1] != "value" || !strings.Contains(strings.Join(csvBlock(t, out, "methods")[0], ","), "rel_error") {
			t.Errorf("%s --csv: exit %d\n%s", f, code, out)
		}
		out, _, _ = memix(t, "mobility", f)
		if !strings.Contains(out, "model predictions") || !strings.Contains(out, "µm²/s") {
			t.Errorf("%s: text output lacks the prediction note or readable units:\n%s", f, out)
		}
	}
}

// TestMobilityClosedForms checks the printed D_T against the published
// formulas, evaluated here independently.
func TestMobilityClosedForms(t *testing.T) {
	p := writeFile(t, deepConfig)
	const (
		kT   = config.Boltzmann * 300 // J
		etaM = 1e-9                   // Pa·s·m
		a    = 2e-9                   // m
	)
	eps := a * 2e-3 / etaM // a(η₊+η₋)/η_m
	l := math.Log(2 / eps)

	// Saffman & Delbrück, PNAS 72, 3111 (1975): D_T = k_BT/(4πη_m)(ln(2/ε) − γ).
	doc := memixJSON(t, "mobility", p, "--radius", "2nm", "--method", "saffman-delbruck")
	sd := kT / (4 * math.Pi * etaM) * (l - eulerGamma)
	checkRel(t, "Saffman–Delbrück D_T", num(t, row(t, doc, "coefficients", "name", "translational_diffusivity")["value"]), sd, roundOff)
	if num(t, doc["epsilon"]) != eps {
		t.Errorf("ε = %v, want %v", doc["epsilon"], eps)
	}

	// Petrov & Schwille, Biophys. J. 94, L41 (2008), with b₂ = 0.51465 as
	// corrected in Biophys. J. 103, 375 (2012) (MODEL.md §1.2).
	const c1, b1, c2, b2 = 0.73761, 2.74819, 0.52119, 0.51465
	ps := kT / (4 * math.Pi * etaM) * (l - eulerGamma + 4*eps/math.Pi - eps*eps/2*l) /
		(1 - math.Pow(eps, 3)/math.Pi*l + c1*math.Pow(eps, b1)/(1+c2*math.Pow(eps, b2)))
	doc = memixJSON(t, "mobility", p, "--radius", "2nm")
	checkRel(t, "Petrov–Schwille D_T", num(t, row(t, doc, "coefficients", "name", "translational_diffusivity")["value"]), ps, roundOff)
	if m := row(t, doc, "coefficients", "name", "translational_diffusivity")["method"]; m != "petrov-schwille" {
		t.Errorf("auto chose %v, want petrov-schwille", m)
	}

	// Every spelling of the radius is the same float64.
	for _, r := range []string{"2 nm", "0.002 um", "2e-9", "20 Å"} {
		d := memixJSON(t, "mobility", p, "--radius", r)
		if got := num(t, d["radius"]); got != a {
			t.Errorf("--radius %q: %v m, want %v", r, got, a)
		}
	}
}

// TestMobilityNoDrag: without subphase or friction nothing resists
// translation (2D Stokes paradox): D_T = 0, the drag is null, and D_R is
// the membrane-only rotation k_BT/(4πη_m a²) [Saffman, J. Fluid Mech. 73,
// 593 (1976); from memory].
func TestMobilityNoDrag(t *testing.T) {
	p := writeFile(t, "membrane: {viscosity: 1e-9 Pa*s*m}\nsubphase:\n  upper: {kind: none}\n  lower: {kind: none}\n")
	out, _, code := memix(t, "mobility", p, "--radius", "3nm")
	if code != 0 || !strings.Contains(out, "2D Stokes paradox") {
		t.Fatalf("exit %d\n%s", code, out)
	}
	doc := memixJSON(t, "mobility", p, "--radius", "3nm")
	if v := row(t, doc, "coefficients", "name", "translational_drag")["value"]; v != nil {
		t.Errorf("translational drag %v, want null (infinite)", v)
	}
	want := config.Boltzmann * 300 / (4 * math.Pi * 1e-9 * 9e-18)
	checkRel(t, "membrane-only D_R", num(t, row(t, doc, "coefficients", "name", "rotational_diffusivity")["value"]), want, roundOff)
}

func TestMobilityBad(t *testing.T) {
	p := writeFile(t, deepConfig)
	wantBad(t, []string{"mobility", p, "--radius", "2 s"}, "--radius", `"2 s"`, "wrong dimension", "valid: > 0 m")
	wantBad(t, []string{"mobility", p, "--radius", "-1nm"}, "--radius", "out of range")
	wantBad(t, []string{"mobility", p, "--radius", "2 parsec"}, "--radius", "unknown unit")
	wantBad(t, []string{"mobility", p, "--method", "fastest"}, "--method", `"fastest"`, "petrov-schwille")
	wantBad(t, []string{"mobility", p, "--method", "evans-sackmann"}, "--method", "needs friction")
	wantBad(t, []string{"mobility", writeFile(t, "membrane: {viscosity: -1}\n")}, "membrane.viscosity", "> 0")
	wantBad(t, []string{"mobility", p, "--json", "--csv"}, "exclude each other")
}
