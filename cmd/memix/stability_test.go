package main

import (
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/stability"
)

// frictionConfig: extensile rods (β = 1) in a membrane on a frictional
// substrate without subphases, diffusivities given, so that D(k) = η_m k²
// + ξ and the growth rate has closed-form answers (test data).
const frictionConfig = `
temperature: 300 K
membrane: {viscosity: 1e-9 Pa*s*m, friction: 1e6 Pa*s/m}
subphase:
  upper: {kind: none}
  lower: {kind: none}
grid: {n: 256, box: 1 um}
inclusions:
  dipole: 20 kT
  density: 1000 um^-2
  rot_diffusion: 1 /s
  trans_diffusion: 0.01 um^2/s
`

// TestStabilityClosedForm checks the derived answers against closed forms
// of the growth rate of MODEL.md §2.3 (the membrane analogue of Saintillan
// & Shelley, Phys. Fluids 20, 123304 (2008); derived for this project),
//
//	s(k) = A k²/(η_m k² + ξ) − 4D_r − D_t k²,  A = −βσ₀c₀/4.
//
// With u = η_m k² + ξ, ds/d(k²) = 0 gives u* = sqrt(Aξ/D_t), so
// k*² = (u* − ξ)/η_m and s(k*) = (√A − √(ξD_t))²/η_m − 4D_r; the
// threshold s(k*) = 0 is A_c = (√(ξD_t) + 2√(D_r η_m))².
func TestStabilityClosedForm(t *testing.T) {
	p := writeFile(t, frictionConfig)
	const (
		etaM, xi, dr, dt = 1e-9, 1e6, 1.0, 1e-14
		c0               = 1e15 // 1/m²
	)
	sigma := -20 * config.Boltzmann * 300 // J, extensile
	a := -sigma * c0 / 4
	u := math.Sqrt(a * xi / dt)
	kStar := math.Sqrt((u - xi) / etaM)
	sStar := math.Pow(math.Sqrt(a)-math.Sqrt(xi*dt), 2)/etaM - 4*dr
	ac := math.Pow(math.Sqrt(xi*dt)+2*math.Sqrt(dr*etaM), 2)
	uc := math.Sqrt(ac * xi / dt)
	kc := math.Sqrt((uc - xi) / etaM)

	doc := memixJSON(t, "stability", p)
	ans := func(q string) float64 { return num(t, row(t, doc, "answers", "quantity", q)["active"]) }
	// Fastest resolves K to about 1e-8 relative at a smooth maximum (its
	// documented golden-section limit); 1e-6 leaves a factor of 100.
	checkRel(t, "fastest k", ans("fastest_k"), kStar, 1e-6)
	checkRel(t, "fastest wavelength", ans("fastest_wavelength"), 2*math.Pi/kStar, 1e-6)
	// At the maximum s is flat to second order: the rate is exact to
	// round-off of its three terms (no cancellation here: s ≈ 0.99 A/η_m).
	checkRel(t, "fastest rate", ans("fastest_rate"), sStar, 1e-12)
	checkRel(t, "growth time", ans("growth_time"), 1/sStar, 1e-12)
	// The threshold is a root of the peak rate in σ₀c₀ (Brent, relative
	// tolerance 1e-12), each evaluation a golden-section maximum whose rate
	// is exact to round-off near 4D_r: 1e-9 is a factor of 1000 above.
	checkRel(t, "critical stress", ans("critical_stress"), -4*ac, 1e-9)
	checkRel(t, "critical dipole", ans("critical_dipole"), 4*ac/c0, 1e-9)
	checkRel(t, "critical density", ans("critical_density"), 4*ac/-sigma, 1e-9)
	// The threshold wavenumber sits on a maximum flat in k: only to about
	// sqrt of the rate's precision, 1e-6 relative as for k*.
	checkRel(t, "critical wavelength", ans("critical_wavelength"), 2*math.Pi/kc, 1e-6)

	// Against the library on the same interval: the same computation.
	c, _ := config.Load(p)
	act, _, _, err := c.Stability()
	if err != nil {
		t.Fatal(err)
	}
	kmin, kmax := num(t, doc["kmin"]), num(t, doc["kmax"])
	pk, _ := stability.Fastest(act.Rate, kmin, kmax)
	bands, _ := stability.UnstableBands(act.Rate, kmin, kmax)
	if ans("fastest_k") != pk.K || len(bands) != 1 {
		t.Errorf("fastest k %v, library %v; bands %v", ans("fastest_k"), pk.K, bands)
	}
	short, long := bands[0].Wavelengths()
	if ans("band_shortest") != short || ans("band_longest") != long {
		t.Errorf("band %v–%v, library %v–%v", ans("band_shortest"), ans("band_longest"), short, long)
	}
	// The box modes the dealiased grid keeps in every direction: the 2/3
	// rule keeps |n| ≤ (256 − 1)/3 = 85 (package spectral).
	lx, ly := c.Grid.Lengths()
	modes, _ := stability.BoxModes(act.Rate, float64(lx), float64(ly), 2*math.Pi*85/float64(lx))
	unstable := 0
	for _, m := range modes {
		if m.Rate > 0 {
			unstable++
		}
	}
	if got := row(t, doc, "answers", "quantity", "box_unstable_modes")["active"]; got != float64(unstable) || unstable == 0 {
		t.Errorf("unstable box modes %v, library %d", got, unstable)
	}
	if got := row(t, doc, "answers", "quantity", "box_fastest_rate")["active"]; got != modes[0].Rate {
		t.Errorf("box's fastest rate %v, library %v", got, modes[0].Rate)
	}
	if got := row(t, doc, "answers", "quantity", "points_per_wavelength")["active"]; num(t, got) != pk.Wavelength/(1e-6/256) {
		t.Errorf("points per wavelength %v", got)
	}

	// The table of s(k) is the closed form at the requested wavenumbers.
	doc = memixJSON(t, "stability", p, "--kmin", "1/um", "--kmax", "1 nm^-1", "--points", "7")
	rs := rows(t, doc, "rates")
	if len(rs) != 7 || num(t, rs[0]["k"]) != 1e6 || num(t, rs[6]["k"]) != 1e9 {
		t.Fatalf("rates table %v", rs)
	}
	for _, r := range rs {
		k := num(t, r["k"])
		want := a*k*k/(etaM*k*k+xi) - 4*dr - dt*k*k
		if e := math.Abs(num(t, r["rate_active"]) - want); e > 1e-12*(a*k*k/(etaM*k*k+xi)+4*dr+dt*k*k) {
			t.Errorf("s(%g) = %v, closed form %v", k, r["rate_active"], want)
		}
	}
}

