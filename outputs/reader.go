package outputs

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"gonum.org/v1/hdf5"

	"github.com/memix-sim/memix/spectral"
)

// FieldInfo names a field stored in a file and its unit.
type FieldInfo struct {
	Name string
	Unit string
}

// SnapshotInfo describes one snapshot of a file.
type SnapshotInfo struct {
	Time   float64 // reduced time
	TimeSI float64 // time in seconds
	Step   int64
	Fields []FieldInfo // the real fields it holds, in the order written
	File   string      // the HDF5 file that holds its data, relative to the directory of the opened file ("" for the opened file itself)
}

// File is an open memix HDF5 output: a snapshot index (snapshots.h5), one
// snapshot file (snapshots.d/NNNNNN.h5) or a checkpoint (checkpoint.h5).
// A snapshot index lists every snapshot of the run; a snapshot file lists
// its own snapshot; a checkpoint lists one snapshot holding its real
// arrays. A File is not safe for concurrent use.
type File struct {
	path  string
	h     *hdf5.File
	root  *hdf5.Group
	hdr   header
	snaps []SnapshotInfo
}

// Open opens the memix HDF5 file at path for reading. It returns an error
// that names path and says which of these it is: the file does not exist,
// is not an HDF5 file, is truncated or damaged, is not a memix file (no
// memix_file marker), has another schema version, or lacks a dataset of its
// layout. Close the File when done.
func Open(path string) (*File, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("outputs: open %s: %w", path, err)
	}
	if st.IsDir() {
		return nil, fmt.Errorf("outputs: open %s: is a directory", path)
	}
	f := &File{path: path}
	err = h5call(func() error {
		if st.Size() == 0 {
			return errors.New("empty file (0 bytes): not an HDF5 file")
		}
		if !hdf5.IsHDF5(path) {
			return errors.New("not an HDF5 file (no HDF5 signature)")
		}
		h, err := hdf5.OpenFile(path, hdf5.F_ACC_RDONLY)
		if err != nil {
			return h5fail("truncated or damaged HDF5 file", err)
		}
		f.h = h
		if f.root, err = h.OpenGroup("/"); err != nil {
			return h5fail("truncated or damaged HDF5 file: root group", err)
		}
		if f.hdr, err = readHeader(f.root); err != nil {
			return err
		}
		switch f.hdr.kind {
		case KindSnapshotIndex:
			return f.readIndex()
		case KindSnapshot:
			return f.readSnapshotFile()
		case KindCheckpoint:
			return f.readCheckpointInfo()
		}
		return fmt.Errorf("memix_file = %q: unknown kind (want %s, %s or %s)", f.hdr.kind, KindSnapshotIndex, KindSnapshot, KindCheckpoint)
	})
	if err != nil {
		f.Close()
		return nil, fmt.Errorf("outputs: open %s: %w", path, err)
	}
	return f, nil
}

// Close releases the file. Calling it twice is allowed.
func (f *File) Close() error {
	return h5call(func() error {
		var err error
		if f.root != nil {
			err = f.root.Close()
		}
		if f.h != nil {
			if e := f.h.Close(); err == nil {
				err = e
			}
		}
		f.root, f.h = nil, nil
		return err
	})
}

// Path returns the path the file was opened with.
func (f *File) Path() string { return f.path }

// Kind returns the file's kind: KindSnapshotIndex, KindSnapshot or
// KindCheckpoint.
func (f *File) Kind() string { return f.hdr.kind }

// Grid returns the grid recorded in the file.
func (f *File) Grid() Grid { return f.hdr.grid }

// CheckGrid returns an error naming the file and both sizes when the
// recorded grid is not g.
func (f *File) CheckGrid(g *spectral.Grid) error {
	if err := f.hdr.grid.Check(g); err != nil {
		return fmt.Errorf("outputs: %s: %w", f.path, err)
	}
	return nil
}

// Info returns the program version, resolved configuration and unit scales
// recorded in the file.
func (f *File) Info() RunInfo { return f.hdr.info }

// Snapshots lists the snapshots of the file. The slice is shared and must
// not be modified.
func (f *File) Snapshots() []SnapshotInfo { return f.snaps }

// readIndex lists the snapshots of an index from its time, time_si and
// step datasets and its field attributes.
func (f *File) readIndex() error {
	names, err := getStrings(f.root, "field_names")
	if err != nil {
		return err
	}
	units, err := getStrings(f.root, "field_units")
	if err != nil {
		return err
	}
	if len(units) != len(names) {
		return fmt.Errorf("field_units has %d entries, field_names %d", len(units), len(names))
	}
	fields := make([]FieldInfo, len(names))
	for i := range names {
		fields[i] = FieldInfo{names[i], units[i]}
	}
	ds, dims, err := datasetShape(f.root, "time")
	if err != nil {
		return err
	}
	ds.Close()
	if len(dims) != 1 {
		return fmt.Errorf("dataset time has shape %s, want one dimension", shapeString(dims))
	}
	n := int(dims[0])
	t, tsi, st := make([]float64, n), make([]float64, n), make([]int64, n)
	if _, err := readDataset(f.root, "time", dims, t); err != nil {
		return err
	}
	if _, err := readDataset(f.root, "time_si", dims, tsi); err != nil {
		return err
	}
	if _, err := readDataset(f.root, "step", dims, st); err != nil {
		return err
	}
	f.snaps = make([]SnapshotInfo, n)
	for i := range f.snaps {
		f.snaps[i] = SnapshotInfo{Time: t[i], TimeSI: tsi[i], Step: st[i], Fields: fields, File: snapshotFile(i)}
	}
	return nil
}

