package runner

import (
	"errors"
	"fmt"
	"time"

	"wellscan/planner"
)

// PointSet is every point of a scan as one read saw it, in internal units
// (bohr, radian, hartree).
type PointSet struct {
	Records []PointRecord
	Rounds  []RoundRecord
	// Source says where the points came from: "store", or the snapshot of
	// a run that holds the store (with its PID and time).
	Source string
	// Snapshot is set when the points came from a running scan's
	// status.json.
	Snapshot *Snapshot
	// Warnings about the scan, most serious first ([ScanWarnings], or the
	// snapshot's).
	Warnings []Warning
}

// ReadPoints reads the points of the scan in dir: from the store when no
// run holds it (opened read-only, briefly), else from the snapshot the
// running orchestrator keeps in status.json. It is the one read path of
// the commands that show or analyse a scan (fit, report, export, status).
func ReadPoints(dir string, spec *planner.Spec) (PointSet, error) {
	st, err := Open(dir, OpenOptions{ReadOnly: true, Timeout: 300 * time.Millisecond})
	switch {
	case err == nil:
		defer st.Close()
		// Points computed for another spec (an edited scan.toml, a store
		// copied from another scan) must not be fitted or reported as this
		// scan's.
		ferr := CheckFingerprint(st, spec)
		recs, rerr := st.Points()
		rounds, rrerr := st.Rounds()
		if err := errors.Join(rerr, rrerr); err != nil {
			return PointSet{}, err
		}
		for i := range recs {
			if r := &recs[i]; r.Damaged != "" {
				// A record that fails its checksum shows no number.
				r.Energy, r.State, r.Class, r.LastError = nil, Failed, "damaged", r.Damaged+"; the next run repairs it"
			}
		}
		source := "store"
		if li := ReadLockInfo(dir); li != nil {
			source += "; note: " + StaleLockMessage(dir, li) + " (wellscan run resumes it)"
		}
		return PointSet{Records: recs, Rounds: rounds, Source: source, Warnings: ScanWarnings(recs, rounds)}, ferr
	case errors.Is(err, ErrLocked):
		snap, serr := ReadSnapshot(dir)
		if serr != nil {
			return PointSet{}, fmt.Errorf("%w (and no snapshot: %w)", err, serr)
		}
		ferr := CheckSnapshotFingerprint(dir, snap, spec)
		ps := PointSet{Snapshot: &snap, Warnings: snap.Warnings, Source: fmt.Sprintf("snapshot of %s, run by PID %d on %s", snap.Updated.Local().Format("15:04:05"), snap.PID, snap.Host)}
		errs := map[string]PointErrorJSON{}
		for _, e := range snap.LastErrors {
			errs[e.Key] = e
		}
		for _, p := range snap.Points {
			r := PointRecord{Key: p.Key, Values: p.Values, State: p.State, Energy: p.EnergyHartree, Round: p.Round, Attempts: p.Attempts,
				Iterations: p.Iterations, SSquared: p.SSquared}
			if r.Values == nil {
				// Snapshots written before values were kept: rebuild from
				// the key.
				pt, err := spec.CanonicalPoint(p.Key)
				if err != nil {
					return PointSet{}, fmt.Errorf("runner: snapshot point %s: %w", p.Key, err)
				}
				r.Values = pt.Values
			}
			if e, ok := errs[p.Key]; ok {
				r.Class, r.LastError = e.Class, e.Error
			}
			ps.Records = append(ps.Records, r)
		}
		return ps, ferr
	case errors.Is(err, ErrNoStore):
		return PointSet{}, fmt.Errorf("%w: %s has not been run yet (wellscan run %s)", err, dir, dir)
	}
	return PointSet{}, err
}
