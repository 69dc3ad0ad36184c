package scan

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"go.yaml.in/yaml/v3"
)

const baseYAML = `# demo base configuration (invented for the tests)
membrane:
  viscosity: 1 nPa*s*m
subphase:
  lower:
    kind: deep
    depth: 1 um
run:
  seed: 0
`

func paramTexts(pts []PointConfig, key string) []string {
	var out []string
	for _, p := range pts {
		v, ok := p.Param(key)
		if !ok {
			out = append(out, "<missing>")
			continue
		}
		out = append(out, Param{Value: v}.Text())
	}
	return out
}

func TestLocalConverter(t *testing.T) {
	cases := []struct {
		q, unit string
		want    float64
	}{
		{"50 um", "nm", 50000},
		{"50um", "nm", 50000},
		{"0.89 mPa*s", "Pa*s", 0.00089},
		{"2 Pa*s", "mPa*s", 2000},
		{"3 m", "mm", 3000},
		{"7 kT", "kT", 7},
		{"1e-9 Pa*s*m", "nPa*s*m", 1},
		{"4", "", 4},
	}
	for _, c := range cases {
		got, err := LocalConverter(c.q, c.unit)
		if err != nil {
			t.Errorf("LocalConverter(%q, %q): %v", c.q, c.unit, err)
			continue
		}
		// Decimal prefixes are exact powers of ten; the product carries
		// at most a few ulps of round-off.
		if d := got - c.want; d > 1e-12*c.want || d < -1e-12*c.want {
			t.Errorf("LocalConverter(%q, %q) = %g, want %g", c.q, c.unit, got, c.want)
		}
	}
	for _, bad := range [][2]string{{"1 min", "s"}, {"deep", "m"}, {"1 1/ms", "1/s"}} {
		if _, err := LocalConverter(bad[0], bad[1]); err == nil {
			t.Errorf("LocalConverter(%q, %q) succeeded; want an error", bad[0], bad[1])
		}
	}
}

func TestExpandProductAndRanges(t *testing.T) {
	s := writeSweep(t, `
base: base.yaml
axes:
  subphase.lower.kind: [deep, wall]
  subphase.lower.depth: {log: [50 nm, 50 um], n: 7}
  membrane.viscosity: {lin: [890 uPa*s*m, 2.5 mPa*s*m], n: 5}
  fake.rate: {lin: [0.5, 2], n: 4}
`, baseYAML)
	pts, err := s.Points()
	if err != nil {
		t.Fatal(err)
	}
	if len(pts) != 2*7*5*4 {
		t.Fatalf("got %d points, want 2·7·5·4 = 280", len(pts))
	}
	// Reference values: numpy.geomspace(50, 50000, 7) and
	// numpy.linspace(890, 2500, 5), numpy.linspace(0.5, 2, 4), printed
	// with '%.6g' by /usr/bin/python3 (NumPy 1.24).
	wantDepth := []string{"50 nm", "158.114 nm", "500 nm", "1581.14 nm", "5000 nm", "15811.4 nm", "50000 nm"}
	wantVisc := []string{"890 uPa*s*m", "1292.5 uPa*s*m", "1695 uPa*s*m", "2097.5 uPa*s*m", "2500 uPa*s*m"}
	wantRate := []string{"0.5", "1", "1.5", "2"}
	// The first factor varies slowest, the last fastest.
	for i, p := range pts {
		k, d, v, r := i/140, i/20%7, i/4%5, i%4
		got := []string{Param{Value: mustParam(t, p, "subphase.lower.kind")}.Text(),
			Param{Value: mustParam(t, p, "subphase.lower.depth")}.Text(),
			Param{Value: mustParam(t, p, "membrane.viscosity")}.Text(),
			Param{Value: mustParam(t, p, "fake.rate")}.Text()}
		want := []string{[]string{"deep", "wall"}[k], wantDepth[d], wantVisc[v], wantRate[r]}
		if !reflect.DeepEqual(got, want) {
			t.Fatalf("point %d: params %v, want %v", i, got, want)
		}
		if p.Index != i {
			t.Fatalf("point %d has index %d", i, p.Index)
		}
	}
	// The rate stays a number, the quantities strings.
	if v := mustParam(t, pts[1], "fake.rate"); v != 1.0 {
		t.Errorf("fake.rate of point 1 = %#v, want the number 1", v)
	}
	// The resolved configuration keeps the base, sets the values, adds
	// the missing section and keeps the base's comment.
	var cfg map[string]any
	if err := yaml.Unmarshal(pts[279].Config, &cfg); err != nil {
		t.Fatal(err)
	}
	want := map[string]any{
		"membrane": map[string]any{"viscosity": "2500 uPa*s*m"},
		"subphase": map[string]any{"lower": map[string]any{"kind": "wall", "depth": "50000 nm"}},
		"run":      map[string]any{"seed": 0},
		"fake":     map[string]any{"rate": 2}, // "2" is written as a YAML int
	}
	if !reflect.DeepEqual(cfg, want) {
		t.Errorf("config of the last point:\n%s\nwant %v", pts[279].Config, want)
	}
	if !strings.Contains(string(pts[0].Config), "# demo base configuration") {
		t.Errorf("the base's comment was lost:\n%s", pts[0].Config)
	}
}

