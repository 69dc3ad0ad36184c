package outputs

import (
	"encoding/xml"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"

	"github.com/memix-sim/memix/spectral"
)

// writeRun writes n snapshots at steps 10, 20, … and times 0.5·step.
func writeRun(t *testing.T, dir string, g *spectral.Grid, n int) *SnapshotWriter {
	t.Helper()
	w, err := NewSnapshotWriter(dir, g, testInfo())
	if err != nil {
		t.Fatal(err)
	}
	for s := 0; s < n; s++ {
		step := int64(10 * (s + 1))
		if err := w.Write(0.5*float64(step), step, testFields(g, s)); err != nil {
			t.Fatal(err)
		}
	}
	return w
}

// checkSnapshots reads every snapshot back through the index (so through
// the external links) and compares it bit for bit with what was written.
func checkSnapshots(t *testing.T, index string, g *spectral.Grid, n int) {
	t.Helper()
	f, err := Open(index)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if f.Kind() != KindSnapshotIndex {
		t.Errorf("kind %q, want %q", f.Kind(), KindSnapshotIndex)
	}
	if err := f.CheckGrid(g); err != nil {
		t.Error(err)
	}
	if f.Info() != testInfo() {
		t.Errorf("run info %+v, want %+v", f.Info(), testInfo())
	}
	snaps := f.Snapshots()
	if len(snaps) != n {
		t.Fatalf("%d snapshots listed, want %d", len(snaps), n)
	}
	for s, si := range snaps {
		step := int64(10 * (s + 1))
		if si.Step != step || si.Time != 0.5*float64(step) || si.TimeSI != 0.5*float64(step)*testInfo().Scales.Time {
			t.Errorf("snapshot %d: step %d time %g time_si %g; want %d %g %g", s, si.Step, si.Time, si.TimeSI,
				step, 0.5*float64(step), 0.5*float64(step)*testInfo().Scales.Time)
		}
		want := testFields(g, s)
		if len(si.Fields) != len(want) {
			t.Fatalf("snapshot %d lists %d fields, want %d", s, len(si.Fields), len(want))
		}
		for k, wf := range want {
			if si.Fields[k] != (FieldInfo{wf.Name, wf.Unit}) {
				t.Errorf("snapshot %d field %d: %+v, want %s [%s]", s, k, si.Fields[k], wf.Name, wf.Unit)
			}
			got, err := f.ReadField(nil, wf.Name, s)
			if err != nil {
				t.Fatal(err)
			}
			if !sameBits(got, wf.Data) {
				t.Errorf("snapshot %d field %s differs from what was written", s, wf.Name)
			}
		}
	}
}

func TestSnapshotRoundTripThroughIndex(t *testing.T) {
	dir := t.TempDir()
	g := testGrid(t)
	w := writeRun(t, dir, g, 3)
	if w.Len() != 3 {
		t.Errorf("Len = %d, want 3", w.Len())
	}
	// Read from another working directory: the external links must resolve
	// relative to the index, not to the process.
	t.Chdir(t.TempDir())
	checkSnapshots(t, filepath.Join(dir, SnapshotIndexName), g, 3)

	// A snapshot file opened on its own holds the same snapshot.
	f, err := Open(filepath.Join(dir, snapshotFile(1)))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if f.Kind() != KindSnapshot || len(f.Snapshots()) != 1 || f.Snapshots()[0].Step != 20 {
		t.Fatalf("snapshot file: kind %q, %d snapshots", f.Kind(), len(f.Snapshots()))
	}
	got, err := f.ReadField(make([]float64, g.RealLen()), "q11", 0)
	if err != nil || !sameBits(got, testFields(g, 1)[1].Data) {
		t.Errorf("q11 of snapshot file 1: err %v or values differ", err)
	}
}

// The structure of the sidecar as far as the tests read it.
type xdmfDoc struct {
	Version string `xml:"Version,attr"`
	Domain  struct {
		Grid struct {
			GridType       string `xml:"GridType,attr"`
			CollectionType string `xml:"CollectionType,attr"`
			Grids          []struct {
				Name string `xml:"Name,attr"`
				Time struct {
					Value string `xml:"Value,attr"`
				}
				Topology struct {
					TopologyType string `xml:"TopologyType,attr"`
					Dimensions   string `xml:"Dimensions,attr"`
				}
				Geometry struct {
					GeometryType string `xml:"GeometryType,attr"`
					Items        []struct {
						Name  string `xml:"Name,attr"`
						Value string `xml:",chardata"`
					} `xml:"DataItem"`
				}
				Attributes []struct {
					Name   string `xml:"Name,attr"`
					Center string `xml:"Center,attr"`
					Info   struct {
						Name  string `xml:"Name,attr"`
						Value string `xml:"Value,attr"`
					} `xml:"Information"`
					Item struct {
						Dimensions string `xml:"Dimensions,attr"`
						Format     string `xml:"Format,attr"`
						Precision  string `xml:"Precision,attr"`
						Ref        string `xml:",chardata"`
					} `xml:"DataItem"`
				} `xml:"Attribute"`
			} `xml:"Grid"`
		}
	}
}

