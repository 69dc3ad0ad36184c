package config

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/memix-sim/memix/stability"
)

// warningsFor returns the resolution warnings of yaml by key.
func warningsFor(t *testing.T, yaml string) map[string]*FieldError {
	t.Helper()
	c := mustParse(t, yaml)
	m := map[string]*FieldError{}
	for _, p := range c.ResolutionWarnings() {
		if !errors.Is(p, ErrResolution) {
			t.Errorf("%v does not wrap ErrResolution", p)
		}
		m[p.Key] = p
	}
	return m
}

// TestResolutionInterfaceThreshold: the interface warning turns on when
// fewer than 2 grid points fall across ε√2, i.e. below ε = √2·h. On a
// 5 µm box with 128 points h = 39.0625 nm, so the threshold is
// ε = 55.243 nm; 0.1 % either side must fall on either side of it (the
// spinodal wavelength 2π√2ε ≈ 12.6 h is resolved throughout).
func TestResolutionInterfaceThreshold(t *testing.T) {
	h := 5e-6 / 128
	eps := math.Sqrt2 * h
	for _, tt := range []struct {
		f    float64
		warn bool
	}{{1.001, false}, {0.999, true}, {0.5, true}, {2, false}} {
		yaml := fmt.Sprintf("inclusions: {model: none}\nlipids: {model: phase, interface: %.17g}\ninitial: {lipids: random}\ngrid: {n: 128, box: 5 um}", eps*tt.f)
		w := warningsFor(t, yaml)
		p, got := w["lipids.interface"]
		if got != tt.warn {
			t.Errorf("ε = %.4g·√2h: warning %v, want %v (%v)", tt.f, got, tt.warn, p)
		}
		if len(w) > 1 || (len(w) == 1 && !got) {
			t.Errorf("ε = %.4g·√2h: unexpected warnings %v", tt.f, w)
		}
		if got && !strings.Contains(p.Error(), "points across the interface") {
			t.Errorf("message %q", p)
		}
	}
}

// TestResolutionSpinodal: inside the spinodal the Cahn–Hilliard growth
// rate −Mk²(3φ₀² − 1 + ε²k²) peaks at k* = sqrt((1 − 3φ₀²)/2)/ε [Cahn &
// Hilliard, J. Chem. Phys. 28, 258 (1958); the maximum of the quadratic
// in k²], λ* = 2π/k*. The warning must quote λ* (to the 4 digits of its
// text; Fastest finds k* to about 1e-8) and ask for the even point count
// that puts 4 points on it. Outside the spinodal nothing grows and
// nothing is reported.
func TestResolutionSpinodal(t *testing.T) {
	const eps, phi0, box = 100e-9, 0.2, 20e-6
	kStar := math.Sqrt((1-3*phi0*phi0)/2) / eps
	lambda := 2 * math.Pi / kStar
	n := 64 // h = 312.5 nm: λ*/h ≈ 3.03 points
	need := int(math.Ceil(box / (lambda / 4)))
	need += need % 2
	yaml := fmt.Sprintf("inclusions: {model: none}\nlipids: {model: phase, interface: 100 nm}\ninitial: {lipids: random, mean: %g}\ngrid: {n: %d, box: 20 um}", phi0, n)
	p := warningsFor(t, yaml)["grid.n"]
	if p == nil {
		t.Fatal("no warning for grid.n")
	}
	msg := p.Error()
	for _, want := range []string{Length(lambda).String(), "spinodal", fmt.Sprintf("≥ %d×%d points", need, need), `"64"`} {
		if !strings.Contains(msg, want) {
			t.Errorf("%q lacks %q", msg, want)
		}
	}
	t.Logf("λ* = %s (closed form); %s", Length(lambda), msg)
	// Just resolved: the even count that gives at least 4 points (the
	// interface, 2 points across ε√2, still needs more).
	if w := warningsFor(t, strings.Replace(yaml, "n: 64", fmt.Sprintf("n: %d", need), 1)); w["grid.n"] != nil || w["lipids.interface"] == nil {
		t.Errorf("n = %d: %v", need, w)
	}
	// Outside the spinodal (|φ₀| > 1/√3) the uniform state is stable.
	if w := warningsFor(t, strings.Replace(yaml, "mean: 0.2", "mean: 0.7", 1)); w["grid.n"] != nil {
		t.Errorf("φ₀ = 0.7: %v", w["grid.n"])
	}
}

