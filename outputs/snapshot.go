package outputs

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"

	"gonum.org/v1/hdf5"

	"github.com/memix-sim/memix/spectral"
)

// The names of the snapshot files inside an output directory.
const (
	SnapshotIndexName = "snapshots.h5"   // the index
	SnapshotXDMFName  = "snapshots.xdmf" // the XDMF sidecar
	SnapshotDirName   = "snapshots.d"    // one HDF5 file per snapshot
)

// snapshotFile returns the name, relative to the output directory, of the
// file of snapshot n.
func snapshotFile(n int) string {
	return SnapshotDirName + "/" + snapshotLink(n) + ".h5"
}

// snapshotLink returns the name of the link to snapshot n in the index.
func snapshotLink(n int) string { return fmt.Sprintf("%06d", n) }

var snapshotFileRE = regexp.MustCompile(`^([0-9]{6,})\.h5$`)

// createH5 creates the HDF5 file path (truncating it), lets body fill the
// root group, then flushes and closes everything, so that a write error
// anywhere, including at the final flush, is returned.
func createH5(path string, body func(root *hdf5.Group) error) error {
	return h5call(func() error {
		f, err := hdf5.CreateFile(path, hdf5.F_ACC_TRUNC)
		if err != nil {
			return h5fail("create HDF5 file", err)
		}
		defer f.Close()
		root, err := f.OpenGroup("/")
		if err != nil {
			return h5fail("open root group", err)
		}
		defer root.Close()
		if err := body(root); err != nil {
			return err
		}
		if err := root.Close(); err != nil {
			return h5fail("close root group", err)
		}
		if err := f.Flush(hdf5.F_SCOPE_LOCAL); err != nil {
			return h5fail("flush HDF5 file", err)
		}
		if err := f.Close(); err != nil {
			return h5fail("close HDF5 file", err)
		}
		return nil
	})
}

// writeH5Atomic writes an HDF5 file atomically (see writeAtomic).
func writeH5Atomic(fsys fileSystem, path string, body func(root *hdf5.Group) error) error {
	return writeAtomic(fsys, path, func(tmp tempFile) error { return createH5(tmp.Name(), body) })
}

// snapEntry is one snapshot listed in the index.
type snapEntry struct {
	time, timeSI float64
	step         int64
}

// SnapshotWriter writes the snapshots of one run into an output directory:
// each snapshot as its own HDF5 file snapshots.d/NNNNNN.h5, then the index
// snapshots.h5 and the sidecar snapshots.xdmf, each replaced atomically. A
// failure while writing snapshot n leaves snapshots 0…n−1, the index and
// the sidecar as they were (see the package documentation, "Crash
// safety"). A SnapshotWriter is not safe for concurrent use.
type SnapshotWriter struct {
	dir   string
	grid  Grid
	info  RunInfo
	fs    fileSystem
	names []string // field names, fixed by the first snapshot
	units []string
	snaps []snapEntry
}

// NewSnapshotWriter prepares to write snapshots of fields on grid g into
// the existing directory dir. It returns an error if info.Scales is not
// valid or if dir already holds a snapshot index (resume a run with
// ResumeSnapshotWriter instead). Snapshot files that no index lists (left
// by a run that died before its first index) are removed.
func NewSnapshotWriter(dir string, g *spectral.Grid, info RunInfo) (*SnapshotWriter, error) {
	if err := info.Scales.validate(); err != nil {
		return nil, fmt.Errorf("outputs: snapshots in %s: %w", dir, err)
	}
	index := filepath.Join(dir, SnapshotIndexName)
	if _, err := os.Stat(index); err == nil {
		return nil, fmt.Errorf("outputs: %s already exists: resume the run or choose an empty directory", index)
	}
	w := &SnapshotWriter{dir: dir, grid: gridOf(g), info: info, fs: defaultFS}
	if err := w.prepareDir(); err != nil {
		return nil, err
	}
	return w, nil
}

