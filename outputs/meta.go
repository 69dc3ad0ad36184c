package outputs

import (
	"errors"
	"fmt"
	"math"
	"regexp"

	"gonum.org/v1/hdf5"

	"github.com/memix-sim/memix/spectral"
)

// Schema is the version of the layout of the HDF5 files this package
// writes (root attribute memix_schema). A reader rejects any other version.
const Schema = 1

// The values of the root attribute memix_file, which marks a memix file and
// says what it holds.
const (
	KindSnapshot      = "snapshot"       // one snapshot (snapshots.d/NNNNNN.h5)
	KindSnapshotIndex = "snapshot-index" // the index snapshots.h5
	KindCheckpoint    = "checkpoint"     // checkpoint.h5
)

// Scales relates the reduced units the solver works in to SI units.
type Scales struct {
	LengthUnit string  // symbol of the reduced length unit, e.g. "ℓ0"
	Length     float64 // metres per reduced length unit, > 0
	TimeUnit   string  // symbol of the reduced time unit, e.g. "τ0"
	Time       float64 // seconds per reduced time unit, > 0
}

func (s Scales) validate() error {
	var errs []error
	if s.LengthUnit == "" {
		errs = append(errs, errors.New("scales: length unit symbol is empty"))
	}
	if s.TimeUnit == "" {
		errs = append(errs, errors.New("scales: time unit symbol is empty"))
	}
	if !(s.Length > 0) || math.IsInf(s.Length, 0) {
		errs = append(errs, fmt.Errorf("scales: length scale = %g m: must be finite and > 0", s.Length))
	}
	if !(s.Time > 0) || math.IsInf(s.Time, 0) {
		errs = append(errs, fmt.Errorf("scales: time scale = %g s: must be finite and > 0", s.Time))
	}
	return errors.Join(errs...)
}

// RunInfo is stamped on every HDF5 file of a run.
type RunInfo struct {
	Version string // program version, e.g. "memix 0.3.0 (abc1234)"
	Config  string // the resolved configuration as YAML text
	Scales  Scales
}

// Field is a named real field on the grid, in reduced units.
type Field struct {
	Name string    // [A-Za-z0-9_.+-]+, not starting with '.'
	Unit string    // unit of the values, e.g. "1" or "ℓ0/τ0"
	Data []float64 // length Nx·Ny; the value at (i, j) is Data[j*Nx+i]
}

// Grid is the grid recorded in a file: Nx × Ny points on the box Lx × Ly
// (reduced length units).
type Grid struct {
	Nx, Ny int
	Lx, Ly float64
}

func gridOf(g *spectral.Grid) Grid { return Grid{g.Nx, g.Ny, g.Lx, g.Ly} }

// Check returns an error naming both sizes when the recorded grid differs
// from g.
func (h Grid) Check(g *spectral.Grid) error {
	if h.Nx != g.Nx || h.Ny != g.Ny {
		return fmt.Errorf("grid size mismatch: file has %d×%d points, expected %d×%d", h.Nx, h.Ny, g.Nx, g.Ny)
	}
	if h.Lx != g.Lx || h.Ly != g.Ly {
		return fmt.Errorf("box mismatch: file has %g×%g, expected %g×%g", h.Lx, h.Ly, g.Lx, g.Ly)
	}
	return nil
}

var nameRE = regexp.MustCompile(`^[A-Za-z0-9_+-][A-Za-z0-9_.+-]*$`)

// checkName rejects names that cannot serve as an HDF5 link name, an XDMF
// attribute name and a CSV column all at once.
func checkName(what, name string) error {
	if !nameRE.MatchString(name) {
		return fmt.Errorf("%s name %q: must match %s", what, name, nameRE)
	}
	return nil
}