// readSnapshotFile lists the one snapshot of a snapshot file.
func (f *File) readSnapshotFile() error {
	s, err := readSnapshotMeta(f.root)
	if err != nil {
		return err
	}
	f.snaps = []SnapshotInfo{s}
	return nil
}

// readSnapshotMeta reads time, step and field list of a snapshot group.
func readSnapshotMeta(root *hdf5.Group) (SnapshotInfo, error) {
	var s SnapshotInfo
	t, tsi, st := []float64{0}, []float64{0}, []int64{0}
	if _, err := readDataset(root, "time", nil, t); err != nil {
		return s, err
	}
	if _, err := readDataset(root, "time_si", nil, tsi); err != nil {
		return s, err
	}
	if _, err := readDataset(root, "step", nil, st); err != nil {
		return s, err
	}
	s.Time, s.TimeSI, s.Step = t[0], tsi[0], st[0]
	names, err := getStrings(root, "field_names")
	if err != nil {
		return s, err
	}
	fg, err := root.OpenGroup("fields")
	if err != nil {
		return s, h5fail("open group fields", err)
	}
	defer fg.Close()
	for _, n := range names {
		ds, err := fg.OpenDataset(n)
		if err != nil {
			return s, h5fail("open dataset fields/"+n, err)
		}
		u, err := getString(ds, "unit")
		ds.Close()
		if err != nil {
			return s, err
		}
		s.Fields = append(s.Fields, FieldInfo{n, u})
	}
	return s, nil
}

// ReadField reads field name of snapshot snap (an index into Snapshots)
// into dst and returns it; a nil dst is allocated. The values are in the
// unit that Snapshots lists, on the grid that Grid returns, with the
// value at (i, j) at dst[j*Nx+i]. It returns an error naming the file and
// snapshot if snap is out of range, the field is missing, dst has the wrong
// length, or the data cannot be read (for an index: the snapshot's own
// file is missing, truncated or not the one the index expects).
func (f *File) ReadField(dst []float64, name string, snap int) ([]float64, error) {
	if snap < 0 || snap >= len(f.snaps) {
		return nil, fmt.Errorf("outputs: %s: snapshot %d out of range [0, %d)", f.path, snap, len(f.snaps))
	}
	s := f.snaps[snap]
	found := false
	for _, fi := range s.Fields {
		found = found || fi.Name == name
	}
	if !found {
		have := make([]string, len(s.Fields))
		for i, fi := range s.Fields {
			have[i] = fi.Name
		}
		return nil, fmt.Errorf("outputs: %s: snapshot %d (step %d) has no field %q (it has: %s)", f.path, snap, s.Step, name, strings.Join(have, ", "))
	}
	g := f.hdr.grid
	if dst == nil {
		dst = make([]float64, g.Nx*g.Ny)
	}
	if len(dst) != g.Nx*g.Ny {
		return nil, fmt.Errorf("outputs: %s: field %q: destination has %d values, the file's %d×%d grid needs %d", f.path, name, len(dst), g.Nx, g.Ny, g.Nx*g.Ny)
	}
	err := h5call(func() error {
		var loc string
		switch f.hdr.kind {
		case KindSnapshotIndex:
			loc = "snapshots/" + snapshotLink(snap)
		case KindSnapshot:
			loc = "/"
		case KindCheckpoint:
			loc = "real"
		}
		grp, err := f.root.OpenGroup(loc)
		if err != nil {
			if f.hdr.kind != KindSnapshotIndex {
				return h5fail("open group "+loc, err)
			}
			err = h5fail(s.File+": truncated or damaged", err)
			if _, serr := os.Stat(filepath.Join(filepath.Dir(f.path), s.File)); errors.Is(serr, os.ErrNotExist) {
				return fmt.Errorf("snapshot file %s is missing: %w", s.File, serr)
			}
			return err
		}
		defer grp.Close()
		if f.hdr.kind == KindSnapshotIndex {
			// The linked file must be the snapshot the index lists.
			h, err := readHeader(grp)
			if err != nil {
				return fmt.Errorf("%s: %w", s.File, err)
			}
			if h.kind != KindSnapshot || h.grid != g {
				return fmt.Errorf("%s: holds a %s on a %d×%d grid, want a snapshot on %d×%d", s.File, h.kind, h.grid.Nx, h.grid.Ny, g.Nx, g.Ny)
			}
			st := []int64{0}
			if _, err := readDataset(grp, "step", nil, st); err != nil {
				return fmt.Errorf("%s: %w", s.File, err)
			}
			if st[0] != s.Step {
				return fmt.Errorf("%s: holds step %d, the index lists step %d", s.File, st[0], s.Step)
			}
		}
		path := "fields/" + name
		if f.hdr.kind == KindCheckpoint {
			path = name
		}
		_, err = readDataset(grp, path, []uint{uint(g.Ny), uint(g.Nx)}, dst)
		return err
	})
	if err != nil {
		return nil, fmt.Errorf("outputs: %s: snapshot %d (step %d), field %q: %w", f.path, snap, s.Step, name, err)
	}
	return dst, nil
}
