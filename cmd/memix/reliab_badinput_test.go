package main

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
)

// badInput is a configuration with one mistake. runOnly marks a mistake
// that config.Parse accepts (the configuration is valid for the other
// commands) but memix run refuses: a grid that does not resolve a length
// of the run (config.ResolutionWarnings), or nothing to simulate
// (config.RunProblems).
type badInput struct {
	name    string
	yaml    string
	env     map[string]string // environment overrides
	key     string            // the key the message must name
	err     error             // the sentinel it must wrap
	want    []string          // further words of the message
	runOnly bool
}

// badInputs is the catalogue of bad configurations that TestBadInputsEverywhere
// sends through config.Parse, memix check and memix run. Each differs from
// the defaults in one mistake (two keys where the mistake is a
// combination).
var badInputs = []badInput{
	// A quantity of the wrong dimension: a length in Pa*s and its kin.
	{name: "length in Pa*s", yaml: "grid: {box: 5 Pa*s}", key: "grid.box", err: config.ErrDimension, want: []string{"expected a length", "got a viscosity"}},
	{name: "interface in Pa*s*m", yaml: "lipids: {model: phase, interface: 20 Pa*s*m}", key: "lipids.interface", err: config.ErrDimension, want: []string{"expected a length"}},
	{name: "depth in mPa*s", yaml: "subphase: {lower: {kind: wall, depth: 1 mPa*s}}", key: "subphase.lower.depth", err: config.ErrDimension, want: []string{"expected a length"}},
	{name: "radius in kT", yaml: "inclusions: {radius: 5 kT}", key: "inclusions.radius", err: config.ErrDimension, want: []string{"got an energy"}},
	{name: "density per length", yaml: "inclusions: {density: 100 um^-1}", key: "inclusions.density", err: config.ErrDimension, want: []string{"m^-2"}},
	{name: "diffusivity in um/s", yaml: "lipids: {diffusion: 1 um/s}", key: "lipids.diffusion", err: config.ErrDimension, want: []string{"got a velocity"}},
	{name: "rotational diffusion in um^2/s", yaml: "inclusions: {rot_diffusion: 20 um^2/s}", key: "inclusions.rot_diffusion", err: config.ErrDimension, want: []string{"1/s"}},
	{name: "end time in metres", yaml: "time: {end: 10 m}", key: "time.end", err: config.ErrDimension, want: []string{"expected a time"}},
	{name: "speed as a length", yaml: "inclusions: {model: kinetic, speed: 1 um}", key: "inclusions.speed", err: config.ErrDimension, want: []string{"got a length"}},
	{name: "line tension as an energy", yaml: "lipids: {model: phase, line_tension: 1 pN*nm}", key: "lipids.line_tension", err: config.ErrDimension, want: []string{"got an energy"}},
	{name: "dipole as a force", yaml: "inclusions: {dipole: 10 pN}", key: "inclusions.dipole", err: config.ErrDimension, want: []string{"got a force"}},
	{name: "bulk viscosity for the membrane", yaml: "membrane: {viscosity: 1 mPa*s}", key: "membrane.viscosity", err: config.ErrDimension, want: []string{"expected a surface viscosity", "got a viscosity"}},

	// Dimensionless keys given units.
	{name: "alignment in nm", yaml: "inclusions: {alignment: 1 nm}", key: "inclusions.alignment", err: config.ErrDimension, want: []string{"got a length"}},
	{name: "Courant number in s", yaml: "time: {courant: 0.5 s}", key: "time.courant", err: config.ErrDimension, want: []string{"got a time"}},
	{name: "threshold in m", yaml: "output: {threshold: 0.1 m}", key: "output.threshold", err: config.ErrDimension, want: []string{"got a length"}},
	{name: "mean composition in kT", yaml: "initial: {mean: 0.2 kT}", key: "initial.mean", err: config.ErrDimension, want: []string{"got an energy"}},
	{name: "harmonics in s", yaml: "inclusions: {model: kinetic, harmonics: 8 s}", key: "inclusions.harmonics", err: config.ErrDimension, want: []string{"plain integer", "got a time"}},
	{name: "snapshot count in um", yaml: "output: {snapshots: 20 um}", key: "output.snapshots", err: config.ErrDimension, want: []string{"plain integer"}},

	// Text that is no value.
	{name: "unknown unit", yaml: "grid: {box: 5 furlong}", key: "grid.box", err: config.ErrUnit, want: []string{"furlong"}},
	{name: "words for a time", yaml: "time: {end: soon}", key: "time.end", err: config.ErrSyntax, want: []string{"soon"}},
	{name: "not a boolean", yaml: "lipids: {model: phase, backreaction: maybe}", key: "lipids.backreaction", err: config.ErrSyntax, want: []string{"true or false"}},
	{name: "key group given a word", yaml: "lipids: passive", key: "lipids", err: config.ErrSyntax, want: []string{"key group", "diffusion"}},

	// Out of range.
	{name: "alignment beyond 1", yaml: "inclusions: {alignment: 1.5}", key: "inclusions.alignment", err: config.ErrRange, want: []string{"[-1, 1]"}},
	{name: "Courant number 3", yaml: "time: {courant: 3}", key: "time.courant", err: config.ErrRange, want: []string{"(0, 2]"}},
	{name: "one harmonic", yaml: "inclusions: {model: kinetic, harmonics: 1}", key: "inclusions.harmonics", err: config.ErrRange, want: []string{"[2, 128]"}},
	{name: "threshold 1", yaml: "output: {threshold: 1}", key: "output.threshold", err: config.ErrRange, want: []string{"(0, 1)"}},
	{name: "mean composition -2", yaml: "initial: {mean: -2}", key: "initial.mean", err: config.ErrRange, want: []string{"[-1, 1]"}},
	{name: "zero lipid diffusivity", yaml: "lipids: {diffusion: 0 um^2/s}", key: "lipids.diffusion", err: config.ErrRange, want: []string{"> 0 m^2/s"}},
	{name: "negative dipole", yaml: "inclusions: {dipole: -5 kT}", key: "inclusions.dipole", err: config.ErrRange, want: []string{"≥ 0"}},
	{name: "negative end time", yaml: "time: {end: -1 s}", key: "time.end", err: config.ErrRange, want: []string{"> 0 s"}},
	{name: "odd grid", yaml: "grid: {n: 127}", key: "grid.n", err: config.ErrRange, want: []string{"even"}},

	// Words not in the list, with the nearest one suggested.
	{name: "misspelt inclusion model", yaml: "inclusions: {model: kinetics}", key: "inclusions.model", err: config.ErrRange, want: []string{"did you mean kinetic?"}},
	{name: "misspelt lipid model", yaml: "lipids: {model: phases}", key: "lipids.model", err: config.ErrRange, want: []string{"did you mean phase?"}},
	{name: "misspelt viscosity rule", yaml: "membrane: {viscosity_rule: loglinear}", key: "membrane.viscosity_rule", err: config.ErrRange, want: []string{"did you mean log-linear?"}},
	{name: "misspelt initial lipids", yaml: "initial: {lipids: stripe}", key: "initial.lipids", err: config.ErrRange, want: []string{"did you mean stripes?"}},

	// Unknown keys, with the closest known key.
	{name: "section misspelt", yaml: "inclusion: {model: moments}", key: "inclusion.model", err: config.ErrUnknownKey, want: []string{"did you mean inclusions.model?"}},
	{name: "key misspelt", yaml: "lipids: {difusion: 1 um^2/s}", key: "lipids.difusion", err: config.ErrUnknownKey, want: []string{"did you mean lipids.diffusion?"}},
	{name: "singular for plural", yaml: "output: {snapshot: 10}", key: "output.snapshot", err: config.ErrUnknownKey, want: []string{"did you mean output.snapshots?"}},
	{name: "key in another section", yaml: "time: {interface: 20 nm}", key: "time.interface", err: config.ErrUnknownKey, want: []string{"did you mean lipids.interface?"}},
	{name: "misspelt environment variable", env: map[string]string{"MEMIX_GRID_NN": "64"}, key: "MEMIX_GRID_NN", err: config.ErrUnknownKey, want: []string{"did you mean MEMIX_GRID_N?"}},
	{name: "bad environment value", env: map[string]string{"MEMIX_TIME_END": "10 kg"}, key: "time.end", err: config.ErrDimension, want: []string{"10 kg"}},

	// Physically inconsistent combinations.
	{name: "depth on a deep side", yaml: "subphase: {upper: {kind: deep, depth: 100 nm}}", key: "subphase.upper.depth", err: config.ErrConflict, want: []string{"100 nm", "kind deep"}},
	{name: "wall without depth", yaml: "subphase: {lower: {kind: wall}}", key: "subphase.lower.depth", err: config.ErrMissing, want: []string{"> 0 m"}},
	{name: "moments with self-propulsion", yaml: "inclusions: {model: moments, speed: 1 um/s}", key: "inclusions.speed", err: config.ErrConflict, want: []string{"1 um/s", "inclusions.model = kinetic"}},
	{name: "viscosity rule without lipids", yaml: "membrane: {viscosity_rule: log-linear}\nlipids: {model: none}", key: "membrane.viscosity_rule", err: config.ErrConflict, want: []string{"log-linear", "lipids.model"}},
	{name: "partition without lipids", yaml: "inclusions: {partition: 2}\nlipids: {model: none}", key: "inclusions.partition", err: config.ErrConflict, want: []string{"lipids.model"}},
	{name: "phase viscosity with the constant rule", yaml: "membrane: {viscosity_plus: 1e-8 Pa*s*m}", key: "membrane.viscosity_plus", err: config.ErrConflict, want: []string{"viscosity_rule"}},
	{name: "line-tension force without phases", yaml: "lipids: {model: passive, backreaction: true}", key: "lipids.backreaction", err: config.ErrConflict, want: []string{"phase"}},
	{name: "dt_min above dt_max", yaml: "time: {dt_min: 2 ms, dt_max: 1 ms}", key: "time.dt_min", err: config.ErrConflict, want: []string{"2 ms", "time.dt_max"}},
	{name: "dt_max above the end", yaml: "time: {end: 1 ms, dt_max: 2 ms}", key: "time.dt_max", err: config.ErrConflict, want: []string{"time.end"}},
	{name: "file lipids without a file", yaml: "initial: {lipids: file}", key: "initial.file", err: config.ErrMissing, want: []string{"initial.lipids = file"}},
	{name: "a file the initial state ignores", yaml: "initial: {lipids: stripes, file: old/snapshots.h5}", key: "initial.file", err: config.ErrConflict, want: []string{"old/snapshots.h5", "initial.lipids = file"}},
	{name: "uniform start of a phase separation", yaml: "lipids: {model: phase, interface: 100 nm}\ninitial: {lipids: uniform}\ngrid: {n: 256}", key: "initial.lipids", err: config.ErrConflict, want: []string{"uniform", "random"}},
	{name: "box smaller than the interface", yaml: "lipids: {model: phase, interface: 2 um}\ngrid: {box: 5 um}", key: "lipids.interface", err: config.ErrConflict, want: []string{"does not fit"}},

	// Valid for other commands, refused by memix run.
	{name: "grid does not resolve the interface", yaml: "inclusions: {model: none}\nlipids: {model: phase, interface: 20 nm}\ninitial: {lipids: random}\ngrid: {n: 128, box: 5 um}", key: "lipids.interface", err: config.ErrResolution, want: []string{"20 nm", "points across the interface", "354×354"}, runOnly: true},
	{name: "grid does not resolve the fastest mode", yaml: "grid: {n: 16, box: 5 um}\ninclusions: {dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}", key: "grid.n", err: config.ErrResolution, want: []string{"\"16\"", "fastest-growing wavelength 1.147 µm", "18×18"}, runOnly: true},
	{name: "grid does not resolve the spinodal wavelength", yaml: "inclusions: {model: none}\nlipids: {model: phase, interface: 100 nm}\ninitial: {lipids: random}\ngrid: {nx: 64, ny: 256, box: 20 um}", key: "grid.nx", err: config.ErrResolution, want: []string{"\"64\"", "spinodal"}, runOnly: true},
	{name: "nothing to simulate", yaml: "inclusions: {model: none}\nlipids: {model: none}", key: "inclusions.model", err: config.ErrConflict, want: []string{"nothing to simulate"}, runOnly: true},
	{name: "no drag to derive a diffusivity from", yaml: "subphase: {upper: {kind: none}, lower: {kind: none}}", key: "inclusions.trans_diffusion", err: config.ErrMissing, want: []string{"Stokes paradox", "give it explicitly"}, runOnly: true},
}

