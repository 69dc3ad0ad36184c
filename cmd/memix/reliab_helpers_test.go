package main

import (
	"bytes"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

// reliabRun is a quick run (32², active moments, passive lipid stripes,
// a few dozen steps) for the reliability tests.
const reliabRun = `
grid: {n: 32, box: 5 um}
inclusions: {model: moments, dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}
lipids: {model: passive, diffusion: 1 um^2/s}
time: {end: 4 ms}
output: {snapshots: 2, rows: 10, figures: false}
initial: {lipids: stripes, stripes: 2, seed: 3}
`

// runInto runs yaml (with --set options) into dir in-process and fails
// the test unless it finishes.
func runInto(t *testing.T, yaml, dir string, set ...string) {
	t.Helper()
	args := []string{"run", writeFile(t, yaml), "-o", dir, "--quiet", "--threads", "1"}
	for _, s := range set {
		args = append(args, "--set", s)
	}
	if _, errs, code := memix(t, args...); code != 0 {
		t.Fatalf("run %v: exit %d\n%s", set, code, errs)
	}
}

// tree returns the content of every file under dir by relative path.
func tree(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	m := map[string][]byte{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		rel, _ := filepath.Rel(dir, p)
		m[rel] = b
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// sameTree reports every file of dir that differs from before.
func sameTree(t *testing.T, dir string, before map[string][]byte) {
	t.Helper()
	after := tree(t, dir)
	for name, b := range before {
		if a, ok := after[name]; !ok {
			t.Errorf("%s was removed", name)
		} else if !bytes.Equal(a, b) {
			t.Errorf("%s was changed", name)
		}
	}
	for name := range after {
		if _, ok := before[name]; !ok {
			t.Errorf("%s was added", name)
		}
	}
}

// copyTree copies the files under src into a new directory and returns it.
func copyTree(t *testing.T, src string) string {
	t.Helper()
	dst := filepath.Join(t.TempDir(), filepath.Base(src))
	for rel, b := range tree(t, src) {
		p := filepath.Join(dst, rel)
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dst
}

// runGrid returns the reduced grid of the run in dir.
func runGrid(t *testing.T, dir string) *spectral.Grid {
	t.Helper()
	c, err := config.Load(filepath.Join(dir, "config.resolved.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	r, err := config.Reduce(c)
	if err != nil {
		t.Fatal(err)
	}
	return r.Grid
}

// checkpointOf reads the checkpoint of the run in dir.
func checkpointOf(t *testing.T, dir string) *outputs.Checkpoint {
	t.Helper()
	ck, err := outputs.ReadCheckpoint(filepath.Join(dir, "checkpoint.h5"), runGrid(t, dir), outputs.Expect{})
	if err != nil {
		t.Fatal(err)
	}
	return ck
}

// sameSpectral reports whether two checkpoints hold the same fields,
// bit for bit.
func sameSpectral(t *testing.T, a, b *outputs.Checkpoint) bool {
	t.Helper()
	if len(a.Spectral) != len(b.Spectral) {
		t.Errorf("%d fields against %d", len(a.Spectral), len(b.Spectral))
		return false
	}
	for i, f := range a.Spectral {
		g := b.Spectral[i]
		if f.Name != g.Name {
			t.Errorf("field %d: %s against %s", i, f.Name, g.Name)
			return false
		}
		for k := range f.Data {
			x, y := f.Data[k], g.Data[k]
			if math.Float64bits(real(x)) != math.Float64bits(real(y)) || math.Float64bits(imag(x)) != math.Float64bits(imag(y)) {
				t.Errorf("field %s differs at coefficient %d: %v against %v", f.Name, k, x, y)
				return false
			}
		}
	}
	return true
}

// allFinite reports whether every value of the checkpoint's fields is
// finite.
func allFinite(ck *outputs.Checkpoint) bool {
	for _, f := range ck.Spectral {
		for _, v := range f.Data {
			if math.IsNaN(real(v)) || math.IsInf(real(v), 0) || math.IsNaN(imag(v)) || math.IsInf(imag(v), 0) {
				return false
			}
		}
	}
	return true
}