// checkFields validates names (unique, well formed) and lengths of fields.
// A wrong length is a programmer error and panics.
func checkFields(what string, fields []Field, n int) error {
	seen := make(map[string]bool, len(fields))
	for _, f := range fields {
		if err := checkName(what, f.Name); err != nil {
			return err
		}
		if seen[f.Name] {
			return fmt.Errorf("%s %q given twice", what, f.Name)
		}
		seen[f.Name] = true
		if len(f.Data) != n {
			panic(fmt.Sprintf("outputs: %s %q has %d values, grid has %d points", what, f.Name, len(f.Data), n))
		}
	}
	return nil
}

// writeHeader writes the root attributes every memix HDF5 file carries.
func writeHeader(root *hdf5.Group, kind string, g Grid, info RunInfo) error {
	for _, a := range []struct{ k, v string }{
		{"memix_file", kind},
		{"program_version", info.Version},
		{"config_yaml", info.Config},
		{"length_unit", info.Scales.LengthUnit},
		{"time_unit", info.Scales.TimeUnit},
	} {
		if err := putString(root, a.k, a.v); err != nil {
			return err
		}
	}
	for _, a := range []struct {
		k string
		v int64
	}{{"memix_schema", Schema}, {"nx", int64(g.Nx)}, {"ny", int64(g.Ny)}} {
		if err := putI64(root, a.k, a.v); err != nil {
			return err
		}
	}
	for _, a := range []struct {
		k string
		v float64
	}{{"lx", g.Lx}, {"ly", g.Ly}, {"length_unit_si", info.Scales.Length}, {"time_unit_si", info.Scales.Time}} {
		if err := putF64(root, a.k, a.v); err != nil {
			return err
		}
	}
	return nil
}

// writeCoords writes the coordinate datasets x and y of the grid points.
func writeCoords(root *hdf5.Group, g Grid, lengthUnit string) error {
	x := make([]float64, g.Nx)
	for i := range x {
		x[i] = float64(i) * g.Lx / float64(g.Nx)
	}
	y := make([]float64, g.Ny)
	for j := range y {
		y[j] = float64(j) * g.Ly / float64(g.Ny)
	}
	if err := writeDataset(root, "x", []uint{uint(g.Nx)}, x, lengthUnit); err != nil {
		return err
	}
	return writeDataset(root, "y", []uint{uint(g.Ny)}, y, lengthUnit)
}

// header is what readHeader finds on the root group.
type header struct {
	kind string
	grid Grid
	info RunInfo
}

// readHeader reads the root attributes. A missing memix_file marker means
// the file is not a memix file.
func readHeader(root *hdf5.Group) (header, error) {
	var h header
	if !hasAttr(root, "memix_file") {
		return h, errNotMemix
	}
	var err error
	if h.kind, err = getString(root, "memix_file"); err != nil {
		return h, err
	}
	var schema int64
	if err := getScalar(root, "memix_schema", &schema); err != nil {
		return h, err
	}
	if schema != Schema {
		return h, fmt.Errorf("memix_schema = %d: this program reads schema %d only", schema, Schema)
	}
	for _, a := range []struct {
		k string
		v *string
	}{{"program_version", &h.info.Version}, {"config_yaml", &h.info.Config},
		{"length_unit", &h.info.Scales.LengthUnit}, {"time_unit", &h.info.Scales.TimeUnit}} {
		if *a.v, err = getString(root, a.k); err != nil {
			return h, err
		}
	}
	var nx, ny int64
	for _, a := range []struct {
		k string
		v any
	}{{"nx", &nx}, {"ny", &ny}, {"lx", &h.grid.Lx}, {"ly", &h.grid.Ly},
		{"length_unit_si", &h.info.Scales.Length}, {"time_unit_si", &h.info.Scales.Time}} {
		if err := getScalar(root, a.k, a.v); err != nil {
			return h, err
		}
	}
	h.grid.Nx, h.grid.Ny = int(nx), int(ny)
	if nx < 1 || ny < 1 || nx*ny > 1<<40 {
		return h, fmt.Errorf("recorded grid %d×%d is not a valid size", nx, ny)
	}
	return h, nil
}

var errNotMemix = errors.New("not a memix file: the root attribute memix_file is absent")
