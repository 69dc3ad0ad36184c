package outputs

import (
	"fmt"
	"math"
	"strings"
	"unsafe"

	"gonum.org/v1/hdf5"

	"github.com/memix-sim/memix/spectral"
)

// CheckpointName is the file name of the checkpoint in an output directory.
const CheckpointName = "checkpoint.h5"

// SpectralField is a named spectral field: the half spectrum of a real field
// in the layout and normalisation of package spectral.
type SpectralField struct {
	Name string
	Unit string       // unit of the coefficients (that of the real field)
	Data []complex128 // length Ny·(Nx/2+1)
}

// Scalar is a named number with its unit.
type Scalar struct {
	Name  string
	Unit  string
	Value float64
}

// Checkpoint is everything needed to continue a run bit for bit.
type Checkpoint struct {
	Info     RunInfo
	Time     float64 // reduced time
	Step     int64
	Dt       float64 // current time step, reduced time units
	Spectral []SpectralField
	Real     []Field
	Scalars  []Scalar // further state, e.g. an adaptive-step controller's memory
	RNG      []byte   // the state of the random number generator, opaque
}

// Expect lists what a checkpoint must hold for a reader to accept it.
type Expect struct {
	Spectral []string
	Real     []string
	Scalars  []string
}

// WriteCheckpoint writes c for grid g to path atomically: path keeps its
// previous content unless the complete new checkpoint was written and
// synced. Spectral data are stored as float64 (re, im) pairs and every
// number as IEEE binary64, so ReadCheckpoint returns exactly the bits
// written. Names must be unique within each kind and well formed; a field
// length that does not match g panics. The directory must exist.
func WriteCheckpoint(path string, g *spectral.Grid, c *Checkpoint) error {
	return writeCheckpoint(defaultFS, path, g, c)
}

func writeCheckpoint(fsys fileSystem, path string, g *spectral.Grid, c *Checkpoint) error {
	if err := checkCheckpoint(g, c); err != nil {
		return fmt.Errorf("outputs: checkpoint %s: %w", path, err)
	}
	return writeH5Atomic(fsys, path, func(root *hdf5.Group) error {
		return writeCheckpointBody(root, gridOf(g), c)
	})
}

func checkCheckpoint(g *spectral.Grid, c *Checkpoint) error {
	if err := c.Info.Scales.validate(); err != nil {
		return err
	}
	if math.IsNaN(c.Time) || math.IsInf(c.Time, 0) {
		return fmt.Errorf("time = %g: must be finite", c.Time)
	}
	seen := map[string]bool{}
	for _, s := range c.Spectral {
		if err := checkName("spectral field", s.Name); err != nil {
			return err
		}
		if seen[s.Name] {
			return fmt.Errorf("spectral field %q given twice", s.Name)
		}
		seen[s.Name] = true
		if len(s.Data) != g.SpecLen() {
			panic(fmt.Sprintf("outputs: spectral field %q has %d values, grid has %d", s.Name, len(s.Data), g.SpecLen()))
		}
	}
	if err := checkFields("real field", c.Real, g.RealLen()); err != nil {
		return err
	}
	seen = map[string]bool{}
	for _, s := range c.Scalars {
		if err := checkName("scalar", s.Name); err != nil {
			return err
		}
		if seen[s.Name] {
			return fmt.Errorf("scalar %q given twice", s.Name)
		}
		seen[s.Name] = true
	}
	return nil
}

// pairs views a complex slice as its (re, im) float64 pairs. Go lays out a
// complex128 as two float64, real part first.
func pairs(c []complex128) []float64 {
	if len(c) == 0 {
		return nil
	}
	return unsafe.Slice((*float64)(unsafe.Pointer(&c[0])), 2*len(c))
}