// The sidecar must describe each snapshot as a viewer reads it: a temporal
// collection whose times are the snapshot times, a 2D co-rectilinear mesh
// of Ny×Nx nodes with origin 0 and spacing (Ly/Ny, Lx/Nx), and per field a
// node-centred attribute whose HDF5 reference, resolved relative to the
// sidecar, is a dataset of shape Ny×Nx holding that field.
func TestSnapshotXDMF(t *testing.T) {
	dir := t.TempDir()
	g := testGrid(t)
	writeRun(t, dir, g, 2)
	b, err := os.ReadFile(filepath.Join(dir, SnapshotXDMFName))
	if err != nil {
		t.Fatal(err)
	}
	var doc xdmfDoc
	if err := xml.Unmarshal(b, &doc); err != nil {
		t.Fatalf("sidecar is not well-formed XML: %v", err)
	}
	c := doc.Domain.Grid
	if c.GridType != "Collection" || c.CollectionType != "Temporal" || len(c.Grids) != 2 {
		t.Fatalf("collection %q/%q with %d grids, want Collection/Temporal with 2", c.GridType, c.CollectionType, len(c.Grids))
	}
	dims := fmt.Sprintf("%d %d", g.Ny, g.Nx)
	spacing := fmt.Sprintf("%s %s", strconv.FormatFloat(g.Ly/float64(g.Ny), 'g', -1, 64), strconv.FormatFloat(g.Lx/float64(g.Nx), 'g', -1, 64))
	for s, gr := range c.Grids {
		if tv, _ := strconv.ParseFloat(gr.Time.Value, 64); tv != 0.5*float64(10*(s+1)) {
			t.Errorf("grid %d: time %q, want %g", s, gr.Time.Value, 0.5*float64(10*(s+1)))
		}
		if gr.Topology.TopologyType != "2DCoRectMesh" || gr.Topology.Dimensions != dims {
			t.Errorf("grid %d: topology %q %q, want 2DCoRectMesh %q", s, gr.Topology.TopologyType, gr.Topology.Dimensions, dims)
		}
		geo := gr.Geometry
		if geo.GeometryType != "ORIGIN_DXDY" || len(geo.Items) != 2 || geo.Items[0].Value != "0 0" || geo.Items[1].Value != spacing {
			t.Errorf("grid %d: geometry %+v, want ORIGIN_DXDY origin \"0 0\" spacing %q", s, geo, spacing)
		}
		want := testFields(g, s)
		if len(gr.Attributes) != len(want) {
			t.Fatalf("grid %d: %d attributes, want %d", s, len(gr.Attributes), len(want))
		}
		for k, a := range gr.Attributes {
			if a.Name != want[k].Name || a.Center != "Node" || a.Info.Name != "unit" || a.Info.Value != want[k].Unit {
				t.Errorf("grid %d attribute %d: %q %q %q=%q; want %q Node unit=%q", s, k, a.Name, a.Center, a.Info.Name, a.Info.Value, want[k].Name, want[k].Unit)
			}
			if a.Item.Format != "HDF" || a.Item.Dimensions != dims || a.Item.Precision != "8" {
				t.Errorf("grid %d attribute %s: data item %+v", s, a.Name, a.Item)
			}
			file, obj, ok := strings.Cut(strings.TrimSpace(a.Item.Ref), ":")
			if !ok || obj != "/fields/"+want[k].Name {
				t.Fatalf("reference %q", a.Item.Ref)
			}
			f, err := Open(filepath.Join(dir, file))
			if err != nil {
				t.Fatalf("reference %q: %v", a.Item.Ref, err)
			}
			got, err := f.ReadField(nil, want[k].Name, 0)
			f.Close()
			if err != nil || !sameBits(got, want[k].Data) {
				t.Errorf("reference %q: err %v or data differ", a.Item.Ref, err)
			}
		}
	}
}

