package outputs

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"github.com/memix-sim/memix/spectral"
)

// testInfo is the run information the tests stamp on files. The units are
// deliberately non-ASCII to check that UTF-8 survives.
func testInfo() RunInfo {
	return RunInfo{
		Version: "memix test (τ-build)",
		Config:  "grid:\n  nx: 8\n  ny: 6\nmembrane:\n  viscosity: 1e-9 Pa·s·m  # η_m\n",
		Scales:  Scales{LengthUnit: "ℓ0", Length: 2.5e-6, TimeUnit: "τ0", Time: 0.125},
	}
}

// testGrid is non-square so that a transposed layout cannot pass.
func testGrid(t testing.TB) *spectral.Grid {
	g, err := spectral.NewGrid(8, 6, 2.0, 1.5)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// testFields returns fields whose every value differs and encodes (field,
// snapshot, i, j), so that any mix-up of layout, field or snapshot shows.
func testFields(g *spectral.Grid, snap int) []Field {
	names := []string{"phi", "q11", "u_x"}
	units := []string{"1", "1", "ℓ0/τ0"}
	fs := make([]Field, len(names))
	for k := range names {
		d := g.NewReal()
		for j := 0; j < g.Ny; j++ {
			for i := 0; i < g.Nx; i++ {
				d[j*g.Nx+i] = float64(k)*1e4 + float64(snap)*1e2 + float64(j)*10 + float64(i) + 0.25
			}
		}
		fs[k] = Field{Name: names[k], Unit: units[k], Data: d}
	}
	return fs
}

func sameBits(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// readAll returns the content of every regular file under dir, by path
// relative to dir.
func readAll(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	out := map[string][]byte{}
	err := filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		out[rel] = b
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// sameFiles fails the test unless dir holds exactly the files of before,
// byte for byte (so no temporary file was left behind either).
func sameFiles(t *testing.T, dir string, before map[string][]byte) {
	t.Helper()
	after := readAll(t, dir)
	for name, b := range before {
		a, ok := after[name]
		if !ok {
			t.Errorf("%s disappeared", name)
		} else if !bytes.Equal(a, b) {
			t.Errorf("%s changed", name)
		}
	}
	for name := range after {
		if _, ok := before[name]; !ok {
			t.Errorf("new file %s left behind", name)
		}
	}
}

// faultFS is the real file system with injected failures.
type faultFS struct {
	osFS
	writeLimit  int64 // a temporary file accepts this many bytes, then ENOSPC; < 0: no limit
	failSync    bool  // fsync of a temporary file fails with EIO
	failCreate  bool  // creating a temporary file fails with ENOSPC
	renameOK    int   // this many renames succeed, then they fail with EIO; < 0: all succeed
	failSyncDir bool  // fsync of the directory fails with EIO
	renames     int
}

func newFaultFS() *faultFS { return &faultFS{writeLimit: -1, renameOK: -1} }

type faultFile struct {
	*os.File
	fs      *faultFS
	written int64
}

func (f *faultFS) CreateTemp(dir, pattern string) (tempFile, error) {
	if f.failCreate {
		return nil, &os.PathError{Op: "open", Path: filepath.Join(dir, pattern), Err: syscall.ENOSPC}
	}
	file, err := os.CreateTemp(dir, pattern)
	if err != nil {
		return nil, err
	}
	return &faultFile{File: file, fs: f}, nil
}

func (f *faultFile) Write(p []byte) (int, error) {
	if lim := f.fs.writeLimit; lim >= 0 && f.written+int64(len(p)) > lim {
		n := int(lim - f.written)
		if n > 0 {
			n, _ = f.File.Write(p[:n])
		}
		f.written += int64(n)
		return n, &os.PathError{Op: "write", Path: f.Name(), Err: syscall.ENOSPC}
	}
	n, err := f.File.Write(p)
	f.written += int64(n)
	return n, err
}

func (f *faultFile) Sync() error {
	if f.fs.failSync {
		return &os.PathError{Op: "sync", Path: f.Name(), Err: syscall.EIO}
	}
	return f.File.Sync()
}

func (f *faultFS) Rename(oldpath, newpath string) error {
	f.renames++
	if f.renameOK >= 0 && f.renames > f.renameOK {
		return &os.LinkError{Op: "rename", Old: oldpath, New: newpath, Err: syscall.EIO}
	}
	return os.Rename(oldpath, newpath)
}

func (f *faultFS) SyncDir(dir string) error {
	if f.failSyncDir {
		return &os.PathError{Op: "sync", Path: dir, Err: syscall.EIO}
	}
	return osFS{}.SyncDir(dir)
}

// mustContain fails unless err is non-nil and its message holds every part.
func mustContain(t *testing.T, err error, parts ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error; want one containing %q", parts)
	}
	for _, p := range parts {
		if !strings.Contains(err.Error(), p) {
			t.Errorf("error %q does not contain %q", err, p)
		}
	}
}

var _ = errors.Is
