package runner

import (
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
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
	notes    []string  // what OpenScan accepted that the user should hear of
}

// OpenOptions tune Open.
type OpenOptions struct {
	Timeout  time.Duration // how long to wait for the file lock; default 2 s
	ReadOnly bool          // for status readers; fails with ErrNoStore if absent
	Now      func() time.Time
}

// Open opens (creating if needed, unless read-only) the store of the scan
// in dir. If another process holds it, Open fails after opts.Timeout with
// a *LockedError.
func Open(dir string, opts OpenOptions) (*Store, error) {
	if opts.Timeout == 0 {
		opts.Timeout = 2 * time.Second
	}
	if opts.Now == nil {
		opts.Now = time.Now
	}
	path := filepath.Join(dir, DBFile)
	if opts.ReadOnly {
		if _, err := os.Stat(path); err != nil {
			return nil, fmt.Errorf("%w in %s", ErrNoStore, dir)
		}
	}
	db, err := bolt.Open(path, 0o600, &bolt.Options{Timeout: opts.Timeout, ReadOnly: opts.ReadOnly})
	if err != nil {
		if errors.Is(err, bolterrors.ErrTimeout) {
			return nil, &LockedError{Dir: dir, Info: readLock(dir)}
		}
		return nil, fmt.Errorf("runner: open %s: %w", path, err)
	}
	s := &Store{db: db, dir: dir, readOnly: opts.ReadOnly}
	ready := false
	_ = db.View(func(tx *bolt.Tx) error {
		ready = tx.Bucket(bucketScan) != nil && tx.Bucket(bucketPoints) != nil && tx.Bucket(bucketRounds) != nil &&
			tx.Bucket(bucketEvents) != nil && tx.Bucket(bucketJobs) != nil
		return nil
	})
	if !opts.ReadOnly && !ready {
		if err := db.Update(func(tx *bolt.Tx) error {
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
				return sc.Put([]byte("created"), []byte(opts.Now().UTC().Format(time.RFC3339Nano)))
			}
			return nil
		}); err != nil {
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
		if err := WriteFileAtomic(filepath.Join(dir, LockFile), b); err != nil {
			db.Close()
			return nil, err
		}
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

func (s *Store) checkFormat() error {
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
	if !s.readOnly {
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
func (s *Store) Meta() (ScanMeta, error) {
	var m ScanMeta
	err := s.db.View(func(tx *bolt.Tx) error {
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
func (s *Store) SetSpec(text []byte, fingerprint string) error {
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
func (s *Store) Points() ([]PointRecord, error) {
	var out []PointRecord
	err := s.db.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketPoints).ForEach(func(k, v []byte) error {
			var r PointRecord
			if err := json.Unmarshal(v, &r); err != nil {
				return fmt.Errorf("runner: point %q: %w", k, err)
			}
			if r.V != recordVersion {
				return fmt.Errorf("%w: point %q has record version %d", ErrFormat, k, r.V)
			}
			out = append(out, r)
			return nil
		})
	})
	return out, err
}

// Commit writes records and appends events in one transaction. Events get
// their sequence numbers here.
func (s *Store) Commit(recs []PointRecord, rounds []RoundRecord, events []Event) error {
	if len(recs) == 0 && len(rounds) == 0 && len(events) == 0 {
		return nil
	}
	return s.db.Update(func(tx *bolt.Tx) error {
		pb, rb, eb := tx.Bucket(bucketPoints), tx.Bucket(bucketRounds), tx.Bucket(bucketEvents)
		for _, r := range recs {
			r.V = recordVersion
			b, err := json.Marshal(r)
			if err != nil {
				return err
			}
			if err := pb.Put([]byte(r.Key), b); err != nil {
				return err
			}
		}
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
	})
}

func u64(v uint64) []byte {
	b := make([]byte, 8)
	binary.BigEndian.PutUint64(b, v)
	return b
}

// Rounds returns every round record in order.
func (s *Store) Rounds() ([]RoundRecord, error) {
	var out []RoundRecord
	err := s.db.View(func(tx *bolt.Tx) error {
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
func (s *Store) Events() ([]Event, error) {
	var out []Event
	err := s.db.View(func(tx *bolt.Tx) error {
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

// Backup writes a consistent copy of the store to path (temp + rename).
func (s *Store) Backup(path string) error {
	tmp := path + ".tmp"
	err := s.db.View(func(tx *bolt.Tx) error { return tx.CopyFile(tmp, 0o600) })
	if err != nil {
		os.Remove(tmp)
		return fmt.Errorf("runner: backup: %w", err)
	}
	return os.Rename(tmp, path)
}