func writeCheckpointBody(root *hdf5.Group, g Grid, c *Checkpoint) error {
	tu := c.Info.Scales.TimeUnit
	if err := writeHeader(root, KindCheckpoint, g, c.Info); err != nil {
		return err
	}
	var sn, rn, cn []string
	for _, s := range c.Spectral {
		sn = append(sn, s.Name)
	}
	for _, r := range c.Real {
		rn = append(rn, r.Name)
	}
	for _, s := range c.Scalars {
		cn = append(cn, s.Name)
	}
	for _, a := range []struct {
		k string
		v []string
	}{{"spectral_names", sn}, {"real_names", rn}, {"scalar_names", cn}} {
		if err := putStrings(root, a.k, a.v, false); err != nil {
			return err
		}
	}
	if err := writeDataset(root, "time", nil, []float64{c.Time}, tu); err != nil {
		return err
	}
	if err := writeDataset(root, "time_si", nil, []float64{c.Time * c.Info.Scales.Time}, "s"); err != nil {
		return err
	}
	if err := writeDataset(root, "step", nil, []int64{c.Step}, "1"); err != nil {
		return err
	}
	if err := writeDataset(root, "dt", nil, []float64{c.Dt}, tu); err != nil {
		return err
	}
	if err := writeDataset(root, "rng_state", []uint{uint(len(c.RNG))}, c.RNG, "byte"); err != nil {
		return err
	}
	if err := writeCoords(root, g, c.Info.Scales.LengthUnit); err != nil {
		return err
	}
	groups := []struct {
		name  string
		write func(*hdf5.Group) error
	}{
		{"spectral", func(grp *hdf5.Group) error {
			dims := []uint{uint(g.Ny), uint(g.Nx/2 + 1), 2}
			for _, s := range c.Spectral {
				if err := writeDataset(grp, s.Name, dims, pairs(s.Data), s.Unit,
					"layout", "half spectrum [ky row][kx column][re, im]; see doc of package outputs",
					"normalisation", "box-normalised: unnormalised DFT / (Nx·Ny)"); err != nil {
					return err
				}
			}
			return nil
		}},
		{"real", func(grp *hdf5.Group) error {
			dims := []uint{uint(g.Ny), uint(g.Nx)}
			for _, r := range c.Real {
				if err := writeDataset(grp, r.Name, dims, r.Data, r.Unit, "centering", "node"); err != nil {
					return err
				}
			}
			return nil
		}},
		{"scalars", func(grp *hdf5.Group) error {
			for _, s := range c.Scalars {
				if err := writeDataset(grp, s.Name, nil, []float64{s.Value}, s.Unit); err != nil {
					return err
				}
			}
			return nil
		}},
	}
	for _, gr := range groups {
		grp, err := root.CreateGroup(gr.name)
		if err != nil {
			return h5fail("create group "+gr.name, err)
		}
		err = gr.write(grp)
		if cerr := grp.Close(); err == nil && cerr != nil {
			err = h5fail("close group "+gr.name, cerr)
		}
		if err != nil {
			return err
		}
	}
	return nil
}

// readCheckpointInfo lists a checkpoint as one snapshot holding its real
// arrays.
func (f *File) readCheckpointInfo() error {
	var s SnapshotInfo
	t, tsi, st := []float64{0}, []float64{0}, []int64{0}
	if _, err := readDataset(f.root, "time", nil, t); err != nil {
		return err
	}
	if _, err := readDataset(f.root, "time_si", nil, tsi); err != nil {
		return err
	}
	if _, err := readDataset(f.root, "step", nil, st); err != nil {
		return err
	}
	s.Time, s.TimeSI, s.Step = t[0], tsi[0], st[0]
	names, err := getStrings(f.root, "real_names")
	if err != nil {
		return err
	}
	rg, err := f.root.OpenGroup("real")
	if err != nil {
		return h5fail("open group real", err)
	}
	defer rg.Close()
	for _, n := range names {
		ds, err := rg.OpenDataset(n)
		if err != nil {
			return h5fail("open dataset real/"+n, err)
		}
		u, err := getString(ds, "unit")
		ds.Close()
		if err != nil {
			return err
		}
		s.Fields = append(s.Fields, FieldInfo{n, u})
	}
	f.snaps = []SnapshotInfo{s}
	return nil
}