// TestResolutionActiveThreshold: the active warning turns on below 4
// points per fastest-growing wavelength λ* of s_act(k) (MODEL.md §2.3).
// λ* comes from package stability (tested there against its closed
// form); here the grid sizes just either side of box/(λ*/4) must fall on
// either side of the threshold, and nx given alone must be named.
func TestResolutionActiveThreshold(t *testing.T) {
	const base = "inclusions: {dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}\nlipids: {model: passive}\n"
	c := mustParse(t, base+"grid: {n: 32, box: 5 um}")
	act, _, _, err := c.Stability()
	if err != nil {
		t.Fatal(err)
	}
	peak, err := stability.Fastest(act.Rate, 1e4, 1e9)
	if err != nil || peak.AtBound {
		t.Fatalf("peak %+v, %v", peak, err)
	}
	nCrit := 5e-6 / (peak.Wavelength / wavePoints) // 17.4 for λ* ≈ 1.147 µm
	lo := 2 * int(math.Floor(nCrit/2))
	for _, tt := range []struct {
		n    int
		warn bool
	}{{lo, true}, {lo + 2, false}, {8, true}, {128, false}} {
		w := warningsFor(t, base+fmt.Sprintf("grid: {n: %d, box: 5 um}", tt.n))
		if _, got := w["grid.n"]; got != tt.warn {
			t.Errorf("n = %d (critical %.3g): warning %v, want %v", tt.n, nCrit, got, tt.warn)
		}
	}
	w := warningsFor(t, base+fmt.Sprintf("grid: {nx: %d, ny: 64, box: 5 um}", lo))
	if p := w["grid.nx"]; p == nil || !strings.Contains(p.Error(), fmt.Sprintf(`"%d"`, lo)) {
		t.Errorf("nx = %d alone: %v", lo, w)
	}
	// Self-propelled inclusions use the kinetic operator: still reported.
	w = warningsFor(t, strings.Replace(base, "dipole:", "model: kinetic, speed: 0.1 um/s, dipole:", 1)+"grid: {n: 8, box: 5 um}")
	if w["grid.n"] == nil {
		t.Errorf("kinetic with speed on 8²: no warning")
	}
	// Contractile rods (β = 1) are stable: nothing to resolve.
	if w := warningsFor(t, strings.Replace(base, "dipole:", "kind: contractile, dipole:", 1)+"grid: {n: 8, box: 5 um}"); len(w) != 0 {
		t.Errorf("stable inclusions: %v", w)
	}
}

// TestRunProblems: what memix run refuses in a valid configuration.
func TestRunProblems(t *testing.T) {
	for _, tt := range []struct {
		yaml, key string
	}{
		{"inclusions: {model: none}\nlipids: {model: none}", "inclusions.model"},
		{"subphase: {upper: {kind: none}, lower: {kind: none}}", "inclusions.trans_diffusion"},
	} {
		ps := mustParse(t, tt.yaml).RunProblems()
		if len(ps) != 1 || ps[0].Key != tt.key {
			t.Errorf("%q: %v, want one problem for %s", tt.yaml, ps, tt.key)
		}
	}
	for _, ok := range []string{"", "subphase: {upper: {kind: none}, lower: {kind: none}}\ninclusions: {trans_diffusion: 1 um^2/s}", "inclusions: {model: none}"} {
		if ps := mustParse(t, ok).RunProblems(); len(ps) != 0 {
			t.Errorf("%q: %v", ok, ps)
		}
	}
}

// TestStepConflictsWithFallbacks: the step keys are compared with the
// values their fallbacks give (dt_max = end/200), not only when both keys
// are given.
func TestStepConflictsWithFallbacks(t *testing.T) {
	for _, tt := range []struct {
		yaml, key, want string
	}{
		{"time: {end: 10 ms, dt_min: 1 ms}", "time.dt_min", "time.end / 200"},
		{"time: {dt_max: 1 h}", "time.dt_max", "100 τ₀"},
	} {
		_, err := Parse([]byte(tt.yaml), "t.yaml")
		ps := Problems(err)
		if len(ps) != 1 || ps[0].Key != tt.key || !errors.Is(ps[0], ErrConflict) || !strings.Contains(ps[0].Error(), tt.want) {
			t.Errorf("%q: %v; want a conflict for %s mentioning %q", tt.yaml, err, tt.key, tt.want)
		}
	}
	if _, err := Parse([]byte("time: {end: 10 ms, dt_min: 40 us}"), "t.yaml"); err != nil {
		t.Errorf("dt_min below end/200: %v", err)
	}
}

// FuzzSetAll: no key and value given on the command line (memix run
// --set key=value, which goes through SetAll) makes it panic; every
// failure is a list of FieldErrors whose messages start with their key,
// and a success validates.
func FuzzSetAll(f *testing.F) {
	for _, kv := range [][2]string{
		{"grid.n", "64"}, {"grid.n", "127"}, {"time.end", "3 nm"}, {"time.dt_min", "1 s"},
		{"inclusions.model", "kinetic"}, {"inclusions.speed", "1 um/s"}, {"lipids.model", "phase"},
		{"initial.lipids", "file"}, {"initial.file", "x.h5"}, {"output.snapshots", "1e9"},
		{"nokey", "1"}, {"membrane", "5"}, {"temperature", "1 kT"}, {"inclusions.dipole", "-0 kT"},
		{"time.max_steps", "1e12"}, {"initial.seed", "9007199254740993"}, {"grid.box", "1 µm²/µm"},
	} {
		f.Add(kv[0], kv[1])
	}
	f.Fuzz(func(t *testing.T, key, value string) {
		c, err := Default().SetAll([][2]string{{key, value}})
		if err == nil {
			if verr := c.Validate(); verr != nil {
				t.Fatalf("SetAll accepted an invalid configuration: %v", verr)
			}
			for _, p := range append(c.RunProblems(), c.ResolutionWarnings()...) {
				if !strings.HasPrefix(p.Error(), p.Key) {
					t.Fatalf("message %q does not start with its key", p)
				}
			}
			return
		}
		ps := Problems(err)
		if len(ps) == 0 {
			t.Fatalf("error of an unexpected kind: %#v", err)
		}
		for _, p := range ps {
			if !strings.HasPrefix(p.Error(), p.Key) {
				t.Fatalf("message %q does not start with its key", p)
			}
		}
	})
}
