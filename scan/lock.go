package scan

import (
	"errors"
	"os"
	"syscall"
)

// tryLock takes an exclusive advisory lock (flock) on path without waiting.
// It returns (nil, false, nil) when another process holds it. The Slurm
// array script takes the same lock with flock(1), so a local run and a
// Slurm task never run one point at once.
func tryLock(path string) (*os.File, bool, error) {
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, false, err
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, false, nil
		}
		return nil, false, err
	}
	return f, true, nil
}
