package runner

import (
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime/debug"
	"strconv"
	"time"

	bolt "go.etcd.io/bbolt"
	bolterrors "go.etcd.io/bbolt/errors"
)

// File names inside a scan directory.
const (
	DBFile        = "wellscan.db"
	LockFile      = "wellscan.lock"
	StatusFile    = "status.json"
	PointsDir     = "points"
	ResultFile    = "result.json"
	formatVersion = 1
)

var (
	bucketScan   = []byte("scan")
	bucketPoints = []byte("points")
	bucketRounds = []byte("rounds")
	bucketEvents = []byte("events")
	bucketJobs   = []byte("jobs")
)

// Errors opening a store.
var (
	// ErrLocked: another process holds the store; the error is a
	// *LockedError naming it.
	ErrLocked = errors.New("runner: scan is locked")
	// ErrFormat: the store was written by an incompatible wellscan.
	ErrFormat = errors.New("runner: unsupported store format")
	// ErrSpecChanged: the spec changed in a way that alters energies.
	ErrSpecChanged = errors.New("runner: spec changed")
	// ErrNoStore: the directory has no store yet.
	ErrNoStore = errors.New("runner: no store")
)

// LockInfo is the content of wellscan.lock.
type LockInfo struct {
	PID     int       `json:"pid"`
	Host    string    `json:"host"`
	Started time.Time `json:"started"`
	BootID  string    `json:"boot_id,omitempty"`
}

// LockedError says who holds the store.
type LockedError struct {
	Dir  string
	Info *LockInfo // nil if the lock file could not be read
}

func (e *LockedError) Error() string {
	if e.Info == nil {
		return fmt.Sprintf("runner: %s is being run by another process (no readable %s)", e.Dir, LockFile)
	}
	msg := fmt.Sprintf("runner: this scan is being run by PID %d on %s since %s",
		e.Info.PID, e.Info.Host, e.Info.Started.Local().Format("2006-01-02 15:04:05 MST"))
	if e.Info.Liveness() == LiveDead {
		// The record is stale, yet something holds the database: most
		// likely a status reader for a moment, or a run that has not yet
		// rewritten the record.
		msg += fmt.Sprintf(" according to %s, but that process is no longer running; another process holds the database right now, retry in a moment", LockFile)
	}
	return msg
}

// Is makes errors.Is(err, ErrLocked) true.
func (e *LockedError) Is(target error) bool { return target == ErrLocked }

// Store is the bbolt database of one scan. Only one process opens it for
// writing at a time; within that process, one goroutine writes.
type Store struct {
	db       *bolt.DB
	dir      string
	readOnly bool
	seq      uint64
	stale    *LockInfo // lock record of a run that died, found by Open
	// root is the scan directory as opened by Open for writing: Close
	// removes the lock record through it, wherever the directory went
	// meanwhile (a scan moved while it ran).
	root  *os.Root
	notes []string // what OpenScan accepted that the user should hear of
}

// OpenOptions tune Open.
type OpenOptions struct {
	Timeout  time.Duration // how long to wait for the file lock; default 2 s
	ReadOnly bool          // for status readers; fails with ErrNoStore if absent
	Now      func() time.Time
}

