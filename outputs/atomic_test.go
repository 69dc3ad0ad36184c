package outputs

import (
	"bytes"
	"errors"
	"io"
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "a.txt")
	want := bytes.Repeat([]byte("memix "), 1000)
	if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := w.Write(want); return err }); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(path)
	if err != nil || !bytes.Equal(got, want) {
		t.Fatalf("content after write: %d bytes, err %v; want %d bytes", len(got), err, len(want))
	}
	st, _ := os.Stat(path)
	if st.Mode().Perm()&0o600 != 0o600 || st.Mode().Perm()&0o111 != 0 {
		t.Errorf("mode %v: want rw for the owner and no execute bit", st.Mode().Perm())
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("directory holds %d entries after the write, want 1", len(ents))
	}
}

// Every injected failure must leave the previous file byte for byte, remove
// the temporary file and name the path in the error.
func TestWriteAtomicFailures(t *testing.T) {
	old := []byte("previous complete version\n")
	nw := bytes.Repeat([]byte("new version "), 4096) // 48 KiB, several writes
	cases := []struct {
		name  string
		fault func(*faultFS)
		fill  error
		errno error
	}{
		{"disk full on the first write", func(f *faultFS) { f.writeLimit = 0 }, nil, syscall.ENOSPC},
		{"disk full half way", func(f *faultFS) { f.writeLimit = int64(len(nw) / 2) }, nil, syscall.ENOSPC},
		{"no room for the temporary file", func(f *faultFS) { f.failCreate = true }, nil, syscall.ENOSPC},
		{"fsync fails", func(f *faultFS) { f.failSync = true }, nil, syscall.EIO},
		{"rename fails", func(f *faultFS) { f.renameOK = 0 }, nil, syscall.EIO},
		{"producer fails", func(*faultFS) {}, errors.New("producer gave up"), nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			path := filepath.Join(dir, "summary.json")
			if err := os.WriteFile(path, old, 0o644); err != nil {
				t.Fatal(err)
			}
			before := readAll(t, dir)
			fs := newFaultFS()
			c.fault(fs)
			err := writeAtomic(fs, path, func(tmp tempFile) error {
				// Write in 4 KiB pieces as a buffered encoder would.
				for off := 0; off < len(nw); off += 4096 {
					if _, err := tmp.Write(nw[off : off+4096]); err != nil {
						return err
					}
				}
				return c.fill
			})
			mustContain(t, err, path)
			if c.errno != nil && !errors.Is(err, c.errno) {
				t.Errorf("error %v does not wrap %v", err, c.errno)
			}
			if c.fill != nil && !errors.Is(err, c.fill) {
				t.Errorf("error %v does not wrap the producer's error", err)
			}
			sameFiles(t, dir, before)
		})
	}
}

// A failed directory fsync is reported, but the new file is complete and in
// place (the rename happened; only its durability is in doubt).
func TestWriteAtomicDirSyncFailure(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "x")
	fs := newFaultFS()
	fs.failSyncDir = true
	err := writeAtomic(fs, path, func(tmp tempFile) error { _, err := tmp.Write([]byte("new")); return err })
	mustContain(t, err, path, "fsync directory")
	if b, _ := os.ReadFile(path); string(b) != "new" {
		t.Errorf("content %q, want %q", b, "new")
	}
}

func TestRemoveStaleTemps(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{".snapshots.h5.tmp-123", ".checkpoint.h5.tmp-9", "snapshots.h5", "notes.tmp-1", ".hidden"} {
		os.WriteFile(filepath.Join(dir, n), nil, 0o644)
	}
	if err := RemoveStaleTemps(dir); err != nil {
		t.Fatal(err)
	}
	var left []string
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		left = append(left, e.Name())
	}
	want := []string{".hidden", "notes.tmp-1", "snapshots.h5"}
	if len(left) != len(want) {
		t.Fatalf("left %v, want %v", left, want)
	}
	for i := range want {
		if left[i] != want[i] {
			t.Fatalf("left %v, want %v", left, want)
		}
	}
	if err := RemoveStaleTemps(filepath.Join(dir, "absent")); err != nil {
		t.Errorf("missing directory: %v", err)
	}
}
