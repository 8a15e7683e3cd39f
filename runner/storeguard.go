package runner

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime/debug"
	"time"
)

// ErrDamaged is matched by errors about a store file that cannot be read:
// empty, truncated, or with damaged pages.
var ErrDamaged = errors.New("runner: store damaged")

// DamagedError says which store cannot be read, why, and how to recover.
type DamagedError struct {
	Path string
	Err  error
}

func (e *DamagedError) Error() string {
	dir := filepath.Dir(e.Path)
	msg := fmt.Sprintf("runner: the store %s cannot be read (%v); nothing in the scan directory was changed. To recover, ", e.Path, e.Err)
	if st, err := os.Stat(filepath.Join(dir, DBFile+".bak")); err == nil {
		msg += fmt.Sprintf("either put back the backup written after the last finished round (%s, %s): wellscan store restore %s, or ",
			DBFile+".bak", st.ModTime().Local().Format("2006-01-02 15:04"), dir)
	}
	msg += fmt.Sprintf("build a new store from the points' result files: wellscan store rebuild %s (the damaged file is kept as %s.damaged-<time>)", dir, DBFile)
	return msg
}

// Unwrap returns the cause.
func (e *DamagedError) Unwrap() error { return e.Err }

// Is makes errors.Is(err, ErrDamaged) true.
func (e *DamagedError) Is(target error) bool { return target == ErrDamaged }

// guardStore is deferred by every store operation, with the old
// panic-on-fault setting as set by debug.SetPanicOnFault(true) when the
// defer was made. The database library panics on some damaged pages
// ("invalid freelist page", index errors on garbage), and reading a
// mapped page that a full disk never wrote raises a memory fault; with
// panic-on-fault that fault is a panic too. All of them mean a damaged
// file, not a bug of ours, so every panic here becomes a *DamagedError
// naming the file. (The house rule re-panics runtime errors; here the
// runtime errors come from reading a damaged file, which is user input.)
func guardStore(path string, err *error, oldFault bool) {
	debug.SetPanicOnFault(oldFault)
	if p := recover(); p != nil {
		*err = &DamagedError{Path: path, Err: fmt.Errorf("the database library failed on it: %v", p)}
	}
}

// path is the store file.
func (s *Store) path() string { return filepath.Join(s.dir, DBFile) }

// damagedName is the name a damaged store is kept under.
func damagedName(now time.Time) string {
	return DBFile + ".damaged-" + now.UTC().Format("20060102T150405Z")
}
