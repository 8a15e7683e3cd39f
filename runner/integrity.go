package runner

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"strings"

	"wellscan/planner"
)

// ErrChecksum is matched by errors about a stored point record or result
// file whose content no longer matches its checksum.
var ErrChecksum = errors.New("runner: checksum mismatch")

// compatibleFingerprint reports whether a store recorded with old may be
// used with spec: equal, or old predates the hash of the engine's files
// (an earlier wellscan) and everything else is equal. upgrade is true in
// the second case.
func compatibleFingerprint(old string, spec *planner.Spec) (ok, upgrade bool, diff []string) {
	cur := spec.Fingerprint()
	fp, _ := json.Marshal(cur)
	if old == "" || old == string(fp) {
		return true, false, nil
	}
	var o planner.Fingerprint
	if err := json.Unmarshal([]byte(old), &o); err != nil {
		return false, false, []string{"the fingerprint recorded in the store (unreadable)"}
	}
	if o.Files == "" && cur.Files != "" {
		c := cur
		c.Files = ""
		if o == c {
			return true, true, nil
		}
	}
	return false, false, o.Diff(cur)
}

// CheckFingerprint compares the fingerprint recorded in st with spec's.
// A mismatch (scan.toml edited after the points were computed, or a store
// copied from another scan) is an error wrapping ErrSpecChanged that says
// what differs: energies in the store would be attributed to another
// molecule, method or program. A store with no fingerprint yet (nothing
// run) passes.
func CheckFingerprint(st *Store, spec *planner.Spec) error {
	meta, err := st.Meta()
	if err != nil {
		return err
	}
	return fingerprintError(st.Dir(), meta.Fingerprint, spec)
}

func fingerprintError(dir, recorded string, spec *planner.Spec) error {
	ok, _, diff := compatibleFingerprint(recorded, spec)
	if ok {
		return nil
	}
	return fmt.Errorf("%w: the points stored in %s were computed for another spec: %s of %s differ from what the store recorded, so its energies do not belong to this scan; restore the scan.toml they were computed with, or start a new scan in another directory",
		ErrSpecChanged, dir, strings.Join(diff, " and "), spec.File())
}

// CheckSnapshotFingerprint is CheckFingerprint for a status.json snapshot
// (read while a run holds the store). A snapshot written by an earlier
// wellscan carries no fingerprint and passes.
func CheckSnapshotFingerprint(dir string, snap Snapshot, spec *planner.Spec) error {
	return fingerprintError(dir, snap.Fingerprint, spec)
}

// recordSum is the checksum of a point record: the SHA-256 of its JSON
// with the Sum field empty, first 16 hex digits.
func recordSum(r PointRecord) string {
	r.Sum = ""
	r.Damaged = ""
	b, _ := json.Marshal(r)
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:8])
}

// resultSum is the checksum of a result file's content, like recordSum.
func resultSum(r Result) string {
	r.Sum = ""
	b, _ := json.Marshal(r)
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:8])
}

// repairDamaged deals with a record that failed its checksum: the point's
// result file, when it is intact (its own checksum and the scan's
// fingerprint) and says done, replaces the record; otherwise the point is
// planned again (its attempts kept). Either way an event names the point
// and the copy that is kept.
func (r *scanRun) repairDamaged(rec *PointRecord) {
	rec.Damaged = ""
	if res, ok := ReadResult(r.Dir, rec.Key, r.fp); ok && res.Status == ResultDone {
		r.apply(rec, res)
		r.emit(Event{Kind: EventRepair, Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("the stored record of %s failed its checksum; kept the copy in %s (checksum intact): E = %.10f hartree",
			rec.Key, PointDir(r.Dir, rec.Key)+"/"+ResultFile, res.Energy)})
		return
	}
	rec.State, rec.Energy, rec.Converged, rec.Class, rec.LastError = Planned, nil, false, "", ""
	r.touch(rec)
	r.emit(Event{Kind: EventRepair, Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("the stored record of %s failed its checksum and no intact result file exists; the store's copy is discarded and the point computed again", rec.Key)})
}

// warnOnce records a "warning" event the first time a convenience file
// (the store backup, status.json) cannot be written: the scan goes on,
// since the store holds everything, but the user is told why the file is
// missing or stale (a symbolic link in its place, a full disk).
func (r *scanRun) warnOnce(what string, err error) {
	if err == nil {
		return
	}
	if r.warned == nil {
		r.warned = map[string]bool{}
	}
	if r.warned[what] {
		return
	}
	r.warned[what] = true
	r.emit(Event{Kind: EventWarning, Round: r.round, Message: fmt.Sprintf("could not write the %s (the scan goes on; the store has every result): %v", what, err)})
}
