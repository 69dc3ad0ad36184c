package outputs

import (
	"errors"
	"strings"
	"syscall"
	"testing"

	"github.com/memix-sim/memix/spectral"
)

// TestLargeDatasetDiskFull: a dataset too large for HDF5's write buffer
// goes to disk inside H5Dwrite itself. On a full disk (a 256 KiB tmpfs;
// mounting needs root, skipped otherwise) that call fails, and the error
// must still wrap ENOSPC and name the dataset and the file: gonum's Write
// closed a datatype after the failed call, which cleared the library's
// error stack, so the error read "code -1" and lost the cause.
func TestLargeDatasetDiskFull(t *testing.T) {
	dir := t.TempDir()
	if err := syscall.Mount("tmpfs", dir, "tmpfs", 0, "size=256k"); err != nil {
		t.Skip("cannot mount a tmpfs here:", err)
	}
	t.Cleanup(func() {
		if err := syscall.Unmount(dir, 0); err != nil {
			t.Error("unmount:", err)
		}
	})
	g, err := spectral.NewGrid(128, 128, 1, 1) // 128 KiB per field: three do not fit
	if err != nil {
		t.Fatal(err)
	}
	w, err := NewSnapshotWriter(dir, g, testInfo())
	if err != nil {
		t.Fatal(err)
	}
	fs := testFields(g, 0)
	werr := w.Write(0, 0, fs)
	if werr == nil {
		t.Fatal("three 128 KiB fields fitted in 256 KiB")
	}
	t.Log(werr)
	if !errors.Is(werr, syscall.ENOSPC) {
		t.Errorf("%v does not wrap ENOSPC", werr)
	}
	if msg := werr.Error(); !strings.Contains(msg, dir) || !strings.Contains(msg, "write dataset") {
		t.Errorf("%q does not name the file and the dataset", msg)
	}
}
