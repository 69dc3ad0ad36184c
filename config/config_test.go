package config

import (
	"bytes"
	"errors"
	"flag"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/memix-sim/memix/spectral"
)

var update = flag.Bool("update", false, "rewrite golden files (docs/config.md, testdata/*.golden)")

// TestSchema builds the schema (a malformed tag panics) and checks that
// every key is documented and has a default or a fallback.
func TestSchema(t *testing.T) {
	keys := Keys()
	if len(keys) < 15 {
		t.Fatalf("only %d keys", len(keys))
	}
	for _, k := range keys {
		if k.Doc == "" || (k.Default == "") == (k.Fallback == "") {
			t.Errorf("%s: doc %q default %q fallback %q", k.Key, k.Doc, k.Default, k.Fallback)
		}
		if k.Env != "MEMIX_"+strings.ToUpper(strings.ReplaceAll(k.Key, ".", "_")) {
			t.Errorf("%s: env %s", k.Key, k.Env)
		}
	}
	if len(Sections()) != 11 {
		t.Errorf("sections %v", Sections())
	}
}

func TestDefaultsValid(t *testing.T) {
	c := Default()
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	if c.Membrane.Viscosity != 1e-9 || c.Subphase.Upper.Viscosity != 0.00089 || c.Subphase.Lower.Kind != "deep" || c.Temperature != 300 {
		t.Errorf("defaults %+v", c)
	}
	if nx, ny := c.Grid.Size(); nx != 128 || ny != 128 {
		t.Errorf("grid %d×%d", nx, ny)
	}
}

