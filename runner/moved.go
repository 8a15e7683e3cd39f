package runner

import (
	"context"
	"errors"
	"fmt"
	"os"
	"strconv"
	"strings"
	"sync"
	"time"
)

// ErrScanMoved is matched by the error of a run whose scan directory was
// renamed, moved or deleted while it ran (see [ScanMovedError]).
var ErrScanMoved = errors.New("runner: scan directory moved or deleted while running")

// ScanMovedError is the error of a run that found its scan directory gone
// from the path it started from ([Runner.Run] returns it wrapped, with the
// package prefix). The run stopped dispatching, returned
// the points in flight to planned without using an attempt, and wrote
// the store (its open file goes wherever the directory went).
type ScanMovedError struct {
	// Dir is the path the run started from.
	Dir string
	// Now is where the directory is now, when this system can tell
	// (Linux names the open directory); "" otherwise.
	Now string
}

func (e *ScanMovedError) Error() string {
	if e.Now != "" {
		return fmt.Sprintf("the scan directory %s was moved to %s while running; the run stopped, and nothing computed is lost (the store moved with the directory, the points in flight are planned again without using an attempt): run `wellscan run %s` in its new place to compute the rest",
			e.Dir, e.Now, e.Now)
	}
	return fmt.Sprintf("the scan directory %s was moved or deleted while running, and its new place cannot be found; the run stopped, and no point was failed for it. If it was moved, nothing computed is lost: run `wellscan run NEWDIR` in its new place to compute the rest (after a move to another file system, which copies and then deletes, the points finished after the copy was taken are computed again)",
		e.Dir)
}

// Is makes errors.Is(err, ErrScanMoved) true.
func (e *ScanMovedError) Is(target error) bool { return target == ErrScanMoved }

// homeCheckEvery is the longest time between two looks at the scan
// directory while nothing fails: a stat of one path, negligible next to
// a point.
const homeCheckEvery = 200 * time.Millisecond

// scanHome watches the scan directory a run started in. Every path the
// run hands out is absolute, so a directory renamed under a running scan
// would make every later point fail on a missing file; the home notices
// instead (the path no longer names the directory it opened: device and
// inode, [os.SameFile]), stops the work in flight and ends the run with a
// [*ScanMovedError]. A nil *scanHome watches nothing.
type scanHome struct {
	path string
	dir  *os.File // held open: its identity, and on Linux its current name
	root *os.Root // writes that must reach the directory wherever it went
	info os.FileInfo

	mu     sync.Mutex
	next   time.Time // no look before this unless forced
	moved  *ScanMovedError
	cancel context.CancelFunc // ends the queue's context: the work in flight stops
}

// watchHome starts watching dir (absolute). It returns nil (no watch)
// when dir cannot be opened; the run then fails on its own errors.
func watchHome(dir string) *scanHome {
	f, err := os.Open(dir)
	if err != nil {
		return nil
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil
	}
	root, err := os.OpenRoot(dir)
	if err != nil {
		f.Close()
		return nil
	}
	return &scanHome{path: dir, dir: f, root: root, info: st}
}

// context returns the context the queue runs under: ctx, also cancelled
// when the directory is found moved.
func (h *scanHome) context(ctx context.Context) context.Context {
	if h == nil {
		return ctx
	}
	c, cancel := context.WithCancel(ctx)
	h.mu.Lock()
	h.cancel = cancel
	h.mu.Unlock()
	return c
}

// close releases what the home holds.
func (h *scanHome) close() {
	if h == nil {
		return
	}
	h.mu.Lock()
	if h.cancel != nil {
		h.cancel()
	}
	h.mu.Unlock()
	h.root.Close()
	h.dir.Close()
}

// check looks at the directory (at most every homeCheckEvery unless
// force) and returns the error once it is found moved. The first time,
// it cancels the work in flight.
func (h *scanHome) check(now time.Time, force bool) error {
	if h == nil {
		return nil
	}
	h.mu.Lock()
	defer h.mu.Unlock()
	if h.moved != nil {
		return h.moved
	}
	if !force && now.Before(h.next) {
		return nil
	}
	h.next = now.Add(homeCheckEvery)
	if st, err := os.Stat(h.path); err == nil && os.SameFile(st, h.info) {
		return nil
	}
	h.moved = &ScanMovedError{Dir: h.path, Now: h.whereNow()}
	if h.cancel != nil {
		h.cancel()
	}
	return h.moved
}

// whereNow is the directory's current path, when the system names an
// open directory (Linux: /proc/self/fd) and that path leads to this very
// directory; "" otherwise (deleted, moved to another file system, or a
// system that cannot say).
func (h *scanHome) whereNow() string {
	p, err := os.Readlink("/proc/self/fd/" + strconv.FormatUint(uint64(h.dir.Fd()), 10))
	if err != nil || p == "" || strings.HasSuffix(p, " (deleted)") {
		return ""
	}
	if st, err := os.Stat(p); err != nil || !os.SameFile(st, h.info) {
		return ""
	}
	return p
}

// excuse turns a failed completion into an interrupted one when the scan
// directory is gone from its path: the point failed because its files
// vanished with the directory, not on its own, so it returns to planned
// without using an attempt. Completions that are not failures pass as
// they are.
func (h *scanHome) excuse(c Completion, now time.Time) Completion {
	if h == nil || c.Interrupted || c.LeftRunning || c.Reused || c.Result.Status == "done" {
		return c
	}
	if h.check(now, true) == nil {
		return c
	}
	return Completion{Task: c.Task, Interrupted: true}
}

// gone reports whether the directory was found moved.
func (h *scanHome) gone() bool {
	if h == nil {
		return false
	}
	h.mu.Lock()
	defer h.mu.Unlock()
	return h.moved != nil
}

// writeSnapshot writes status.json where the directory is now: through
// the directory the run opened once it has moved, by path otherwise.
func (r *scanRun) writeSnapshot(s Snapshot) error {
	if !r.home.gone() {
		err := WriteSnapshot(r.Dir, s)
		if err == nil || r.home.check(r.Now(), true) == nil {
			return err
		}
	}
	b, err := snapshotJSON(s)
	if err != nil {
		return err
	}
	f := &ScanFS{root: r.home.root, dir: r.home.path}
	return f.WriteFile(StatusFile, b, r.suffix, true)
}