// TestStabilityExamples: every example runs, in every format, and the
// text says the values are predictions.
func TestStabilityExamples(t *testing.T) {
	files, _ := filepath.Glob("../../examples/*.yaml")
	for _, f := range files {
		out, errs, code := memix(t, "stability", f, "--points", "5")
		if code != 0 || !strings.Contains(out, "model predictions") || !strings.Contains(out, "Predicted instability") {
			t.Errorf("%s: exit %d\n%s%s", f, code, errs, out)
		}
		doc := memixJSON(t, "stability", f, "--points", "5")
		if len(rows(t, doc, "rates")) != 5 || doc["model_active"] == nil || doc["model_moment"] == nil {
			t.Errorf("%s: JSON %v", f, keys(doc))
		}
		out, _, code = memix(t, "stability", f, "--points", "5", "--csv")
		head := csvBlock(t, out, "rates")[0]
		want := "k [1/m],wavelength [m],rate_active [1/s],rate_moment [1/s]"
		if c, err := config.Load(f); err == nil && c.Lipids.Model == "phase" {
			want += ",rate_lipids [1/s]" // the Cahn–Hilliard branch
		}
		if code != 0 || strings.Join(head, ",") != want {
			t.Errorf("%s --csv: header %q", f, head)
		}
	}
}