// problemsOf returns the problems config finds in yaml: those of Parse,
// or for a valid configuration those memix run adds.
func problemsOf(t *testing.T, yaml string) (ps []*config.FieldError, parsed bool) {
	c, err := config.Parse([]byte(yaml), "bad.yaml")
	if err != nil {
		if !config.IsConfigError(err) {
			t.Errorf("Parse: %v is not a configuration error", err)
		}
		return config.Problems(err), false
	}
	return append(c.RunProblems(), c.ResolutionWarnings()...), true
}

// TestBadInputsEverywhere sends each bad configuration through
// config.Parse, memix check and memix run (in-process). Each must be
// reported under its key, wrapping the expected sentinel, with a message
// that names the key, the value as given, the unit and the valid range
// where the key has them; check and run must print that message and exit
// 2, except that check accepts a run-only problem with a warning; and run
// must leave no output directory behind.
func TestBadInputsEverywhere(t *testing.T) {
	if len(badInputs) < 40 {
		t.Fatalf("only %d bad inputs", len(badInputs))
	}
	names := map[string]bool{}
	for _, tt := range badInputs {
		if names[tt.name] {
			t.Fatalf("two cases named %q", tt.name)
		}
		names[tt.name] = true
		t.Run(tt.name, func(t *testing.T) {
			for k, v := range tt.env {
				t.Setenv(k, v)
			}
			ps, parsed := problemsOf(t, tt.yaml)
			if parsed != tt.runOnly {
				t.Fatalf("config.Parse accepted it: %v; runOnly = %v", parsed, tt.runOnly)
			}
			var p *config.FieldError
			for _, q := range ps {
				if q.Key == tt.key {
					p = q
				}
			}
			if p == nil {
				t.Fatalf("no problem for %s among %v", tt.key, ps)
			}
			msg := p.Error()
			if !errors.Is(p, tt.err) {
				t.Errorf("%q does not wrap %v", msg, tt.err)
			}
			if !strings.HasPrefix(msg, tt.key) {
				t.Errorf("%q does not start with the key %s", msg, tt.key)
			}
			for _, w := range append([]string{p.Value, p.Unit, p.Range}, tt.want...) {
				if !strings.Contains(msg, w) {
					t.Errorf("message %q lacks %q", msg, w)
				}
			}
			t.Log(msg)

			cfg := writeFile(t, tt.yaml)
			out, errs, code := memix(t, "check", cfg)
			switch {
			case tt.runOnly && (code != 0 || !strings.Contains(out, "memix run refuses") || !strings.Contains(out, msg)):
				t.Errorf("check: exit %d; want 0 and a warning with %q:\n%s%s", code, msg, out, errs)
			case !tt.runOnly && (code != 2 || !strings.Contains(errs, msg) || !strings.Contains(errs, cfg)):
				t.Errorf("check: exit %d; want 2 and %q on stderr:\n%s", code, msg, errs)
			}

			dir := filepath.Join(t.TempDir(), "out")
			_, errs, code = memix(t, "run", cfg, "-o", dir, "--quiet", "--set", "time.max_steps=2")
			inMsg := msg
			if tt.err == config.ErrResolution {
				// run adds how to force it, before the valid range.
				inMsg = strings.TrimSuffix(msg, " (valid: "+p.Range+")")
				if !strings.Contains(errs, "--force-resolution") {
					t.Errorf("run does not name --force-resolution:\n%s", errs)
				}
			}
			if code != 2 || !strings.Contains(errs, inMsg) {
				t.Errorf("run: exit %d; want 2 and %q on stderr:\n%s", code, inMsg, errs)
			}
			if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
				t.Errorf("run left %s behind (%v)", dir, err)
			}
		})
	}
	t.Logf("%d bad inputs, each through config.Parse, memix check and memix run", len(badInputs))
}