// Open opens (creating if needed, unless read-only) the store of the scan
// in dir. If another process holds it, Open fails after opts.Timeout with
// a *LockedError. A new store is made under a temporary name and renamed
// into place once complete, so a full disk never leaves a half-made
// wellscan.db. A store that cannot be read (empty, truncated, damaged
// pages) is an error wrapping ErrDamaged that names the file and the
// recovery commands; no panic of the database library reaches the caller.
func Open(dir string, opts OpenOptions) (s *Store, err error) {
	if opts.Timeout == 0 {
		opts.Timeout = 2 * time.Second
	}
	if opts.Now == nil {
		opts.Now = time.Now
	}
	path := filepath.Join(dir, DBFile)
	defer guardStore(path, &err, debug.SetPanicOnFault(true))
	st, lerr := os.Lstat(path)
	switch {
	case lerr == nil && st.Mode()&os.ModeSymlink != 0:
		return nil, &SymlinkError{Dir: dir, Path: DBFile}
	case lerr == nil && !st.Mode().IsRegular():
		return nil, fmt.Errorf("runner: %s is not a regular file (%s)", path, st.Mode().Type())
	case lerr == nil && st.Size() < minStoreBytes:
		return nil, &DamagedError{Path: path, Err: fmt.Errorf("the file has %d bytes, less than the %d of the smallest store (truncated, or left by a disk that filled up)", st.Size(), minStoreBytes)}
	case errors.Is(lerr, os.ErrNotExist) && opts.ReadOnly:
		return nil, fmt.Errorf("%w in %s", ErrNoStore, dir)
	case errors.Is(lerr, os.ErrNotExist):
		if err := createStore(dir, opts.Now()); err != nil {
			return nil, err
		}
	case lerr != nil:
		return nil, fmt.Errorf("runner: %w", lerr)
	}
	db, err := bolt.Open(path, 0o600, &bolt.Options{Timeout: opts.Timeout, ReadOnly: opts.ReadOnly})
	if err != nil {
		if errors.Is(err, bolterrors.ErrTimeout) {
			return nil, &LockedError{Dir: dir, Info: readLock(dir)}
		}
		return nil, &DamagedError{Path: path, Err: err}
	}
	s = &Store{db: db, dir: dir, readOnly: opts.ReadOnly}
	ready := false
	_ = db.View(func(tx *bolt.Tx) error {
		ready = tx.Bucket(bucketScan) != nil && tx.Bucket(bucketPoints) != nil && tx.Bucket(bucketRounds) != nil &&
			tx.Bucket(bucketEvents) != nil && tx.Bucket(bucketJobs) != nil
		return nil
	})
	if !opts.ReadOnly && !ready {
		if err := db.Update(func(tx *bolt.Tx) error { return initBuckets(tx, opts.Now()) }); err != nil {
			db.Close()
			return nil, fmt.Errorf("runner: initialise %s: %w", path, err)
		}
	}
	if !opts.ReadOnly {
		// We hold bbolt's lock, so whoever wrote a leftover record is gone.
		s.stale = readLock(dir)
		host, _ := os.Hostname()
		boot, _ := os.ReadFile("/proc/sys/kernel/random/boot_id")
		info := LockInfo{PID: os.Getpid(), Host: host, Started: opts.Now(), BootID: string(trimNL(boot))}
		b, _ := json.Marshal(info)
		if err := writeInScan(dir, LockFile, b, tmpSuffix(), true); err != nil {
			db.Close()
			return nil, err
		}
		s.root, _ = os.OpenRoot(dir) // nil: Close removes the record by path
	}
	if err := s.checkFormat(); err != nil {
		s.Close()
		return nil, err
	}
	_ = db.View(func(tx *bolt.Tx) error {
		if b := tx.Bucket(bucketEvents); b != nil {
			s.seq = b.Sequence()
		}
		return nil
	})
	return s, nil
}

// minStoreBytes is the size of the smallest valid store: bbolt's two meta
// pages, a freelist page and a root leaf, of at least 1 KiB each (its page
// size is the OS page size, 4 KiB here; 1 KiB is bbolt's own minimum).
const minStoreBytes = 4 * 1024

// initBuckets creates the store's buckets and format record.
func initBuckets(tx *bolt.Tx, now time.Time) error {
	for _, b := range [][]byte{bucketScan, bucketPoints, bucketRounds, bucketEvents, bucketJobs} {
		if _, err := tx.CreateBucketIfNotExists(b); err != nil {
			return err
		}
	}
	sc := tx.Bucket(bucketScan)
	if v := sc.Get([]byte("format")); v == nil {
		if err := sc.Put([]byte("format"), []byte(strconv.Itoa(formatVersion))); err != nil {
			return err
		}
		return sc.Put([]byte("created"), []byte(now.UTC().Format(time.RFC3339Nano)))
	}
	return nil
}