// ResumeSnapshotWriter continues the snapshots in dir of a run resumed
// from a checkpoint at step lastStep: it keeps the snapshots whose step is
// at most lastStep, removes the later ones (they will be written again),
// rewrites the index and the sidecar to match, and appends after them. The
// grid recorded in the index must be g. A directory without an index starts
// empty. info replaces the recorded run information from the next write on.
func ResumeSnapshotWriter(dir string, g *spectral.Grid, info RunInfo, lastStep int64) (*SnapshotWriter, error) {
	if err := info.Scales.validate(); err != nil {
		return nil, fmt.Errorf("outputs: snapshots in %s: %w", dir, err)
	}
	w := &SnapshotWriter{dir: dir, grid: gridOf(g), info: info, fs: defaultFS}
	index := filepath.Join(dir, SnapshotIndexName)
	total := 0
	if _, err := os.Stat(index); err == nil {
		f, err := Open(index)
		if err != nil {
			return nil, err
		}
		snaps, kind, hg := f.Snapshots(), f.Kind(), f.Grid()
		f.Close()
		if kind != KindSnapshotIndex {
			return nil, fmt.Errorf("outputs: %s holds a %s, not a snapshot index", index, kind)
		}
		if err := hg.Check(g); err != nil {
			return nil, fmt.Errorf("outputs: resume %s: %w", index, err)
		}
		total = len(snaps)
		for _, s := range snaps {
			if s.Step > lastStep {
				break
			}
			w.snaps = append(w.snaps, snapEntry{s.Time, s.TimeSI, s.Step})
		}
		if len(snaps) > 0 {
			for _, fi := range snaps[0].Fields {
				w.names = append(w.names, fi.Name)
				w.units = append(w.units, fi.Unit)
			}
		}
	} else if !errors.Is(err, os.ErrNotExist) {
		return nil, fmt.Errorf("outputs: resume snapshots: %w", err)
	}
	if err := RemoveStaleTemps(dir); err != nil {
		return nil, err
	}
	if err := w.prepareDir(); err != nil {
		return nil, err
	}
	if len(w.snaps) == total {
		return w, nil
	}
	if len(w.snaps) == 0 {
		w.names, w.units = nil, nil
		for _, name := range []string{SnapshotXDMFName, SnapshotIndexName} {
			if err := os.Remove(filepath.Join(dir, name)); err != nil && !errors.Is(err, os.ErrNotExist) {
				return nil, fmt.Errorf("outputs: resume snapshots: %w", err)
			}
		}
		return w, w.fs.SyncDir(dir)
	}
	if err := w.writeIndex(); err != nil {
		return nil, err
	}
	if err := w.writeXDMF(); err != nil {
		return nil, err
	}
	return w, nil
}

// prepareDir creates snapshots.d and removes from it the temporary files
// and the snapshot files that the index does not list.
func (w *SnapshotWriter) prepareDir() error {
	sd := filepath.Join(w.dir, SnapshotDirName)
	if _, err := os.Stat(sd); errors.Is(err, os.ErrNotExist) {
		if err := os.Mkdir(sd, 0o755); err != nil {
			return fmt.Errorf("outputs: snapshots: %w", err)
		}
		// Make the new directory's entry durable before files go in.
		if err := w.fs.SyncDir(w.dir); err != nil {
			return fmt.Errorf("outputs: snapshots: fsync %s: %w", w.dir, err)
		}
	}
	if err := RemoveStaleTemps(sd); err != nil {
		return err
	}
	ents, err := os.ReadDir(sd)
	if err != nil {
		return fmt.Errorf("outputs: snapshots: %w", err)
	}
	for _, e := range ents {
		m := snapshotFileRE.FindStringSubmatch(e.Name())
		if m == nil {
			continue
		}
		n, err := strconv.Atoi(m[1])
		if err == nil && n < len(w.snaps) {
			continue
		}
		if err := os.Remove(filepath.Join(sd, e.Name())); err != nil {
			return fmt.Errorf("outputs: snapshots: remove unlisted snapshot: %w", err)
		}
	}
	return nil
}

// Len returns the number of snapshots written (and kept, after a resume).
func (w *SnapshotWriter) Len() int { return len(w.snaps) }

// Dir returns the output directory.
func (w *SnapshotWriter) Dir() string { return w.dir }

// Write appends a snapshot at reduced time t and step: every field of
// fields, each a real field on the grid (a wrong length panics). The first
// snapshot fixes the field names, their order and units; later snapshots
// must pass the same ones. Time must be finite and steps must increase.
// Write does not keep fields. On error nothing the writer wrote before is
// changed; a failed Write may be retried.
func (w *SnapshotWriter) Write(t float64, step int64, fields []Field) error {
	if err := w.check(t, step, fields); err != nil {
		return fmt.Errorf("outputs: snapshot at step %d: %w", step, err)
	}
	n := len(w.snaps)
	path := filepath.Join(w.dir, snapshotFile(n))
	e := snapEntry{time: t, timeSI: t * w.info.Scales.Time, step: step}
	if err := writeH5Atomic(w.fs, path, func(root *hdf5.Group) error {
		return writeSnapshotBody(root, w.grid, w.info, e, fields)
	}); err != nil {
		return err
	}
	if n == 0 {
		w.names, w.units = make([]string, len(fields)), make([]string, len(fields))
		for i, f := range fields {
			w.names[i], w.units[i] = f.Name, f.Unit
		}
	}
	w.snaps = append(w.snaps, e)
	if err := w.writeIndex(); err != nil {
		// The index on disk does not list snapshot n: forget it, so the
		// next Write replaces its file.
		w.snaps = w.snaps[:n]
		if n == 0 {
			w.names, w.units = nil, nil
		}
		return err
	}
	return w.writeXDMF()
}