// TestBadSetOptions: mistakes in memix run --set are reported like those
// of a file, under the key, with exit status 2 and no output directory.
func TestBadSetOptions(t *testing.T) {
	cfg := writeFile(t, "grid: {n: 32, box: 5 um}\ninclusions: {dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}\noutput: {figures: false}\n")
	for _, tt := range []struct {
		set  string
		want []string
	}{
		{"grid.n=127", []string{"grid.n", `"127"`, "even"}},
		{"time.end=3 nm", []string{"time.end", `"3 nm"`, "expected a time"}},
		{"grid.nn=64", []string{"grid.nn", "did you mean grid.n?"}},
		{"grid.n", []string{`grid.n`, "key=value"}},
		{"inclusions.model=moments,kinetic", []string{"inclusions.model", "none|moments|kinetic"}},
		{"time.dt_min=1 s", []string{"time.dt_min", `"1 s"`, "time.end / 200"}},
	} {
		dir := filepath.Join(t.TempDir(), "out")
		_, errs, code := memix(t, "run", cfg, "-o", dir, "--quiet", "--set", tt.set, "--set", "time.max_steps=2")
		if code != 2 {
			t.Errorf("--set %s: exit %d, want 2:\n%s", tt.set, code, errs)
		}
		for _, w := range tt.want {
			if !strings.Contains(errs, w) {
				t.Errorf("--set %s: stderr lacks %q:\n%s", tt.set, w, errs)
			}
		}
		if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("--set %s: run left %s behind", tt.set, dir)
		}
	}
}