// createStore makes a new, empty store at a temporary name, syncs it and
// renames it to wellscan.db: a failure (a full disk) leaves no
// wellscan.db behind, only the temporary file, which is removed.
func createStore(dir string, now time.Time) (err error) {
	tmpName := DBFile + ".new." + tmpSuffix()
	f, err := OpenScanFS(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	_ = f.Remove(tmpName)
	tmp := filepath.Join(dir, tmpName)
	defer func() {
		if err != nil {
			f.Remove(tmpName)
			err = fmt.Errorf("runner: creating the store %s: %w (nothing was left behind; free space and run again)", filepath.Join(dir, DBFile), err)
		}
	}()
	// The name is new (removed above) and inside dir: bbolt creates it.
	db, err := bolt.Open(tmp, 0o600, &bolt.Options{Timeout: time.Second})
	if err != nil {
		return err
	}
	if err := db.Update(func(tx *bolt.Tx) error { return initBuckets(tx, now) }); err != nil {
		db.Close()
		return err
	}
	if err := db.Sync(); err != nil {
		db.Close()
		return err
	}
	if err := db.Close(); err != nil {
		return err
	}
	if err := f.Rename(tmpName, DBFile); err != nil {
		return err
	}
	return syncDir(dir)
}

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	return d.Sync()
}

func trimNL(b []byte) []byte {
	for len(b) > 0 && (b[len(b)-1] == '\n' || b[len(b)-1] == '\r') {
		b = b[:len(b)-1]
	}
	return b
}

func readLock(dir string) *LockInfo {
	b, err := os.ReadFile(filepath.Join(dir, LockFile))
	if err != nil {
		return nil
	}
	var li LockInfo
	if json.Unmarshal(b, &li) != nil {
		return nil
	}
	return &li
}

func (s *Store) checkFormat() (err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	return s.db.View(func(tx *bolt.Tx) error {
		sc := tx.Bucket(bucketScan)
		if sc == nil {
			return fmt.Errorf("%w: %s has no scan bucket (not a wellscan store?)", ErrFormat, s.db.Path())
		}
		v := string(sc.Get([]byte("format")))
		if v != strconv.Itoa(formatVersion) {
			return fmt.Errorf("%w: %s has format %q, this wellscan reads %d", ErrFormat, s.db.Path(), v, formatVersion)
		}
		return nil
	})
}

// Close releases the store (and its lock). The lock file is removed when
// the store was open for writing.
func (s *Store) Close() error {
	err := s.db.Close()
	switch {
	case s.root != nil:
		s.root.Remove(LockFile)
		s.root.Close()
		s.root = nil
	case !s.readOnly:
		os.Remove(filepath.Join(s.dir, LockFile))
	}
	return err
}

// Dir is the scan directory.
func (s *Store) Dir() string { return s.dir }

// ScanMeta is the scan bucket's content.
type ScanMeta struct {
	Spec        []byte // the spec text of the first run
	LastSpec    []byte // the spec text of the latest run
	Fingerprint string // JSON of planner.Fingerprint
	Created     string
}

// Meta reads the scan bucket.
func (s *Store) Meta() (m ScanMeta, err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	err = s.db.View(func(tx *bolt.Tx) error {
		sc := tx.Bucket(bucketScan)
		m.Spec = clone(sc.Get([]byte("spec")))
		m.LastSpec = clone(sc.Get([]byte("last_spec")))
		m.Fingerprint = string(sc.Get([]byte("fingerprint")))
		m.Created = string(sc.Get([]byte("created")))
		return nil
	})
	return m, err
}

// SetSpec records the spec text (the first time also as the original)
// and fingerprint.
func (s *Store) SetSpec(text []byte, fingerprint string) (err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	return s.db.Update(func(tx *bolt.Tx) error {
		sc := tx.Bucket(bucketScan)
		if sc.Get([]byte("spec")) == nil {
			if err := sc.Put([]byte("spec"), text); err != nil {
				return err
			}
		}
		if err := sc.Put([]byte("last_spec"), text); err != nil {
			return err
		}
		return sc.Put([]byte("fingerprint"), []byte(fingerprint))
	})
}