func (w *SnapshotWriter) check(t float64, step int64, fields []Field) error {
	if math.IsNaN(t) || math.IsInf(t, 0) {
		return fmt.Errorf("time = %g: must be finite", t)
	}
	if n := len(w.snaps); n > 0 && step <= w.snaps[n-1].step {
		return fmt.Errorf("step %d: must exceed the previous snapshot's step %d", step, w.snaps[n-1].step)
	}
	if len(fields) == 0 {
		return errors.New("no fields given")
	}
	if err := checkFields("field", fields, w.grid.Nx*w.grid.Ny); err != nil {
		return err
	}
	if len(w.snaps) == 0 {
		return nil
	}
	same := len(fields) == len(w.names)
	for i := 0; same && i < len(fields); i++ {
		same = fields[i].Name == w.names[i] && fields[i].Unit == w.units[i]
	}
	if !same {
		got := make([]string, len(fields))
		for i, f := range fields {
			got[i] = f.Name + " [" + f.Unit + "]"
		}
		want := make([]string, len(w.names))
		for i := range w.names {
			want[i] = w.names[i] + " [" + w.units[i] + "]"
		}
		return fmt.Errorf("fields %v differ from the run's fields %v", got, want)
	}
	return nil
}

// writeSnapshotBody fills the root group of one snapshot file.
func writeSnapshotBody(root *hdf5.Group, g Grid, info RunInfo, e snapEntry, fields []Field) error {
	if err := writeHeader(root, KindSnapshot, g, info); err != nil {
		return err
	}
	names := make([]string, len(fields))
	for i, f := range fields {
		names[i] = f.Name
	}
	if err := putStrings(root, "field_names", names, false); err != nil {
		return err
	}
	if err := writeDataset(root, "time", nil, []float64{e.time}, info.Scales.TimeUnit); err != nil {
		return err
	}
	if err := writeDataset(root, "time_si", nil, []float64{e.timeSI}, "s"); err != nil {
		return err
	}
	if err := writeDataset(root, "step", nil, []int64{e.step}, "1"); err != nil {
		return err
	}
	if err := writeCoords(root, g, info.Scales.LengthUnit); err != nil {
		return err
	}
	fg, err := root.CreateGroup("fields")
	if err != nil {
		return h5fail("create group fields", err)
	}
	defer fg.Close()
	dims := []uint{uint(g.Ny), uint(g.Nx)}
	for _, f := range fields {
		if err := writeDataset(fg, f.Name, dims, f.Data, f.Unit, "centering", "node"); err != nil {
			return err
		}
	}
	if err := fg.Close(); err != nil {
		return h5fail("close group fields", err)
	}
	return nil
}

// writeIndex replaces snapshots.h5 with one that lists w.snaps.
func (w *SnapshotWriter) writeIndex() error {
	path := filepath.Join(w.dir, SnapshotIndexName)
	return writeH5Atomic(w.fs, path, func(root *hdf5.Group) error {
		if err := writeHeader(root, KindSnapshotIndex, w.grid, w.info); err != nil {
			return err
		}
		if err := putStrings(root, "field_names", w.names, false); err != nil {
			return err
		}
		if err := putStrings(root, "field_units", w.units, false); err != nil {
			return err
		}
		n := len(w.snaps)
		t, tsi, st := make([]float64, n), make([]float64, n), make([]int64, n)
		for i, e := range w.snaps {
			t[i], tsi[i], st[i] = e.time, e.timeSI, e.step
		}
		dims := []uint{uint(n)}
		if err := writeDataset(root, "time", dims, t, w.info.Scales.TimeUnit); err != nil {
			return err
		}
		if err := writeDataset(root, "time_si", dims, tsi, "s"); err != nil {
			return err
		}
		if err := writeDataset(root, "step", dims, st, "1"); err != nil {
			return err
		}
		if err := writeCoords(root, w.grid, w.info.Scales.LengthUnit); err != nil {
			return err
		}
		sg, err := root.CreateGroup("snapshots")
		if err != nil {
			return h5fail("create group snapshots", err)
		}
		defer sg.Close()
		for i := range w.snaps {
			if err := linkExternal(sg, snapshotLink(i), snapshotFile(i), "/"); err != nil {
				return err
			}
		}
		if err := sg.Close(); err != nil {
			return h5fail("close group snapshots", err)
		}
		return nil
	})
}

// writeXDMF replaces snapshots.xdmf with one that lists w.snaps.
func (w *SnapshotWriter) writeXDMF() error {
	path := filepath.Join(w.dir, SnapshotXDMFName)
	return writeAtomic(w.fs, path, func(tmp tempFile) error {
		return writeXDMF(tmp, w.grid, w.info.Scales, w.names, w.units, w.snaps)
	})
}
