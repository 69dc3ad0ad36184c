package main

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/stability"
)

// adviceWith returns the advice rows whose text contains s.
func adviceWith(t *testing.T, doc map[string]any, s string) []map[string]any {
	t.Helper()
	var out []map[string]any
	for _, r := range rows(t, doc, "advice") {
		if strings.Contains(r["advice"].(string), s) {
			out = append(out, r)
		}
	}
	return out
}

// TestCheckInstability: check reports the predicted fastest wavelength
// and the grid points on it, warns below 4, and says whether the box holds
// an unstable mode. The wavelength is the closed-form one (see
// TestStabilityClosedForm): 2π/k* with k*² = (sqrt(Aξ/D_t) − ξ)/η_m.
func TestCheckInstability(t *testing.T) {
	for _, tt := range []struct {
		n     int
		level string
	}{{256, "ok"}, {32, "warn"}} {
		p := writeFile(t, strings.Replace(frictionConfig, "n: 256", "n: "+strconv.Itoa(tt.n), 1))
		doc := memixJSON(t, "check", p)
		c, _ := config.Load(p)
		act, _, _, _ := c.Stability()
		kmin, kmax := defaultKRange(c, act, true, stability.CahnHilliard{}, false)
		pk, _ := stability.Fastest(act.Rate, kmin, kmax)
		h := 1e-6 / float64(tt.n)
		r := row(t, doc, "instability", "branch", "active inclusions")
		if num(t, r["fastest_wavelength"]) != pk.Wavelength || num(t, r["points_per_wavelength"]) != pk.Wavelength/h || r["unstable"] != true {
			t.Errorf("n = %d: row %v, library λ = %g", tt.n, r, pk.Wavelength)
		}
		const a = 20 * config.Boltzmann * 300 * 1e15 / 4
		kStar := math.Sqrt((math.Sqrt(a*1e6/1e-14) - 1e6) / 1e-9)
		checkRel(t, "fastest wavelength", num(t, r["fastest_wavelength"]), 2*math.Pi/kStar, 1e-6) // Fastest resolves k to ~1e-8
		adv := adviceWith(t, doc, "predicted unstable, fastest wavelength")
		if len(adv) != 1 || adv[0]["level"] != tt.level || (tt.level == "warn") != strings.Contains(adv[0]["advice"].(string), "fewer than 4") {
			t.Errorf("n = %d: advice %v, want level %s", tt.n, adv, tt.level)
		}
		if len(adviceWith(t, doc, "the box holds")) != 1 || len(adviceWith(t, doc, "unstable modes, fastest (")) != 1 {
			t.Errorf("n = %d: no advice on the box modes: %v", tt.n, rows(t, doc, "advice"))
		}
	}

	// A box shorter than every unstable wavelength.
	p := writeFile(t, strings.Replace(frictionConfig, "grid: {n: 256, box: 1 um}", "grid: {n: 4, box: 3 nm}", 1))
	doc := memixJSON(t, "check", p)
	if adv := adviceWith(t, doc, "holds no unstable mode"); len(adv) != 1 || adv[0]["level"] != "note" {
		t.Errorf("small box: %v", rows(t, doc, "advice"))
	}

	// Nothing that can become unstable: no prediction, no table.
	doc = memixJSON(t, "check", writeFile(t, "inclusions: {model: none}\n"))
	if _, ok := doc["instability"]; ok || len(adviceWith(t, doc, "predicted")) != 0 {
		t.Errorf("inclusions.model = none: %v", doc["instability"])
	}
	// No finite drag and no diffusivity given: a note, not a failure.
	doc = memixJSON(t, "check", writeFile(t, "subphase:\n  upper: {kind: none}\n  lower: {kind: none}\n"))
	if adv := adviceWith(t, doc, "no instability predicted"); len(adv) != 1 || !strings.Contains(adv[0]["advice"].(string), "inclusions.trans_diffusion") {
		t.Errorf("no drag: %v", rows(t, doc, "advice"))
	}
}

// TestCheckViscosityContrast: with a composition-dependent viscosity,
// check reports the contrast η₊/η₋ and the conjugate-gradient iterations
// it implies, ½·sqrt(κ)·ln(2/tol) (the standard CG bound; common practice,
// as in flow.DefaultPCGMaxIterations), warning above the cap.
func TestCheckViscosityContrast(t *testing.T) {
	const base = "membrane: {viscosity: 1e-9 Pa*s*m, viscosity_rule: log-linear, viscosity_plus: 1e-8 Pa*s*m, viscosity_minus: 1e-10 Pa*s*m%s}\ninclusions: {model: none}\n"
	doc := memixJSON(t, "check", writeFile(t, strings.Replace(base, "%s", "", 1)))
	iters := math.Ceil(0.5 * math.Sqrt(100) * math.Log(2/1e-8))
	adv := adviceWith(t, doc, "viscosity contrast")
	if len(adv) != 1 || adv[0]["level"] != "note" || !strings.Contains(adv[0]["advice"].(string), "= 100 (log-linear rule)") ||
		!strings.Contains(adv[0]["advice"].(string), "about "+strconv.Itoa(int(iters))+" iterations") {
		t.Errorf("advice %v, want contrast 100 and %v iterations", adv, iters)
	}
	doc = memixJSON(t, "check", writeFile(t, strings.Replace(base, "%s", ", solver_iterations: 50", 1)))
	if adv := adviceWith(t, doc, "viscosity contrast"); len(adv) != 1 || adv[0]["level"] != "warn" {
		t.Errorf("cap 50: %v", adv)
	}
	// A constant viscosity has no contrast to report.
	doc = memixJSON(t, "check", "../../examples/free-patch.yaml")
	if len(adviceWith(t, doc, "viscosity contrast")) != 0 {
		t.Error("constant viscosity: contrast reported")
	}
}