func mustParam(t *testing.T, p PointConfig, key string) any {
	t.Helper()
	v, ok := p.Param(key)
	if !ok {
		t.Fatalf("point %s has no %s", p.ID, key)
	}
	return v
}

func TestExpandZip(t *testing.T) {
	// mode: zip pairs the axes; a zip group is one more factor.
	s := writeSweep(t, `
base: {a: 1}
mode: zip
axes:
  x.p: [1, 2, 3]
  x.q: [a, b, c]
zip:
  - y.r: [10 nm, 20 nm]
    y.s: [true, false]
`, "")
	pts, err := s.Points()
	if err != nil {
		t.Fatal(err)
	}
	got := make([]string, len(pts))
	for i, p := range pts {
		got[i] = p.Label()
	}
	want := []string{
		"p=1, q=a, r=10 nm, s=true", "p=1, q=a, r=20 nm, s=false",
		"p=2, q=b, r=10 nm, s=true", "p=2, q=b, r=20 nm, s=false",
		"p=3, q=c, r=10 nm, s=true", "p=3, q=c, r=20 nm, s=false",
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("zip points:\n%q\nwant\n%q", got, want)
	}
	_, err = ParseSweep([]byte("base: {a: 1}\nmode: zip\naxes: {x: [1, 2], y: [1, 2, 3]}\n"), t.TempDir(), nil)
	if err == nil || !strings.Contains(err.Error(), "same number of values") {
		t.Errorf("zip of unequal axes: err = %v, want 'same number of values'", err)
	}
}

func TestReplicates(t *testing.T) {
	s := writeSweep(t, "base: {run: {seed: 0}}\naxes: {k: [a, b]}\nreplicates: {n: 3, key: run.seed, first: 10}\n", "")
	pts, err := s.Points()
	if err != nil {
		t.Fatal(err)
	}
	if got, want := paramTexts(pts, "run.seed"), []string{"10", "11", "12", "10", "11", "12"}; !reflect.DeepEqual(got, want) {
		t.Errorf("seeds %v, want %v", got, want)
	}
	if s.SeedKey() != "run.seed" || s.AxisKeys()[1] != "run.seed" {
		t.Errorf("seed key %q, axis keys %v", s.SeedKey(), s.AxisKeys())
	}
	ids := map[string]bool{}
	for _, p := range pts {
		ids[p.ID] = true
	}
	if len(ids) != 6 {
		t.Errorf("replicates share identifiers: %d distinct of 6", len(ids))
	}
	s = writeSweep(t, "base: {a: 1}\nreplicates: {key: seed, seeds: [7, 19, 23]}\n", "")
	pts, err = s.Points()
	if err != nil {
		t.Fatal(err)
	}
	if got := paramTexts(pts, "seed"); !reflect.DeepEqual(got, []string{"7", "19", "23"}) {
		t.Errorf("listed seeds %v", got)
	}
}