// TestStabilityKinetic: with self-propulsion the kinetic operator is used
// at the truncation stability.Rates settles on, and reported.
func TestStabilityKinetic(t *testing.T) {
	// D_r = 100/s and V₀ = 1 µm/s: kV₀/D_r ≈ 2 at the fastest k, so
	// self-propulsion matters there and a few dozen modes converge.
	cfg := strings.Replace(frictionConfig, "rot_diffusion: 1 /s", "rot_diffusion: 100 /s", 1)
	cfg = strings.Replace(cfg, "n: 256", "n: 64", 1)
	p := writeFile(t, cfg+"  model: kinetic\n  speed: 1 um/s\n")
	doc := memixJSON(t, "stability", p)
	c, _ := config.Load(p)
	act, _, _, _ := c.Stability()
	kmin, kmax := num(t, doc["kmin"]), num(t, doc["kmax"])
	ks := logSpace(kmin, kmax, stability.ScanPoints)
	conv, err := stability.Rates(make([]float64, len(ks)), act, ks, 0)
	if err != nil {
		t.Fatal(err)
	}
	if num(t, doc["truncation"]) != float64(conv.Modes) || num(t, doc["truncation_change"]) != conv.Change {
		t.Errorf("truncation %v (change %v), library %d (%g)", doc["truncation"], doc["truncation_change"], conv.Modes, conv.Change)
	}
	if !strings.Contains(doc["model_active"].(string), "kinetic operator") {
		t.Errorf("model %v", doc["model_active"])
	}
	kin, _ := stability.NewKinetic(act, conv.Modes)
	pk, _ := stability.Fastest(kin.Rate, kmin, kmax)
	if got := num(t, row(t, doc, "answers", "quantity", "fastest_rate")["active"]); got != pk.Rate {
		t.Errorf("fastest rate %v, library %v", got, pk.Rate)
	}
	// Self-propulsion changes the rates: the closed form no longer applies.
	if pk.Rate == act.Rate(pk.K) {
		t.Errorf("kinetic rate equals the V₀ = 0 closed form at k = %g", pk.K)
	}
	// The box modes, found by evaluating the operator near the peak only,
	// against every mode the dealiased grid keeps (|n| ≤ (64 − 1)/3 = 21).
	modes, err := stability.BoxModes(kin.Rate, 1e-6, 1e-6, 2*math.Pi*21/1e-6)
	if err != nil {
		t.Fatal(err)
	}
	unstable := 0
	for _, m := range modes {
		if m.Rate > 0 {
			unstable++
		}
	}
	ans := func(q string) any { return row(t, doc, "answers", "quantity", q)["active"] }
	if unstable == 0 || ans("box_unstable_modes") != float64(unstable) || ans("box_fastest_rate") != modes[0].Rate ||
		ans("box_fastest_mode") != fmt.Sprintf("(%d, %d)", modes[0].Nx, modes[0].Ny) {
		t.Errorf("box: %v unstable, fastest %v %v; every mode: %d unstable, fastest (%d, %d) %v",
			ans("box_unstable_modes"), ans("box_fastest_mode"), ans("box_fastest_rate"), unstable, modes[0].Nx, modes[0].Ny, modes[0].Rate)
	}
}

// TestStabilityPhase checks the Cahn–Hilliard branch against s(k) =
// −Mk²(3φ₀² − 1 + ε²k²) [Cahn & Hilliard, J. Chem. Phys. 28, 258 (1958);
// MODEL.md §3], whose maximum is at k*² = (1 − 3φ₀²)/(2ε²) with rate
// M(1 − 3φ₀²)²/(4ε²).
func TestStabilityPhase(t *testing.T) {
	p := writeFile(t, `
grid: {n: 128, box: 2 um}
inclusions: {model: none}
lipids: {model: phase, diffusion: 1 um^2/s, interface: 20 nm}
initial: {lipids: random, mean: 0.2}
`)
	doc := memixJSON(t, "stability", p)
	const m, eps, phi = 1e-12, 20e-9, 0.2
	g := 1 - 3*phi*phi
	kStar := math.Sqrt(g/2) / eps
	ans := func(q string) float64 { return num(t, row(t, doc, "answers", "quantity", q)["lipids"]) }
	checkRel(t, "fastest k", ans("fastest_k"), kStar, 1e-6) // golden-section limit 1e-8, factor 100
	checkRel(t, "fastest rate", ans("fastest_rate"), m*g*g/(4*eps*eps), 1e-12)
	// Unstable band 0 < k < sqrt(1 − 3φ₀²)/ε: its short end.
	checkRel(t, "shortest unstable wavelength", ans("band_shortest"), 2*math.Pi*eps/math.Sqrt(g), 1e-12)
	if doc["model_active"] != nil {
		t.Errorf("inclusions.model = none, yet an active branch: %v", doc["model_active"])
	}
}