// TestBadInputs loads many bad configurations; each must report a
// FieldError for the named key, wrapping the expected sentinel, whose
// message names the key, the value and (where the key has them) the unit
// and valid range.
func TestBadInputs(t *testing.T) {
	tests := []struct {
		name string
		yaml string
		key  string
		err  error
		want string // also in the message
	}{
		{"negative membrane viscosity", "membrane: {viscosity: -1e-9 Pa*s*m}", "membrane.viscosity", ErrRange, "> 0 Pa*s*m"},
		{"zero membrane viscosity", "membrane: {viscosity: 0}", "membrane.viscosity", ErrRange, "> 0 Pa*s*m"},
		{"negative friction", "membrane: {friction: -5 Pa*s/m}", "membrane.friction", ErrRange, "≥ 0 Pa*s/m"},
		{"negative subphase viscosity", "subphase: {upper: {viscosity: -1 mPa*s}}", "subphase.upper.viscosity", ErrRange, "> 0 Pa*s"},
		{"unknown unit", "membrane: {viscosity: 1e-9 Pa*s*furlong}", "membrane.viscosity", ErrUnit, "furlong"},
		{"wrong dimension", "membrane: {viscosity: 200 nm}", "membrane.viscosity", ErrDimension, "expected a surface viscosity, e.g. Pa*s*m or sP; got a length"},
		{"bulk viscosity swapped for surface", "subphase: {lower: {viscosity: 1e-9 Pa*s*m}}", "subphase.lower.viscosity", ErrDimension, "expected a viscosity, e.g. mPa*s; got a surface viscosity"},
		{"friction in viscosity units", "membrane: {friction: 1 Pa*s}", "membrane.friction", ErrDimension, "friction coefficient"},
		{"temperature in Celsius", "temperature: 25 °C", "temperature", ErrUnit, "absolute"},
		{"temperature in kT", "temperature: 1 kT", "temperature", ErrUnit, "needs the temperature"},
		{"negative temperature", "temperature: -3 K", "temperature", ErrRange, "> 0 K"},
		{"depth on a deep side", "subphase: {upper: {kind: deep, depth: 100 nm}}", "subphase.upper.depth", ErrConflict, "100 nm"},
		{"depth on a none side", "subphase: {lower: {kind: none, depth: 1 um}}", "subphase.lower.depth", ErrConflict, "kind none"},
		{"wall without depth", "subphase: {lower: {kind: wall}}", "subphase.lower.depth", ErrMissing, "> 0 m"},
		{"slip without depth", "subphase: {upper: {kind: slip}}", "subphase.upper.depth", ErrMissing, "kind slip"},
		{"negative depth", "subphase: {lower: {kind: wall, depth: -1 um}}", "subphase.lower.depth", ErrRange, "> 0 m"},
		{"misspelt kind", "subphase: {lower: {kind: wal}}", "subphase.lower.kind", ErrRange, "did you mean wall?"},
		{"unknown kind", "subphase: {lower: {kind: glass}}", "subphase.lower.kind", ErrRange, "none|deep|wall|slip"},
		{"odd grid", "grid: {n: 127}", "grid.n", ErrRange, "even"},
		{"tiny grid", "grid: {n: 2}", "grid.n", ErrRange, "[4, 65536]"},
		{"odd nx", "grid: {nx: 65}", "grid.nx", ErrRange, "must be even"},
		{"fractional grid", "grid: {n: 128.5}", "grid.n", ErrSyntax, "integer"},
		{"grid given a unit", "grid: {n: 128 nm}", "grid.n", ErrDimension, "plain integer (dimensionless); got a length"},
		{"threads given a unit", "grid: {threads: 2 s}", "grid.threads", ErrDimension, "got a time"},
		{"negative threads", "grid: {threads: -1}", "grid.threads", ErrRange, "[0, 1024]"},
		{"zero box", "grid: {box: 0 um}", "grid.box", ErrRange, "> 0 m"},
		{"box in seconds", "grid: {box: 3 s}", "grid.box", ErrDimension, "expected a length"},
		{"unknown fft", "grid: {fft: cufft}", "grid.fft", ErrRange, "auto|fftw|gonum"},
		{"bad boolean", "grid: {fft_measure: maybe}", "grid.fft_measure", ErrSyntax, "true or false"},
		{"unknown key with suggestion", "membrane: {viscosty: 1e-9 Pa*s*m}", "membrane.viscosty", ErrUnknownKey, "did you mean membrane.viscosity?"},
		{"unknown top-level key", "temprature: 300 K", "temprature", ErrUnknownKey, "did you mean temperature?"},
		{"unknown section", "subphase: {top: {kind: deep}}", "subphase.top.kind", ErrUnknownKey, "did you mean subphase.upper.kind?"},
		{"key in the wrong section", "grid: {viscosity: 1e-9 Pa*s*m}", "grid.viscosity", ErrUnknownKey, "did you mean"},
		{"section given a value", "membrane: 5", "membrane", ErrSyntax, "key group"},
		{"unparseable number", "membrane: {viscosity: abc}", "membrane.viscosity", ErrSyntax, "expected a number"},
		{"infinite value", "grid: {box: inf}", "grid.box", ErrSyntax, "infinite"},
		{"YAML infinity", "grid: {box: .inf}", "grid.box", ErrSyntax, "infinite"},
		{"list for a number", "grid: {box: [1, 2]}", "grid.box", ErrSyntax, "a list"},
		{"ambiguous unit", "membrane: {friction: 2 Pa/m*s}", "membrane.friction", ErrSyntax, "ambiguous"},
		{"units.length negative", "units: {length: -1 um}", "units.length", ErrRange, "> 0 m"},
		{"units.time in metres", "units: {time: 1 m}", "units.time", ErrDimension, "expected a time"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Parse([]byte(tt.yaml), "bad.yaml")
			if err == nil {
				t.Fatal("no error")
			}
			if !IsConfigError(err) {
				t.Errorf("IsConfigError false for %v", err)
			}
			var found *FieldError
			for _, p := range Problems(err) {
				if p.Key == tt.key {
					found = p
				}
			}
			if found == nil {
				t.Fatalf("no problem for key %s in:\n%v", tt.key, err)
			}
			msg := found.Error()
			if !errors.Is(found, tt.err) {
				t.Errorf("%q does not wrap %v", msg, tt.err)
			}
			if !strings.HasPrefix(msg, tt.key) || !strings.Contains(msg, tt.want) {
				t.Errorf("message %q does not name the key %s and mention %q", msg, tt.key, tt.want)
			}
			if found.Value != "" && !strings.Contains(msg, found.Value) {
				t.Errorf("message %q does not show the value %q", msg, found.Value)
			}
			if found.Unit != "" && !strings.Contains(msg, found.Unit) {
				t.Errorf("message %q does not name the unit %q", msg, found.Unit)
			}
			if found.Range != "" && !strings.Contains(msg, found.Range) {
				t.Errorf("message %q does not give the range %q", msg, found.Range)
			}
		})
	}
}

