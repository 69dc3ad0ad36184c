package outputs

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"syscall"
	"testing"

	"github.com/memix-sim/memix/spectral"
)

// specialValues are bit patterns a careless store would change: signed
// zero, infinities, NaNs with payloads and sign, the smallest subnormal and
// the largest finite number.
var specialValues = []uint64{
	0x8000000000000000, // −0
	0x7ff0000000000000, // +Inf
	0xfff0000000000000, // −Inf
	0x7ff8000000000001, // quiet NaN with a payload
	0xfff4000000000abc, // negative signalling NaN with a payload
	0x0000000000000001, // smallest subnormal
	0x7fefffffffffffff, // largest finite
}

// testCheckpoint fills every part of a checkpoint with random bit patterns
// (every 64-bit pattern is a float64) and the special values.
func testCheckpoint(g *spectral.Grid, seed uint64) *Checkpoint {
	rng := rand.New(rand.NewPCG(seed, 7))
	bits := func(i int) float64 {
		if i < len(specialValues) {
			return math.Float64frombits(specialValues[i])
		}
		return math.Float64frombits(rng.Uint64())
	}
	c := &Checkpoint{Info: testInfo(), Time: 123.456789, Step: 98765, Dt: 1.0 / 3}
	for k, name := range []string{"psi_0", "psi_2", "phi"} {
		d := g.NewSpectral()
		for i := range d {
			d[i] = complex(bits(i+k), bits(i+k+1))
		}
		c.Spectral = append(c.Spectral, SpectralField{Name: name, Unit: "1", Data: d})
	}
	r := g.NewReal()
	for i := range r {
		r[i] = bits(i)
	}
	c.Real = []Field{{Name: "eta_m", Unit: "η0", Data: r}}
	c.Scalars = []Scalar{{"dt_controller_error", "1", math.Float64frombits(rng.Uint64())}, {"seed", "1", 42}}
	c.RNG = make([]byte, 37)
	for i := range c.RNG {
		c.RNG[i] = byte(rng.Uint32())
	}
	return c
}

func checkpointsEqual(t *testing.T, got, want *Checkpoint) {
	t.Helper()
	if got.Info != want.Info {
		t.Errorf("info %+v, want %+v", got.Info, want.Info)
	}
	if math.Float64bits(got.Time) != math.Float64bits(want.Time) || got.Step != want.Step || math.Float64bits(got.Dt) != math.Float64bits(want.Dt) {
		t.Errorf("time/step/dt %v %v %v, want %v %v %v", got.Time, got.Step, got.Dt, want.Time, want.Step, want.Dt)
	}
	if len(got.Spectral) != len(want.Spectral) || len(got.Real) != len(want.Real) || len(got.Scalars) != len(want.Scalars) {
		t.Fatalf("counts %d/%d/%d, want %d/%d/%d", len(got.Spectral), len(got.Real), len(got.Scalars), len(want.Spectral), len(want.Real), len(want.Scalars))
	}
	for i, w := range want.Spectral {
		g := got.Spectral[i]
		if g.Name != w.Name || g.Unit != w.Unit || !sameBits(pairs(g.Data), pairs(w.Data)) {
			t.Errorf("spectral field %s: not bit-identical (name %q unit %q)", w.Name, g.Name, g.Unit)
		}
	}
	for i, w := range want.Real {
		g := got.Real[i]
		if g.Name != w.Name || g.Unit != w.Unit || !sameBits(g.Data, w.Data) {
			t.Errorf("real field %s: not bit-identical", w.Name)
		}
	}
	for i, w := range want.Scalars {
		g := got.Scalars[i]
		if g.Name != w.Name || g.Unit != w.Unit || math.Float64bits(g.Value) != math.Float64bits(w.Value) {
			t.Errorf("scalar %+v, want %+v", g, w)
		}
	}
	if string(got.RNG) != string(want.RNG) {
		t.Errorf("RNG state %x, want %x", got.RNG, want.RNG)
	}
}

func expectAll(c *Checkpoint) Expect {
	var e Expect
	for _, s := range c.Spectral {
		e.Spectral = append(e.Spectral, s.Name)
	}
	for _, r := range c.Real {
		e.Real = append(e.Real, r.Name)
	}
	for _, s := range c.Scalars {
		e.Scalars = append(e.Scalars, s.Name)
	}
	return e
}

// Every bit written comes back: complex128 as (re, im) float64 pairs,
// including NaN payloads, −0, infinities and subnormals.
func TestCheckpointBitExact(t *testing.T) {
	g := testGrid(t)
	path := filepath.Join(t.TempDir(), CheckpointName)
	want := testCheckpoint(g, 1)
	if err := WriteCheckpoint(path, g, want); err != nil {
		t.Fatal(err)
	}
	got, err := ReadCheckpoint(path, g, expectAll(want))
	if err != nil {
		t.Fatal(err)
	}
	checkpointsEqual(t, got, want)

	// The reader lists a checkpoint as one snapshot of its real fields.
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	s := f.Snapshots()
	if f.Kind() != KindCheckpoint || len(s) != 1 || s[0].Step != want.Step || s[0].Time != want.Time ||
		len(s[0].Fields) != 1 || s[0].Fields[0] != (FieldInfo{"eta_m", "η0"}) {
		t.Fatalf("checkpoint as snapshot: kind %q, %+v", f.Kind(), s)
	}
	r, err := f.ReadField(nil, "eta_m", 0)
	if err != nil || !sameBits(r, want.Real[0].Data) {
		t.Errorf("eta_m through the reader: %v", err)
	}
}