func clone(b []byte) []byte {
	if b == nil {
		return nil
	}
	return append([]byte(nil), b...)
}

// Points returns every point record, ordered by key.
func (s *Store) Points() (out []PointRecord, err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	err = s.db.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketPoints).ForEach(func(k, v []byte) error {
			var r PointRecord
			if err := json.Unmarshal(v, &r); err != nil {
				return fmt.Errorf("runner: point %q: %w", k, err)
			}
			if r.V != recordVersion {
				return fmt.Errorf("%w: point %q has record version %d", ErrFormat, k, r.V)
			}
			if r.Sum != "" && r.Sum != recordSum(r) {
				r.Damaged = fmt.Sprintf("the stored record of point %s does not match its checksum (the store was changed outside wellscan, or damaged)", r.Key)
			}
			out = append(out, r)
			return nil
		})
	})
	return out, err
}

// Commit writes records and appends events in one transaction. Events get
// their sequence numbers here.
func (s *Store) Commit(recs []PointRecord, rounds []RoundRecord, events []Event) (err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	if len(recs) == 0 && len(rounds) == 0 && len(events) == 0 {
		return nil
	}
	return s.db.Update(func(tx *bolt.Tx) error {
		if err := putRecords(tx.Bucket(bucketPoints), recs); err != nil {
			return err
		}
		rb := tx.Bucket(bucketRounds)
		for _, r := range rounds {
			r.V = recordVersion
			b, err := json.Marshal(r)
			if err != nil {
				return err
			}
			if err := rb.Put(u64(uint64(r.Round)), b); err != nil {
				return err
			}
		}
		return appendEvents(tx.Bucket(bucketEvents), events)
	})
}

// putRecords writes point records with their version and checksum.
func putRecords(pb *bolt.Bucket, recs []PointRecord) error {
	for _, r := range recs {
		r.V = recordVersion
		r.Sum = recordSum(r)
		b, err := json.Marshal(r)
		if err != nil {
			return err
		}
		if err := pb.Put([]byte(r.Key), b); err != nil {
			return err
		}
	}
	return nil
}

// appendEvents appends events to the log, giving each its sequence
// number.
func appendEvents(eb *bolt.Bucket, events []Event) error {
	for i := range events {
		seq, err := eb.NextSequence()
		if err != nil {
			return err
		}
		events[i].Seq = seq
		b, err := json.Marshal(events[i])
		if err != nil {
			return err
		}
		if err := eb.Put(u64(seq), b); err != nil {
			return err
		}
	}
	return nil
}

func u64(v uint64) []byte {
	b := make([]byte, 8)
	binary.BigEndian.PutUint64(b, v)
	return b
}

// Rounds returns every round record in order.
func (s *Store) Rounds() (out []RoundRecord, err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	err = s.db.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketRounds).ForEach(func(_, v []byte) error {
			var r RoundRecord
			if err := json.Unmarshal(v, &r); err != nil {
				return err
			}
			out = append(out, r)
			return nil
		})
	})
	return out, err
}

// Events returns the event log in order.
func (s *Store) Events() (out []Event, err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	err = s.db.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketEvents).ForEach(func(_, v []byte) error {
			var e Event
			if err := json.Unmarshal(v, &e); err != nil {
				return err
			}
			out = append(out, e)
			return nil
		})
	})
	return out, err
}

// Backup writes a consistent copy of the store to name, a file in the scan
// directory (temporary file, rename; never through a symbolic link).
func (s *Store) Backup(name string) (err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	f, err := OpenScanFS(s.dir)
	if err != nil {
		return err
	}
	defer f.Close()
	tmp := name + ".tmp"
	out, err := f.Create(tmp)
	if err != nil {
		return fmt.Errorf("runner: backup: %w", err)
	}
	err = s.db.View(func(tx *bolt.Tx) error {
		_, werr := tx.WriteTo(out)
		return werr
	})
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		f.Remove(tmp)
		return fmt.Errorf("runner: backup: %w", err)
	}
	return f.Rename(tmp, name)
}