// A failure while writing snapshot n (its own file, or the index that
// would list it) leaves snapshots 0…n−1, the index and the sidecar byte for
// byte, removes the temporary file, names the path, and a later Write
// succeeds in the same place.
func TestSnapshotWriteFailures(t *testing.T) {
	g := testGrid(t)
	for _, c := range []struct {
		name   string
		fault  func(*faultFS)
		inPath string
	}{
		{"snapshot file not renamed", func(f *faultFS) { f.renameOK = 0 }, snapshotFile(2)},
		{"snapshot file not synced", func(f *faultFS) { f.failSync = true }, snapshotFile(2)},
		{"index not renamed", func(f *faultFS) { f.renameOK = 1 }, SnapshotIndexName},
	} {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			w := writeRun(t, dir, g, 2)
			before := readAll(t, dir)
			fs := newFaultFS()
			c.fault(fs)
			w.fs = fs
			err := w.Write(15, 30, testFields(g, 2))
			mustContain(t, err, filepath.Join(dir, c.inPath))
			if !errors.Is(err, syscall.EIO) {
				t.Errorf("error %v does not wrap EIO", err)
			}
			if c.inPath == SnapshotIndexName {
				// The snapshot file itself was renamed into place; only
				// the index and sidecar must be untouched, and nothing
				// lists the new file.
				delete(before, snapshotFile(2))
				after := readAll(t, dir)
				delete(after, snapshotFile(2))
				for k := range after {
					if string(after[k]) != string(before[k]) {
						t.Errorf("%s changed", k)
					}
				}
				if len(after) != len(before) {
					t.Errorf("%d files, want %d", len(after), len(before))
				}
			} else {
				sameFiles(t, dir, before)
			}
			if w.Len() != 2 {
				t.Errorf("Len = %d after the failure, want 2", w.Len())
			}
			checkSnapshots(t, filepath.Join(dir, SnapshotIndexName), g, 2)
			w.fs = defaultFS
			if err := w.Write(15, 30, testFields(g, 2)); err != nil {
				t.Fatal(err)
			}
			checkSnapshots(t, filepath.Join(dir, SnapshotIndexName), g, 3)
		})
	}
}

// A real write error inside libhdf5: the file-size limit (RLIMIT_FSIZE)
// makes the kernel refuse writes past a given size (EFBIG; Go ignores the
// accompanying SIGXFSZ), which is what a full disk does to a growing file.
func TestSnapshotWriteErrorInsideHDF5(t *testing.T) {
	dir := t.TempDir()
	g := testGrid(t)
	w := writeRun(t, dir, g, 2)
	before := readAll(t, dir)
	st, err := os.Stat(filepath.Join(dir, snapshotFile(1)))
	if err != nil {
		t.Fatal(err)
	}
	var old syscall.Rlimit
	if err := syscall.Getrlimit(syscall.RLIMIT_FSIZE, &old); err != nil {
		t.Skip("getrlimit:", err)
	}
	lim := old
	lim.Cur = uint64(st.Size() / 2)
	if err := syscall.Setrlimit(syscall.RLIMIT_FSIZE, &lim); err != nil {
		t.Skip("setrlimit:", err)
	}
	func() {
		defer func() {
			if rerr := syscall.Setrlimit(syscall.RLIMIT_FSIZE, &old); rerr != nil {
				t.Fatal("restoring RLIMIT_FSIZE:", rerr)
			}
		}()
		err = w.Write(15, 30, testFields(g, 2))
	}()
	mustContain(t, err, filepath.Join(dir, snapshotFile(2)), "File too large")
	if !errors.Is(err, syscall.EFBIG) {
		t.Errorf("error %v does not wrap EFBIG", err)
	}
	sameFiles(t, dir, before)
	checkSnapshots(t, filepath.Join(dir, SnapshotIndexName), g, 2)
}

// A full disk for real: a 256 KiB tmpfs (needs the right to mount, as root
// in CI; skipped otherwise). Snapshots are written until the disk is full;
// the failure must wrap ENOSPC, name the file, and leave every earlier
// snapshot readable through the index.
func TestSnapshotDiskFull(t *testing.T) {
	dir := t.TempDir()
	if err := syscall.Mount("tmpfs", dir, "tmpfs", 0, "size=256k"); err != nil {
		t.Skip("cannot mount a tmpfs here:", err)
	}
	t.Cleanup(func() {
		if err := syscall.Unmount(dir, 0); err != nil {
			t.Error("unmount:", err)
		}
	})
	g, err := spectral.NewGrid(32, 32, 1, 1) // 3 fields × 8 KiB per snapshot
	if err != nil {
		t.Fatal(err)
	}
	w, err := NewSnapshotWriter(dir, g, testInfo())
	if err != nil {
		t.Fatal(err)
	}
	var werr error
	n := 0
	for ; n < 100; n++ {
		step := int64(10 * (n + 1))
		if werr = w.Write(0.5*float64(step), step, testFields(g, n)); werr != nil {
			break
		}
	}
	if werr == nil {
		t.Fatal("100 snapshots fitted in 256 KiB")
	}
	t.Logf("disk full after %d snapshots: %v", n, werr)
	if !errors.Is(werr, syscall.ENOSPC) {
		t.Errorf("error %v does not wrap ENOSPC", werr)
	}
	if !strings.Contains(werr.Error(), dir) {
		t.Errorf("error %q does not name a path in %s", werr, dir)
	}
	if n < 2 {
		t.Fatalf("only %d snapshots fitted", n)
	}
	// Free some room so that the reader can work, then check the earlier
	// snapshots and that no temporary files were left.
	for _, d := range []string{dir, filepath.Join(dir, SnapshotDirName)} {
		ents, _ := os.ReadDir(d)
		for _, e := range ents {
			if isTempName(e.Name()) {
				t.Errorf("temporary file %s left behind", e.Name())
			}
		}
	}
	f, err := Open(filepath.Join(dir, SnapshotIndexName))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if len(f.Snapshots()) < n-1 {
		t.Fatalf("index lists %d snapshots, %d were written", len(f.Snapshots()), n)
	}
	for s := range f.Snapshots() {
		got, err := f.ReadField(nil, "phi", s)
		if err != nil || !sameBits(got, testFields(g, s)[0].Data) {
			t.Errorf("snapshot %d after disk full: err %v or data differ", s, err)
		}
	}
}