// TestAllProblemsAtOnce: one file with several independent mistakes gets
// one error per mistake, in one go.
func TestAllProblemsAtOnce(t *testing.T) {
	yaml := `
temprature: 300 K
membrane:
  viscosity: 200 nm
  friction: -1 Pa*s/m
subphase:
  upper: {kind: deep, depth: 1 um}
  lower: {kind: wall}
grid: {n: 127, box: 0 um, threads: 2 s}
`
	_, err := Parse([]byte(yaml), "bad.yaml")
	want := []string{"temprature", "membrane.viscosity", "membrane.friction", "subphase.upper.depth",
		"subphase.lower.depth", "grid.n", "grid.box", "grid.threads"}
	got := map[string]bool{}
	for _, p := range Problems(err) {
		got[p.Key] = true
	}
	for _, k := range want {
		if !got[k] {
			t.Errorf("no problem reported for %s", k)
		}
	}
	if n := len(Problems(err)); n != len(want) {
		t.Errorf("%d problems, want %d:\n%v", n, len(want), err)
	}
}

func TestFileErrors(t *testing.T) {
	_, err := Load(filepath.Join(t.TempDir(), "missing.yaml"))
	var fe *FileError
	if !errors.As(err, &fe) || !IsConfigError(err) || !strings.Contains(err.Error(), "missing.yaml") {
		t.Errorf("missing file: %v", err)
	}
	_, err = Parse([]byte("membrane: [unclosed"), "broken.yaml")
	if !errors.As(err, &fe) || !strings.Contains(err.Error(), "broken.yaml") {
		t.Errorf("bad YAML: %v", err)
	}
	if c, err := Parse(nil, "empty.yaml"); err != nil || c.Membrane.Viscosity != Default().Membrane.Viscosity {
		t.Errorf("empty file: %v", err)
	}
}

// TestValidateProgrammatic: a Config changed in code is checked too, with
// the formatted value in the message.
func TestValidateProgrammatic(t *testing.T) {
	c := Default()
	c.Membrane.Viscosity = -1e-9
	c.Subphase.Lower.Kind = "wall"
	ps := Problems(c.Validate())
	if len(ps) != 2 || ps[0].Key != "membrane.viscosity" || ps[0].Value != "-1e-09 Pa*s*m" || ps[1].Key != "subphase.lower.depth" {
		t.Errorf("problems %v", ps)
	}
}

func TestEnvOverride(t *testing.T) {
	t.Setenv("MEMIX_MEMBRANE_VISCOSITY", "2e-9 Pa*s*m")
	t.Setenv("MEMIX_SUBPHASE_LOWER_KIND", "wall")
	t.Setenv("MEMIX_SUBPHASE_LOWER_DEPTH", "50 nm")
	c, err := Parse([]byte("membrane: {viscosity: 1e-9 Pa*s*m}\ngrid: {n: 64}\n"), "f.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if c.Membrane.Viscosity != 2e-9 || c.Subphase.Lower.Depth != Some(Length(5e-8)) || c.Grid.N != 64 {
		t.Errorf("env overrides not applied: %+v", c)
	}
	for k, want := range map[string]Source{"membrane.viscosity": FromEnv, "subphase.lower.depth": FromEnv,
		"grid.n": FromFile, "grid.box": FromDefault} {
		if got := c.Source(k); got != want {
			t.Errorf("Source(%s) = %v, want %v", k, got, want)
		}
	}

	t.Setenv("MEMIX_GRID_N", "63")
	t.Setenv("MEMIX_MEMBRANE_VISCOSTY", "1")
	_, err = Parse(nil, "f.yaml")
	keys := map[string]string{}
	for _, p := range Problems(err) {
		keys[p.Key] = p.Error()
	}
	if !strings.Contains(keys["grid.n"], `"63"`) {
		t.Errorf("bad environment value not reported under its key: %v", err)
	}
	if !strings.Contains(keys["MEMIX_MEMBRANE_VISCOSTY"], "did you mean MEMIX_MEMBRANE_VISCOSITY") {
		t.Errorf("misspelt environment variable not reported: %v", err)
	}
}