func TestSweepErrors(t *testing.T) {
	cases := []struct{ sweep, want string }{
		{"axes: {a: [1]}\n", "key base is missing"},
		{"base: {a: 1}\naxes: {a: [1]}\nextra: 1\n", `unknown key "extra"`},
		{"base: {a: 1}\nmode: cartesian\naxes: {a: [1]}\n", "valid modes are product and zip"},
		{"base: {a: 1}\naxes: {a: []}\n", "key a (line 2): the list of values is empty"},
		{"base: {a: 1}\naxes: {a: 3}\n", "key a (line 2): give a list of values"},
		{"base: {a: 1}\naxes: {a: {log: [0 nm, 5 nm], n: 3}}\n", "both ends must be positive"},
		{"base: {a: 1}\naxes: {a: {lin: [1 nm, 5 nm], n: 1}}\n", `range n = "1": need a whole number of values from 2`},
		{"base: {a: 1}\naxes: {a: {lin: [1 nm, 5 s], n: 3}}\n", `range end "5 s" in the unit of the start "1 nm"`},
		{"base: {a: 1}\naxes: {a: {lin: [1 nm], n: 3}}\n", "needs two ends"},
		{"base: {a: 1}\naxes: {a: {lin: [1, 2], n: 3, step: 1}}\n", `unknown range key "step"`},
		{"base: {a: 1}\naxes: {a.b: [1, 2]}\nzip: [{a: [1, 2]}]\n", "overlap"},
		{"base: {a: 1}\naxes: {a..b: [1, 2]}\n", "non-empty parts"},
		{"base: {a: 1}\nreplicates: {n: 2}\n", "replicates.key is missing"},
		{"base: {a: 1}\nreplicates: {key: s, seeds: [1, 1]}\n", "seed 1 appears twice"},
		{"base: {a: 1}\n", "no axes"},
		{"base: missing.yaml\naxes: {a: [1]}\n", "no such file"},
	}
	for _, c := range cases {
		_, err := ParseSweep([]byte(c.sweep), t.TempDir(), nil)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("sweep %q: err = %v, want it to contain %q", c.sweep, err, c.want)
		}
	}
	// A repeated value makes two points identical.
	s, err := ParseSweep([]byte("base: {a: 1}\naxes: {a: [1, 2, 1]}\n"), t.TempDir(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.Points(); err == nil || !strings.Contains(err.Error(), "same parameters") {
		t.Errorf("repeated value: err = %v", err)
	}
	// A key below a base value that is not a section.
	s, err = ParseSweep([]byte("base: {a: 1}\naxes: {a.b: [1, 2]}\n"), t.TempDir(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.Points(); err == nil || !strings.Contains(err.Error(), "not a section, at a") {
		t.Errorf("key below a value: err = %v", err)
	}
}

// TestIdentifierStability: identifiers depend on the parameter values only,
// not on the position of the point, the order of the axes in the file, or
// the other values of an axis.
func TestIdentifierStability(t *testing.T) {
	ids := func(sweep string) map[string]string {
		s, err := ParseSweep([]byte(sweep), t.TempDir(), nil)
		if err != nil {
			t.Fatal(err)
		}
		pts, err := s.Points()
		if err != nil {
			t.Fatal(err)
		}
		m := map[string]string{}
		for _, p := range pts {
			var parts []string
			for _, k := range []string{"k", "d"} {
				v, _ := p.Param(k)
				parts = append(parts, Param{Value: v}.Text())
			}
			m[strings.Join(parts, "|")] = p.ID
		}
		return m
	}
	a := ids("base: {x: 1}\naxes: {k: [deep, wall], d: [50 nm, 500 nm]}\n")
	b := ids("base: {x: 2}\naxes: {d: [5 nm, 50 nm, 500 nm], k: [deep, wall, free]}\n")
	for params, id := range a {
		if b[params] != id {
			t.Errorf("point %s: id %s became %s when axis values were added and the axes reordered", params, id, b[params])
		}
		if !strings.HasPrefix(id, "p-") || len(id) != 12 {
			t.Errorf("id %q: want p- and ten hex digits", id)
		}
	}
	if len(b) != 9 {
		t.Errorf("%d points, want 9", len(b))
	}
	// Different values, different identifiers; a number and a string differ.
	s0, err := ParseSweep([]byte("base: {x: 1}\naxes: {d: [50 nm, \"50\", 50]}\n"), t.TempDir(), nil)
	if err != nil {
		t.Fatal(err)
	}
	pts, err := s0.Points()
	if err != nil {
		t.Fatal(err)
	}
	if len(pts) != 3 || pts[0].ID == pts[1].ID || pts[1].ID == pts[2].ID || pts[0].ID == pts[2].ID {
		t.Errorf("values 50 nm, \"50\", 50 share identifiers: %+v", pts)
	}
	// The identifier is reproducible from the scan's point list.
	dir := filepath.Join(t.TempDir(), "scan")
	s, err := ParseSweep([]byte("base: {x: 1}\naxes: {k: [deep, wall], d: [1.5, 2]}\n"), t.TempDir(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Expand(s, dir, ExpandOptions{}); err != nil {
		t.Fatal(err)
	}
	sc, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range sc.Points {
		id, err := pointID(p.Params)
		if err != nil || id != p.ID {
			t.Errorf("point %d: id from points.json params = %s (%v), stored %s", p.Index, id, err, p.ID)
		}
	}
}

// TestValidationBeforeRunning: every point is validated, and an invalid
// one stops the expansion before anything is written.
func TestValidationBeforeRunning(t *testing.T) {
	s := writeSweep(t, "base: base.yaml\naxes:\n  subphase.lower.depth: [50 nm, -5 nm, 1 um, -1 um]\n", baseYAML)
	var seen int
	validate := func(cfg []byte) error {
		seen++
		var c struct {
			Subphase struct{ Lower struct{ Depth string } }
		}
		if err := yaml.Unmarshal(cfg, &c); err != nil {
			return err
		}
		if strings.HasPrefix(c.Subphase.Lower.Depth, "-") {
			return fmt.Errorf("subphase.lower.depth = %s: must be positive", c.Subphase.Lower.Depth)
		}
		return nil
	}
	dir := filepath.Join(t.TempDir(), "scan")
	_, err := Expand(s, dir, ExpandOptions{Validate: validate})
	if err == nil {
		t.Fatal("Expand accepted invalid points")
	}
	if seen != 4 {
		t.Errorf("validator saw %d points, want all 4", seen)
	}
	for _, want := range []string{"2 of 4 points are invalid", "depth=-5 nm", "depth=-1 um", "must be positive"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q lacks %q", err, want)
		}
	}
	if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("scan folder was created although validation failed (stat: %v)", err)
	}
	// The same sweep without the bad values expands, and a validator
	// error is reported per point.
	s = writeSweep(t, "base: base.yaml\naxes:\n  subphase.lower.depth: [50 nm, 1 um]\n", baseYAML)
	sc, err := Expand(s, dir, ExpandOptions{Validate: validate})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{sweepFile, baseFile, pointsJSON, pointsCSV} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("scan lacks %s: %v", f, err)
		}
	}
	csv := readFile(t, filepath.Join(dir, pointsCSV))
	want := "index,id,subphase.lower.depth\n0," + sc.Points[0].ID + ",50 nm\n1," + sc.Points[1].ID + ",1 um\n"
	if csv != want {
		t.Errorf("points.csv:\n%s\nwant\n%s", csv, want)
	}
	cfg := readFile(t, filepath.Join(sc.PointDir(sc.Points[1].ID), pointConfig))
	if !strings.Contains(cfg, "depth: 1 um") {
		t.Errorf("point config:\n%s", cfg)
	}
}

// TestReExpand: expanding a larger sweep into an existing scan keeps the
// existing points and their outputs; a changed configuration of a point
// with outputs is refused.
func TestReExpand(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "scan")
	s1 := writeSweep(t, "base: {x: 1}\naxes: {k: [a, b]}\n", "")
	sc1, err := Expand(s1, dir, ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	marker := filepath.Join(sc1.OutDir(sc1.Points[1].ID), "summary.json")
	if err := os.MkdirAll(filepath.Dir(marker), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(marker, []byte(`{"status": "finished"}`), 0o644); err != nil {
		t.Fatal(err)
	}
	s2 := writeSweep(t, "base: {x: 1}\naxes: {k: [a, c, b]}\n", "")
	sc2, err := Expand(s2, dir, ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(sc2.Points) != 3 || sc2.Points[2].ID != sc1.Points[1].ID || sc2.Points[2].Index != 2 {
		t.Fatalf("re-expanded points %+v", sc2.Points)
	}
	if _, err := os.Stat(marker); err != nil {
		t.Errorf("the output of an existing point was lost: %v", err)
	}
	s3 := writeSweep(t, "base: {x: 2}\naxes: {k: [a, b]}\n", "")
	if _, err := Expand(s3, dir, ExpandOptions{}); err == nil || !strings.Contains(err.Error(), "already has outputs") {
		t.Errorf("changed base with outputs: err = %v", err)
	}
}