// ReadCheckpoint reads the checkpoint at path, made for grid g, and checks
// that it holds every name of want. It returns an error naming path for
// anything Open reports, for a file that is not a checkpoint, a grid or box
// that is not g, and missing entries (all listed at once). The returned
// data are exactly the bits WriteCheckpoint was given.
func ReadCheckpoint(path string, g *spectral.Grid, want Expect) (*Checkpoint, error) {
	f, err := Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if f.Kind() != KindCheckpoint {
		return nil, fmt.Errorf("outputs: %s holds a %s, not a checkpoint", path, f.Kind())
	}
	if err := f.CheckGrid(g); err != nil {
		return nil, err
	}
	c := &Checkpoint{Info: f.Info()}
	err = h5call(func() error { return f.readCheckpoint(c, g) })
	if err != nil {
		return nil, fmt.Errorf("outputs: read checkpoint %s: %w", path, err)
	}
	var missing []string
	has := func(kind string, names []string, have func(string) bool) {
		for _, n := range names {
			if !have(n) {
				missing = append(missing, kind+" "+n)
			}
		}
	}
	has("spectral field", want.Spectral, func(n string) bool { return c.SpectralByName(n) != nil })
	has("real field", want.Real, func(n string) bool { return c.RealByName(n) != nil })
	has("scalar", want.Scalars, func(n string) bool { return c.ScalarByName(n) != nil })
	if missing != nil {
		return nil, fmt.Errorf("outputs: checkpoint %s lacks %s", path, strings.Join(missing, ", "))
	}
	return c, nil
}

func (f *File) readCheckpoint(c *Checkpoint, g *spectral.Grid) error {
	root := f.root
	t, st, dt := []float64{0}, []int64{0}, []float64{0}
	if _, err := readDataset(root, "time", nil, t); err != nil {
		return err
	}
	if _, err := readDataset(root, "step", nil, st); err != nil {
		return err
	}
	if _, err := readDataset(root, "dt", nil, dt); err != nil {
		return err
	}
	c.Time, c.Step, c.Dt = t[0], st[0], dt[0]
	ds, dims, err := datasetShape(root, "rng_state")
	if err != nil {
		return err
	}
	ds.Close()
	if len(dims) != 1 {
		return fmt.Errorf("dataset rng_state has shape %s, want one dimension", shapeString(dims))
	}
	c.RNG = make([]byte, dims[0])
	if _, err := readDataset(root, "rng_state", dims, c.RNG); err != nil {
		return err
	}
	read := func(group, namesAttr string, each func(grp *hdf5.Group, name string) error) error {
		names, err := getStrings(root, namesAttr)
		if err != nil {
			return err
		}
		grp, err := root.OpenGroup(group)
		if err != nil {
			return h5fail("open group "+group, err)
		}
		defer grp.Close()
		for _, n := range names {
			if err := each(grp, n); err != nil {
				return fmt.Errorf("%s/%s: %w", group, n, err)
			}
		}
		return nil
	}
	err = read("spectral", "spectral_names", func(grp *hdf5.Group, n string) error {
		s := SpectralField{Name: n, Data: g.NewSpectral()}
		var err error
		s.Unit, err = readDataset(grp, n, []uint{uint(g.Ny), uint(g.Nkx()), 2}, pairs(s.Data))
		c.Spectral = append(c.Spectral, s)
		return err
	})
	if err != nil {
		return err
	}
	err = read("real", "real_names", func(grp *hdf5.Group, n string) error {
		r := Field{Name: n, Data: g.NewReal()}
		var err error
		r.Unit, err = readDataset(grp, n, []uint{uint(g.Ny), uint(g.Nx)}, r.Data)
		c.Real = append(c.Real, r)
		return err
	})
	if err != nil {
		return err
	}
	return read("scalars", "scalar_names", func(grp *hdf5.Group, n string) error {
		v := []float64{0}
		u, err := readDataset(grp, n, nil, v)
		c.Scalars = append(c.Scalars, Scalar{n, u, v[0]})
		return err
	})
}

// SpectralByName returns the spectral field called name, or nil.
func (c *Checkpoint) SpectralByName(name string) *SpectralField {
	for i := range c.Spectral {
		if c.Spectral[i].Name == name {
			return &c.Spectral[i]
		}
	}
	return nil
}

// RealByName returns the real field called name, or nil.
func (c *Checkpoint) RealByName(name string) *Field {
	for i := range c.Real {
		if c.Real[i].Name == name {
			return &c.Real[i]
		}
	}
	return nil
}

// ScalarByName returns the scalar called name, or nil.
func (c *Checkpoint) ScalarByName(name string) *Scalar {
	for i := range c.Scalars {
		if c.Scalars[i].Name == name {
			return &c.Scalars[i]
		}
	}
	return nil
}