// TestSetAndKT: Set re-decodes every key, so a time unit written in kT
// follows a new temperature: units.time = 1e-19 Pa*s*m^3/kT must become
// 1e-19/(k_B·300 K) s to round-off (a few roundings: 8 ulp).
func TestSetAndKT(t *testing.T) {
	c, err := Parse([]byte("temperature: 310 K\nunits: {time: 1e-19 Pa*s*m^3/kT}\n"), "t.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if want := 1e-19 / (Boltzmann * 310); relErr(float64(c.Units.Time.V), want) > 8*ulp {
		t.Errorf("time at 310 K = %v, want %v", c.Units.Time.V, want)
	}
	d, err := c.Set("temperature", "300 K")
	if err != nil {
		t.Fatal(err)
	}
	if want := 1e-19 / (Boltzmann * 300); relErr(float64(d.Units.Time.V), want) > 8*ulp {
		t.Errorf("time at 300 K = %v, want %v", d.Units.Time.V, want)
	}
	if c.Temperature != 310 {
		t.Error("Set modified its receiver")
	}
	if d.Source("temperature") != FromSet || d.Source("units.time") != FromFile {
		t.Errorf("sources %v %v", d.Source("temperature"), d.Source("units.time"))
	}
	e, err := d.Set("grid.n", 256)
	if err != nil || e.Grid.N != 256 {
		t.Errorf("Set grid.n: %v", err)
	}
	_, err = d.Set("grid.nn", 256)
	if ps := Problems(err); len(ps) != 1 || ps[0].Suggest != "grid.n" {
		t.Errorf("Set of an unknown key: %v", err)
	}
}

// sameValues compares every key of two configurations bit for bit.
func sameValues(t *testing.T, a, b Config) {
	t.Helper()
	for _, l := range theSchema().leaves {
		x, okx := l.get(&a)
		y, oky := l.get(&b)
		if okx != oky || x != y {
			t.Errorf("%s: %v (set %v) != %v (set %v)", l.key, x, okx, y, oky)
		}
	}
}

func exampleFiles(t *testing.T) []string {
	files, err := filepath.Glob("../examples/*.yaml")
	if err != nil || len(files) < 3 {
		t.Fatalf("examples: %v %v", files, err)
	}
	return files
}

// TestResolvedRoundTrip: the resolved YAML loads back to the same values,
// bit for bit, for the defaults and every example.
func TestResolvedRoundTrip(t *testing.T) {
	cs := []Config{Default()}
	for _, f := range exampleFiles(t) {
		c, err := Load(f)
		if err != nil {
			t.Fatal(err)
		}
		cs = append(cs, c)
	}
	for _, c := range cs {
		var buf bytes.Buffer
		if err := c.WriteResolved(&buf, "test header"); err != nil {
			t.Fatal(err)
		}
		back, err := Parse(buf.Bytes(), "resolved")
		if err != nil {
			t.Fatalf("%s: resolved file does not load: %v\n%s", c.File(), err, buf.String())
		}
		sameValues(t, back, c.Resolved())
		if back.Grid.Nx != Some(back.Grid.N) && c.Grid.Nx.Valid == false {
			t.Errorf("%s: nx not resolved", c.File())
		}
	}
}

