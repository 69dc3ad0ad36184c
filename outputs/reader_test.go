package outputs

import (
	"errors"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/hdf5"

	"github.com/memix-sim/memix/spectral"
)

// Each way a file can be unusable gives an error that names the file and
// says what is wrong.
func TestOpenErrors(t *testing.T) {
	dir := t.TempDir()
	g := testGrid(t)
	writeRun(t, dir, g, 2)
	index := filepath.Join(dir, SnapshotIndexName)
	whole, err := os.ReadFile(index)
	if err != nil {
		t.Fatal(err)
	}

	missing := filepath.Join(dir, "absent.h5")
	_, err = Open(missing)
	mustContain(t, err, missing)
	if !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v does not wrap os.ErrNotExist", err)
	}

	text := filepath.Join(dir, "series.csv")
	os.WriteFile(text, []byte("time [τ0],step [1]\n0,0\n"), 0o644)
	_, err = Open(text)
	mustContain(t, err, text, "not an HDF5 file")

	empty := filepath.Join(dir, "empty.h5")
	os.WriteFile(empty, nil, 0o644)
	_, err = Open(empty)
	mustContain(t, err, empty, "empty file")

	// Truncated: the first half of a valid index, as a crash during a
	// copy or an incomplete transfer leaves it.
	trunc := filepath.Join(dir, "truncated.h5")
	os.WriteFile(trunc, whole[:len(whole)/2], 0o644)
	_, err = Open(trunc)
	mustContain(t, err, trunc, "truncated or damaged", "truncated file")
	t.Log(err)

	// A valid HDF5 file without the marker.
	foreign := filepath.Join(dir, "foreign.h5")
	if err := createH5(foreign, func(root *hdf5.Group) error { return putString(root, "creator", "someone else") }); err != nil {
		t.Fatal(err)
	}
	_, err = Open(foreign)
	mustContain(t, err, foreign, "not a memix file", "memix_file")

	// A memix file of a newer layout.
	newer := filepath.Join(dir, "newer.h5")
	if err := createH5(newer, func(root *hdf5.Group) error {
		if err := putString(root, "memix_file", KindSnapshot); err != nil {
			return err
		}
		return putI64(root, "memix_schema", Schema+1)
	}); err != nil {
		t.Fatal(err)
	}
	_, err = Open(newer)
	mustContain(t, err, newer, "memix_schema = 2")
}

func TestReadFieldErrors(t *testing.T) {
	dir := t.TempDir()
	g := testGrid(t)
	writeRun(t, dir, g, 3)
	index := filepath.Join(dir, SnapshotIndexName)
	f, err := Open(index)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()

	other, _ := spectral.NewGrid(16, 6, 2, 1.5)
	mustContain(t, f.CheckGrid(other), index, "grid size mismatch", "8×6", "16×6")
	box, _ := spectral.NewGrid(8, 6, 2, 3)
	mustContain(t, f.CheckGrid(box), index, "box mismatch")

	_, err = f.ReadField(nil, "pressure", 1)
	mustContain(t, err, index, "snapshot 1", `no field "pressure"`, "phi, q11, u_x")
	_, err = f.ReadField(nil, "phi", 3)
	mustContain(t, err, "snapshot 3 out of range [0, 3)")
	_, err = f.ReadField(make([]float64, 7), "phi", 0)
	mustContain(t, err, "destination has 7 values", "needs 48")

	// The file of snapshot 1 is gone, that of snapshot 2 truncated: the
	// index still opens, the other snapshots still read, and reading those
	// two names the snapshot file.
	os.Remove(filepath.Join(dir, snapshotFile(1)))
	p2 := filepath.Join(dir, snapshotFile(2))
	b, _ := os.ReadFile(p2)
	os.WriteFile(p2, b[:len(b)/2], 0o644)
	_, err = f.ReadField(nil, "phi", 1)
	mustContain(t, err, "snapshot 1", "snapshot file "+snapshotFile(1)+" is missing")
	if !errors.Is(err, os.ErrNotExist) {
		t.Errorf("%v does not wrap os.ErrNotExist", err)
	}
	_, err = f.ReadField(nil, "phi", 2)
	mustContain(t, err, "snapshot 2", snapshotFile(2), "truncated")
	if got, err := f.ReadField(nil, "phi", 0); err != nil || !sameBits(got, testFields(g, 0)[0].Data) {
		t.Errorf("snapshot 0 after damage to 1 and 2: %v", err)
	}

	// A snapshot file swapped for another one (another step) is detected.
	os.Rename(filepath.Join(dir, snapshotFile(0)), filepath.Join(dir, snapshotFile(1)))
	_, err = f.ReadField(nil, "phi", 1)
	mustContain(t, err, "holds step 10, the index lists step 20")
}
