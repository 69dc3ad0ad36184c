package outputs

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// tempFile is the part of *os.File the atomic writer uses.
type tempFile interface {
	io.Writer
	Name() string
	Chmod(mode os.FileMode) error
	Sync() error
	Close() error
}

// fileSystem is the set of file operations behind every file memix writes.
// Production code uses osFS; the tests substitute implementations that fail
// a chosen operation (a write after n bytes with ENOSPC, an fsync, a
// rename) to check that a failure leaves the previous file intact.
type fileSystem interface {
	CreateTemp(dir, pattern string) (tempFile, error)
	Rename(oldpath, newpath string) error
	Remove(name string) error
	SyncDir(dir string) error
}

type osFS struct{}

func (osFS) CreateTemp(dir, pattern string) (tempFile, error) { return os.CreateTemp(dir, pattern) }
func (osFS) Rename(oldpath, newpath string) error             { return os.Rename(oldpath, newpath) }
func (osFS) Remove(name string) error                         { return os.Remove(name) }

// SyncDir fsyncs a directory so that a rename inside it is durable.
func (osFS) SyncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	err = d.Sync()
	if cerr := d.Close(); err == nil {
		err = cerr
	}
	return err
}

// defaultFS is the real file system. It holds no state.
var defaultFS fileSystem = osFS{}

// tempInfix marks the temporary files of the atomic writer: the temporary
// file of "dir/name" is "dir/.name.tmp-<random>".
const tempInfix = ".tmp-"

// fileMode is the permission of every file memix writes (before umask).
const fileMode os.FileMode = 0o644

// writeAtomic replaces the file at path with the content produced by fill,
// so that path holds either its previous content or the complete new one,
// never a part. fill receives a new, empty temporary file in the directory
// of path: it either writes the content through the file (an io.Writer) or
// lets a C library write the file named tmp.Name() while the file stays
// open. After fill returns nil the temporary file is fsynced, closed,
// renamed to path and the directory is fsynced. On any error the temporary
// file is removed and path is left as it was; the error names path and
// wraps the cause (errors.Is(err, syscall.ENOSPC) works for a full disk).
// The directory must exist.
func writeAtomic(fsys fileSystem, path string, fill func(tmp tempFile) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := fsys.CreateTemp(dir, "."+base+tempInfix+"*")
	if err != nil {
		return fmt.Errorf("outputs: write %s: %w", path, err)
	}
	tmpName := tmp.Name()
	closed, renamed := false, false
	defer func() {
		if err == nil {
			return
		}
		if !closed {
			tmp.Close()
		}
		if !renamed {
			fsys.Remove(tmpName)
		}
		err = fmt.Errorf("outputs: write %s: %w", path, err)
	}()
	if err = fill(tmp); err != nil {
		return err
	}
	if err = tmp.Chmod(fileMode); err != nil {
		return err
	}
	if err = tmp.Sync(); err != nil {
		return fmt.Errorf("fsync: %w", err)
	}
	closed = true
	if err = tmp.Close(); err != nil {
		return err
	}
	if err = fsys.Rename(tmpName, path); err != nil {
		return err
	}
	renamed = true
	if err = fsys.SyncDir(dir); err != nil {
		// The new file is in place but the rename may not survive a power
		// loss: report it.
		return fmt.Errorf("fsync directory %s: %w", dir, err)
	}
	return nil
}

// WriteFileAtomic replaces the file at path with the bytes that write
// produces, atomically: after a crash or an error path holds its previous
// content or the complete new content, never a part of it (see the package
// documentation, "Crash safety"). The directory of path must exist. Errors
// name path and wrap the cause.
func WriteFileAtomic(path string, write func(w io.Writer) error) error {
	return writeAtomic(defaultFS, path, func(tmp tempFile) error { return write(tmp) })
}

// isTempName reports whether a file name is a temporary file of the atomic
// writer.
func isTempName(name string) bool {
	return strings.HasPrefix(name, ".") && strings.Contains(name, tempInfix)
}

// RemoveStaleTemps removes from dir the temporary files that the atomic
// writer leaves behind when the process dies between creating and renaming
// one (".<name>.tmp-<random>"). Call it when resuming a run, never while
// another writer is active in the same directory. A missing directory is not
// an error.
func RemoveStaleTemps(dir string) error {
	ents, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("outputs: remove stale temporary files: %w", err)
	}
	for _, e := range ents {
		if e.Type().IsRegular() && isTempName(e.Name()) {
			if err := os.Remove(filepath.Join(dir, e.Name())); err != nil && !errors.Is(err, os.ErrNotExist) {
				return fmt.Errorf("outputs: remove stale temporary file: %w", err)
			}
		}
	}
	return nil
}