// golden compares got with the file at path, rewriting it with -update; a
// mismatch writes path.got for inspection.
func golden(t *testing.T, path string, got []byte) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./config -run %s -update)", err, t.Name())
	}
	if !bytes.Equal(got, want) {
		os.WriteFile(path+".got", got, 0o644)
		t.Errorf("%s is out of step with the schema; see %s.got, or regenerate with go test ./config -run %s -update", path, path, t.Name())
	}
}

// TestReference keeps docs/config.md in step with the schema.
func TestReference(t *testing.T) {
	var buf bytes.Buffer
	if err := WriteReference(&buf); err != nil {
		t.Fatal(err)
	}
	for _, k := range Keys() {
		if !strings.Contains(buf.String(), "`"+k.Key+"`") {
			t.Errorf("reference lacks %s", k.Key)
		}
	}
	golden(t, "../docs/config.md", buf.Bytes())
}

// TestResolvedGolden pins the layout of config.resolved.yaml.
func TestResolvedGolden(t *testing.T) {
	c, err := Load("../examples/glass-gap.yaml")
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	c.WriteResolved(&buf)
	golden(t, "testdata/glass-gap.resolved.golden", buf.Bytes())
}

// TestExamples: every example loads, validates, reduces, documents itself
// with comments, and is resolved well enough that the advice has no
// warning.
func TestExamples(t *testing.T) {
	for _, f := range exampleFiles(t) {
		c, err := Load(f)
		if err != nil {
			t.Errorf("%s: %v", f, err)
			continue
		}
		if _, err := Reduce(c); err != nil {
			t.Errorf("%s: %v", f, err)
		}
		for _, a := range c.Scales().Advice {
			if a.Level == Warn {
				t.Errorf("%s: %s", f, a.Text)
			}
		}
		data, _ := os.ReadFile(f)
		if !strings.HasPrefix(string(data), "# ") || strings.Count(string(data), "#") < 5 {
			t.Errorf("%s: an example opens with comments describing its scenario", f)
		}
	}
}

func TestRangeText(t *testing.T) {
	for in, want := range map[string]string{"(0,inf)": "> 0", "[0,inf)": "≥ 0", "[4,65536]": "[4, 65536]",
		"(-inf,1]": "≤ 1", "(0,1)": "(0, 1)"} {
		r, err := parseInterval(in)
		if err != nil || r.String() != want {
			t.Errorf("%s: %q %v, want %q", in, r.String(), err, want)
		}
	}
	for _, bad := range []string{"0,1", "(1,0)", "[a,1]", "(0 1)"} {
		if _, err := parseInterval(bad); err == nil {
			t.Errorf("%s accepted", bad)
		}
	}
}

func TestEditDistance(t *testing.T) {
	for _, tt := range []struct {
		a, b string
		d    int
	}{{"", "", 0}, {"kitten", "sitting", 3}, {"viscosty", "viscosity", 1}, {"µm", "um", 1}, {"abc", "", 3}} {
		if got := editDistance(tt.a, tt.b); got != tt.d {
			t.Errorf("editDistance(%q, %q) = %d, want %d", tt.a, tt.b, got, tt.d)
		}
	}
}

func TestValue(t *testing.T) {
	c := Default()
	for k, want := range map[string]string{"membrane.viscosity": "1e-09 Pa*s*m", "grid.n": "128", "subphase.upper.kind": "deep", "grid.fft_measure": "false"} {
		if got, ok := c.Value(k); !ok || got != want {
			t.Errorf("Value(%s) = %q, %v; want %q", k, got, ok, want)
		}
	}
	if _, ok := c.Value("grid.nx"); ok {
		t.Error("grid.nx is set before Resolved")
	}
	if got, ok := c.Resolved().Value("grid.nx"); !ok || got != "128" {
		t.Errorf("resolved grid.nx = %q", got)
	}
	if _, ok := c.Value("nope"); ok {
		t.Error("unknown key has a value")
	}
}