// A checkpoint with nothing optional: no real fields, scalars or RNG state.
func TestCheckpointMinimal(t *testing.T) {
	g := testGrid(t)
	path := filepath.Join(t.TempDir(), CheckpointName)
	want := &Checkpoint{Info: testInfo(), Time: 0, Step: 0, Dt: 0.01,
		Spectral: []SpectralField{{Name: "phi", Unit: "1", Data: g.NewSpectral()}}}
	if err := WriteCheckpoint(path, g, want); err != nil {
		t.Fatal(err)
	}
	got, err := ReadCheckpoint(path, g, Expect{Spectral: []string{"phi"}})
	if err != nil {
		t.Fatal(err)
	}
	got.RNG = nil
	checkpointsEqual(t, got, want)
}

func TestCheckpointReadErrors(t *testing.T) {
	g := testGrid(t)
	dir := t.TempDir()
	path := filepath.Join(dir, CheckpointName)
	c := testCheckpoint(g, 2)
	if err := WriteCheckpoint(path, g, c); err != nil {
		t.Fatal(err)
	}
	other, _ := spectral.NewGrid(8, 8, 2, 1.5)
	_, err := ReadCheckpoint(path, other, Expect{})
	mustContain(t, err, path, "grid size mismatch", "file has 8×6 points, expected 8×8")

	want := expectAll(c)
	want.Spectral = append(want.Spectral, "psi_4")
	want.Scalars = append(want.Scalars, "dt_prev")
	_, err = ReadCheckpoint(path, g, want)
	mustContain(t, err, path, "lacks spectral field psi_4, scalar dt_prev")

	writeRun(t, dir, g, 1)
	_, err = ReadCheckpoint(filepath.Join(dir, SnapshotIndexName), g, Expect{})
	mustContain(t, err, "holds a snapshot-index, not a checkpoint")

	_, err = ReadCheckpoint(filepath.Join(dir, "nothing.h5"), g, Expect{})
	if !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing checkpoint: %v", err)
	}
}

// Replacing a checkpoint is atomic: when the new one cannot be completed,
// the previous one is still there, byte for byte, and reads back exactly.
func TestCheckpointFailureKeepsPrevious(t *testing.T) {
	g := testGrid(t)
	dir := t.TempDir()
	path := filepath.Join(dir, CheckpointName)
	prev := testCheckpoint(g, 3)
	if err := WriteCheckpoint(path, g, prev); err != nil {
		t.Fatal(err)
	}
	before := readAll(t, dir)
	for _, c := range []struct {
		name  string
		fault func(*faultFS)
		errno error
	}{
		{"fsync fails", func(f *faultFS) { f.failSync = true }, syscall.EIO},
		{"rename fails", func(f *faultFS) { f.renameOK = 0 }, syscall.EIO},
		{"no room for the temporary file", func(f *faultFS) { f.failCreate = true }, syscall.ENOSPC},
	} {
		fs := newFaultFS()
		c.fault(fs)
		err := writeCheckpoint(fs, path, g, testCheckpoint(g, 4))
		mustContain(t, err, path)
		if !errors.Is(err, c.errno) {
			t.Errorf("%s: %v does not wrap %v", c.name, err, c.errno)
		}
		sameFiles(t, dir, before)
	}
	got, err := ReadCheckpoint(path, g, expectAll(prev))
	if err != nil {
		t.Fatal(err)
	}
	checkpointsEqual(t, got, prev)
}

func TestCheckpointRejects(t *testing.T) {
	g := testGrid(t)
	path := filepath.Join(t.TempDir(), CheckpointName)
	c := testCheckpoint(g, 5)
	c.Spectral[1].Name = c.Spectral[0].Name
	mustContain(t, WriteCheckpoint(path, g, c), `spectral field "psi_0" given twice`)
	c = testCheckpoint(g, 5)
	c.Time = math.NaN()
	mustContain(t, WriteCheckpoint(path, g, c), "time = NaN")
	if _, err := os.Stat(path); !errors.Is(err, os.ErrNotExist) {
		t.Error("a rejected checkpoint left a file")
	}
	defer func() {
		if recover() == nil {
			t.Error("a spectral field of the wrong length did not panic")
		}
	}()
	c = testCheckpoint(g, 5)
	c.Spectral[0].Data = c.Spectral[0].Data[1:]
	WriteCheckpoint(path, g, c)
}
