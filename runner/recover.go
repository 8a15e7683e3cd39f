package runner

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime/debug"
	"sort"
	"time"

	bolt "go.etcd.io/bbolt"

	"wellscan/planner"
)

// StoreCheck is what CheckStore found.
type StoreCheck struct {
	Path    string
	Points  int      // point records read
	Damaged []string // keys of records that fail their checksum
	Pages   []string // problems bbolt's own consistency check reports
}

// OK reports whether the store passed every check.
func (c StoreCheck) OK() bool { return len(c.Damaged) == 0 && len(c.Pages) == 0 }

// CheckStore opens the store of dir read-only and runs bbolt's own
// consistency check (pages, freelist) and the point records' checksums.
// A store that cannot be opened is an error wrapping ErrDamaged.
func CheckStore(dir string) (c StoreCheck, err error) {
	c.Path = filepath.Join(dir, DBFile)
	st, err := Open(dir, OpenOptions{ReadOnly: true, Timeout: 500 * time.Millisecond})
	if err != nil {
		return c, err
	}
	defer st.Close()
	defer guardStore(c.Path, &err, debug.SetPanicOnFault(true))
	_ = st.db.View(func(tx *bolt.Tx) error {
		for e := range tx.Check() {
			c.Pages = append(c.Pages, e.Error())
			if len(c.Pages) == 20 {
				break
			}
		}
		return nil
	})
	recs, err := st.Points()
	if err != nil {
		return c, err
	}
	c.Points = len(recs)
	for _, r := range recs {
		if r.Damaged != "" {
			c.Damaged = append(c.Damaged, r.Key)
		}
	}
	return c, nil
}

// ErrStoreReadable is returned by RestoreBackup and RebuildStore when the
// store opens and passes its checks: there is nothing to recover, and
// replacing it would lose what it holds beyond the backup or the result
// files.
var ErrStoreReadable = errors.New("runner: the store is readable")

// needsRecovery returns nil when dir's store is absent or damaged (or
// force is set), ErrStoreReadable (wrapped) when it is fine, and the
// error of a store held by a run.
func needsRecovery(dir string, force bool) error {
	c, err := CheckStore(dir)
	switch {
	case errors.Is(err, ErrNoStore), errors.Is(err, ErrDamaged):
		return nil
	case errors.Is(err, ErrLocked):
		return err
	case err != nil:
		return err
	case force || !c.OK():
		return nil
	}
	return fmt.Errorf("%w (%d points, checks pass): nothing to recover; give --force to replace it anyway", ErrStoreReadable, c.Points)
}

// setAside renames a present wellscan.db to wellscan.db.damaged-<time> and
// returns the new name ("" when there was none).
func setAside(f *ScanFS, now time.Time) (string, error) {
	if _, err := f.Lstat(DBFile); errors.Is(err, os.ErrNotExist) {
		return "", nil
	}
	name := damagedName(now)
	if err := f.Rename(DBFile, name); err != nil {
		return "", err
	}
	return name, nil
}

// RestoreBackup replaces a damaged (or absent) store of dir by its backup
// wellscan.db.bak, which must itself open and pass bbolt's check. The
// damaged file is kept as wellscan.db.damaged-<time> (its name is
// returned). force replaces a readable store too.
func RestoreBackup(dir string, force bool, now time.Time) (kept string, err error) {
	if err := needsRecovery(dir, force); err != nil {
		return "", err
	}
	f, err := OpenScanFS(dir)
	if err != nil {
		return "", err
	}
	defer f.Close()
	bak := DBFile + ".bak"
	if err := checkBoltFile(filepath.Join(dir, bak)); err != nil {
		return "", fmt.Errorf("runner: the backup %s cannot be used either (%w); rebuild from the result files: wellscan store rebuild %s", filepath.Join(dir, bak), err, dir)
	}
	src, err := os.Open(filepath.Join(dir, bak))
	if err != nil {
		return "", fmt.Errorf("runner: %w", err)
	}
	defer src.Close()
	tmp := DBFile + ".restore.tmp"
	dst, err := f.Create(tmp)
	if err != nil {
		return "", err
	}
	_, cerr := io.Copy(dst, src)
	if err := errors.Join(cerr, dst.Sync(), dst.Close()); err != nil {
		f.Remove(tmp)
		return "", fmt.Errorf("runner: copying %s: %w", bak, err)
	}
	if kept, err = setAside(f, now); err != nil {
		f.Remove(tmp)
		return "", err
	}
	if err := f.Rename(tmp, DBFile); err != nil {
		return kept, err
	}
	return kept, syncDir(dir)
}