// FuzzParse: no configuration text makes Parse panic; every failure is a
// FileError or a list of FieldErrors, and a success validates.
func FuzzParse(f *testing.F) {
	for _, p := range exampleFilesF(f) {
		data, _ := os.ReadFile(p)
		f.Add(data)
	}
	for _, s := range []string{"", "membrane: 5", "grid: {n: 127}", "subphase: {upper: {kind: wall}}", "a: [1, {b: c}]",
		"temperature: 1 kT", "grid: {box: .inf}", "membrane: {viscosity: !!binary aGVsbG8=}", "&a [*a]", "? [a]\n: b",
		// The sections of memix run, and their combinations across keys.
		"inclusions: {model: kinetic, harmonics: 2, speed: 1 um/s, dipole: 40 pN*nm, kind: contractile}",
		"inclusions: {model: moments, speed: 1 um/s, partition: 3}\nlipids: {model: none}",
		"lipids: {model: phase, interface: 5 nm, line_tension: 2 pN, backreaction: true}\ngrid: {n: 8}",
		"membrane: {viscosity_rule: log-linear, viscosity_plus: 1e-8 Pa*s*m, viscosity_minus: 1e-10 Pa*s*m}",
		"time: {end: 1 ms, dt_max: 2 ms, dt_min: 3 ms, courant: 2, fixed: true, max_steps: 1e12}",
		"output: {snapshots: 0, rows: 1, checkpoint_wall: 1 ns, mix_length: 1 um, threshold: 0.999}",
		"initial: {lipids: file, file: x.h5, file_snapshot: -1000000, inclusions: mode, mode_field: q12, mode_x: -65536}",
		"initial: {lipids: disks, disks: 100000, disk_radius: 1 nm, seed: 9007199254740992}",
		"subphase: {upper: {kind: none}, lower: {kind: none}}\ninclusions: {rot_diffusion: 0 /s}",
		"grid: {nx: 4, ny: 65536, lx: 1 nm, ly: 1 m}\ninclusions: {dipole: 1e30 kT}",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := Parse(data, "fuzz.yaml")
		if err == nil {
			if verr := c.Validate(); verr != nil {
				t.Fatalf("Parse accepted an invalid configuration: %v", verr)
			}
			// What memix run checks next must not panic either.
			for _, p := range append(c.RunProblems(), c.ResolutionWarnings()...) {
				if !strings.HasPrefix(p.Error(), p.Key) {
					t.Fatalf("message %q does not start with its key", p)
				}
			}
			return
		}
		var fe *FileError
		if !errors.As(err, &fe) && len(Problems(err)) == 0 {
			t.Fatalf("error of an unexpected kind: %#v", err)
		}
		for _, p := range Problems(err) {
			if !strings.HasPrefix(p.Error(), p.Key) {
				t.Fatalf("message %q does not start with its key", p)
			}
		}
	})
}

func exampleFilesF(f *testing.F) []string {
	files, _ := filepath.Glob("../examples/*.yaml")
	return files
}

// TestFFTBackend: asking for FFTW in a binary built without it is a
// configuration error naming the key; run with -tags nofftw to see it.
func TestFFTBackend(t *testing.T) {
	_, err := Parse([]byte("grid: {fft: fftw}"), "f.yaml")
	if slices.Contains(spectral.Backends(), spectral.FFTW) {
		if err != nil {
			t.Errorf("fftw is compiled in: %v", err)
		}
	} else if ps := Problems(err); len(ps) != 1 || ps[0].Key != "grid.fft" || !strings.Contains(ps[0].Error(), "without FFTW") {
		t.Errorf("fftw is not compiled in: %v", err)
	}
	c := mustParse(t, "grid: {fft: gonum, threads: 3}")
	if o := c.Grid.PlanOptions(); o.Backend != spectral.Gonum || o.Threads != 3 {
		t.Errorf("plan options %+v", o)
	}
	if b := Default().Grid.Backend(); b != spectral.DefaultBackend() {
		t.Errorf("auto backend %v", b)
	}
}