func TestSnapshotResume(t *testing.T) {
	dir := t.TempDir()
	g := testGrid(t)
	writeRun(t, dir, g, 5) // steps 10…50
	// Leftovers of a crash: a temporary file in each directory.
	os.WriteFile(filepath.Join(dir, "."+SnapshotIndexName+tempInfix+"1"), []byte("x"), 0o644)
	os.WriteFile(filepath.Join(dir, SnapshotDirName, ".000005.h5"+tempInfix+"2"), []byte("x"), 0o644)

	if _, err := NewSnapshotWriter(dir, g, testInfo()); err == nil {
		t.Error("NewSnapshotWriter accepted a directory that holds an index")
	}
	other, _ := spectral.NewGrid(8, 8, 2, 1.5)
	_, err := ResumeSnapshotWriter(dir, other, testInfo(), 30)
	mustContain(t, err, "grid size mismatch", "8×6", "8×8")

	w, err := ResumeSnapshotWriter(dir, g, testInfo(), 30) // the checkpoint was at step 30
	if err != nil {
		t.Fatal(err)
	}
	if w.Len() != 3 {
		t.Fatalf("kept %d snapshots, want 3", w.Len())
	}
	checkSnapshots(t, filepath.Join(dir, SnapshotIndexName), g, 3)
	ents, _ := os.ReadDir(filepath.Join(dir, SnapshotDirName))
	if len(ents) != 3 {
		t.Errorf("snapshots.d holds %d files after the resume, want 3", len(ents))
	}
	if _, err := os.Stat(filepath.Join(dir, "."+SnapshotIndexName+tempInfix+"1")); err == nil {
		t.Error("stale temporary file kept")
	}
	for s := 3; s < 5; s++ {
		step := int64(10 * (s + 1))
		if err := w.Write(0.5*float64(step), step, testFields(g, s)); err != nil {
			t.Fatal(err)
		}
	}
	checkSnapshots(t, filepath.Join(dir, SnapshotIndexName), g, 5)

	// A resume before the first snapshot removes them all.
	w, err = ResumeSnapshotWriter(dir, g, testInfo(), 5)
	if err != nil || w.Len() != 0 {
		t.Fatalf("resume at step 5: %v, %d kept", err, w.Len())
	}
	if _, err := os.Stat(filepath.Join(dir, SnapshotIndexName)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("index still there: %v", err)
	}
	writeRunInto(t, w, g, 1)
	checkSnapshots(t, filepath.Join(dir, SnapshotIndexName), g, 1)
}

func writeRunInto(t *testing.T, w *SnapshotWriter, g *spectral.Grid, n int) {
	for s := 0; s < n; s++ {
		step := int64(10 * (s + 1))
		if err := w.Write(0.5*float64(step), step, testFields(g, s)); err != nil {
			t.Fatal(err)
		}
	}
}

func TestSnapshotWriteRejects(t *testing.T) {
	dir := t.TempDir()
	g := testGrid(t)
	w := writeRun(t, dir, g, 1)
	fs := testFields(g, 1)
	mustContain(t, w.Write(5, 10, fs), "step 10", "must exceed")
	mustContain(t, w.Write(5, 20, fs[:2]), "differ from the run's fields")
	bad := testFields(g, 1)
	bad[1].Unit = "s"
	mustContain(t, w.Write(5, 20, bad), "differ from the run's fields")
	bad = testFields(g, 1)
	bad[0].Name = "a/b"
	mustContain(t, w.Write(5, 20, bad), `"a/b"`)
	bad[0].Name = "q11"
	mustContain(t, w.Write(5, 20, bad), `"q11" given twice`)
	mustContain(t, w.Write(5, 20, nil), "no fields")
	info := testInfo()
	info.Scales.Time = 0
	_, err := NewSnapshotWriter(t.TempDir(), g, info)
	mustContain(t, err, "time scale = 0 s")
}