// TestStabilityCompare: --compare and --subphases add configurations to
// the comparison table, the table of s(k) and the figure.
func TestStabilityCompare(t *testing.T) {
	p := writeFile(t, frictionConfig)
	fig := filepath.Join(t.TempDir(), "figs", "s.png")
	doc := memixJSON(t, "stability", p, "--compare", "../../examples/free-patch.yaml", "--subphases", "--figure", fig, "--points", "9")
	cmp := rows(t, doc, "comparison")
	// The configuration, the comparison, deep, four walls, the cushion.
	if len(cmp) != 2+2+len(subphaseDepths) {
		t.Fatalf("%d comparison rows: %v", len(cmp), cmp)
	}
	for i, want := range []string{"c", "free-patch", "lower deep", "lower wall at 10 nm"} {
		if cmp[i]["config"] != want {
			t.Errorf("row %d: %v, want %s", i, cmp[i]["config"], want)
		}
	}
	// Each row is the analysis of that configuration alone on the same
	// interval.
	c, _ := config.Load("../../examples/free-patch.yaml")
	act, _, _, err := c.Stability()
	if err != nil {
		t.Fatal(err)
	}
	pk, _ := stability.Fastest(act.Rate, num(t, doc["kmin"]), num(t, doc["kmax"]))
	if got := num(t, cmp[1]["fastest_rate"]); got != pk.Rate {
		t.Errorf("free-patch fastest rate %v, library %v", got, pk.Rate)
	}
	// A wall 10 nm below screens long wavelengths (k²/D(k) → 0 as k → 0
	// instead of a constant): a stronger activity is needed than with
	// friction alone (the configuration itself).
	if w, f := num(t, cmp[3]["critical_stress"]), num(t, cmp[0]["critical_stress"]); !(math.Abs(w) > math.Abs(f)) {
		t.Errorf("critical stress with a 10 nm wall %v, friction alone %v", w, f)
	}
	if r := rows(t, doc, "rates")[0]; len(r) != 2+2+len(cmp)-1 {
		t.Errorf("rates row %v", r)
	}
	fh, err := os.Open(fig)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	img, err := png.Decode(fh)
	if err != nil || img.Bounds().Dx() != 800 || img.Bounds().Dy() != 600 {
		t.Errorf("figure: %v, %v", err, img.Bounds())
	}
}

// TestStabilityBoxTooSmall: a box shorter than every unstable wavelength
// holds no unstable mode, and says so.
func TestStabilityBoxTooSmall(t *testing.T) {
	p := writeFile(t, strings.Replace(frictionConfig, "grid: {n: 256, box: 1 um}", "grid: {n: 4, box: 3 nm}", 1))
	out, _, code := memix(t, "stability", p)
	if code != 0 || !strings.Contains(out, "the box holds no unstable mode") {
		t.Errorf("exit %d\n%s", code, out)
	}
	doc := memixJSON(t, "stability", p)
	if r := row(t, doc, "answers", "quantity", "box_unstable_modes"); r["active"] != 0.0 {
		t.Errorf("unstable box modes %v", r["active"])
	}
	if r := row(t, doc, "answers", "quantity", "unstable"); r["active"] != true {
		t.Errorf("unstable %v: the infinite membrane is unstable", r["active"])
	}
}

func TestStabilityBad(t *testing.T) {
	p := writeFile(t, frictionConfig)
	wantBad(t, []string{"stability", p, "--kmin", "1 um"}, "--kmin", "wrong dimension", "1/m")
	wantBad(t, []string{"stability", p, "--kmin", "10/um", "--kmax", "1/um"}, "--kmax", "> --kmin")
	wantBad(t, []string{"stability", p, "--points", "1"}, "--points", "[2, 100000]")
	wantBad(t, []string{"stability", p, "--compare", filepath.Join(t.TempDir(), "none.yaml")}, "none.yaml")
	wantBad(t, []string{"stability", writeFile(t, "inclusions: {model: none}\n")}, "inclusions.model", "nothing can become unstable")
	// No subphase, no friction, no diffusivity given: the mobility has no
	// finite translational drag.
	wantBad(t, []string{"stability", writeFile(t, "subphase:\n  upper: {kind: none}\n  lower: {kind: none}\n")}, "inclusions.trans_diffusion", "give it")
	wantBad(t, []string{"stability", writeFile(t, "inclusions: {alignment: 2}\n")}, "inclusions.alignment", "[-1, 1]")
}
