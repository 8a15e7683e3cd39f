//go:build unix

package runner

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"syscall"
)

// lockRelaxDir takes an advisory lock on dir/RelaxLockFile (flock), so
// that two optimisations never write one checkpoint. The lock goes with
// the process: a killed run leaves nothing to clean up.
func lockRelaxDir(dir string) (func(), error) {
	path := filepath.Join(dir, RelaxLockFile)
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|syscall.O_NOFOLLOW, 0o600)
	if err != nil {
		return nil, fmt.Errorf("runner: relax %s: %w", dir, err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, fmt.Errorf("%w: another wellscan relax is running in %s", ErrLocked, dir)
		}
		return nil, fmt.Errorf("runner: relax %s: lock %s: %w", dir, RelaxLockFile, err)
	}
	return func() { f.Close() }, nil
}