// checkBoltFile opens path read-only and runs bbolt's consistency check.
func checkBoltFile(path string) (err error) {
	defer guardStore(path, &err, debug.SetPanicOnFault(true))
	st, err := os.Stat(path)
	if err != nil {
		return err
	}
	if st.Size() < minStoreBytes {
		return fmt.Errorf("%d bytes, truncated", st.Size())
	}
	db, err := bolt.Open(path, 0o600, &bolt.Options{ReadOnly: true, Timeout: 500 * time.Millisecond})
	if err != nil {
		return err
	}
	defer db.Close()
	return db.View(func(tx *bolt.Tx) error {
		for e := range tx.Check() {
			return e
		}
		if tx.Bucket(bucketScan) == nil || tx.Bucket(bucketPoints) == nil {
			return errors.New("not a wellscan store")
		}
		return nil
	})
}

// Rebuilt is what RebuildStore recovered.
type Rebuilt struct {
	Done, Failed int      // points taken from their result files
	Skipped      []string // point directories without a usable result file
	Kept         string   // the damaged store's new name, "" if there was none
}

// RebuildStore builds a new store for dir from the points' result files
// (points/<key>/result.json whose key and fingerprint match spec and whose
// checksum holds): done points with their energies, failed points with
// their error. Points without a usable result file are left out; the
// next run plans those of the grid again. Rounds and the event log start
// afresh. The damaged store is kept as wellscan.db.damaged-<time>.
func RebuildStore(dir string, spec *planner.Spec, force bool, now time.Time) (out Rebuilt, err error) {
	if err := needsRecovery(dir, force); err != nil {
		return out, err
	}
	f, err := OpenScanFS(dir)
	if err != nil {
		return out, err
	}
	defer f.Close()
	fp := SpecFingerprint(spec)
	entries, err := os.ReadDir(filepath.Join(dir, PointsDir))
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		return out, fmt.Errorf("runner: %w", err)
	}
	var recs []PointRecord
	for _, e := range entries {
		key := e.Name()
		if !e.IsDir() {
			continue
		}
		p, perr := spec.ParseKey(key)
		res, ok := ReadResult(dir, key, fp)
		if perr != nil || !ok {
			out.Skipped = append(out.Skipped, key)
			continue
		}
		rec := PointRecord{Key: key, Values: p.Values, Round: 1, Attempts: res.Attempt, Backend: res.Backend,
			Planned: res.Started, Started: res.Started, Finished: res.Finished}
		if res.Status == ResultDone {
			rec.setDone(res, storedOrbitals(dir, key, res.Orbitals))
			out.Done++
		} else {
			rec.State = Failed
			rec.setFailure(res)
			out.Failed++
		}
		recs = append(recs, rec)
	}
	sort.Strings(out.Skipped)
	tmpName := DBFile + ".rebuild.tmp"
	_ = f.Remove(tmpName)
	tmp := filepath.Join(dir, tmpName)
	if err := func() (err error) {
		defer guardStore(tmp, &err, debug.SetPanicOnFault(true))
		db, err := bolt.Open(tmp, 0o600, &bolt.Options{Timeout: time.Second})
		if err != nil {
			return err
		}
		s := &Store{db: db, dir: dir}
		err = errors.Join(db.Update(func(tx *bolt.Tx) error { return initBuckets(tx, now) }),
			s.SetSpec(spec.Text(), fp),
			s.Commit(recs, nil, []Event{{Time: now, Kind: EventRebuild, Message: fmt.Sprintf("store rebuilt from result files: %d done, %d failed, %d point directories without a usable result", out.Done, out.Failed, len(out.Skipped))}}),
			db.Sync())
		return errors.Join(err, db.Close())
	}(); err != nil {
		f.Remove(tmpName)
		return out, fmt.Errorf("runner: rebuilding the store: %w", err)
	}
	if out.Kept, err = setAside(f, now); err != nil {
		f.Remove(tmpName)
		return out, err
	}
	if err := f.Rename(tmpName, DBFile); err != nil {
		return out, err
	}
	return out, syncDir(dir)
}
