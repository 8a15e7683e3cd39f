package runner

import (
	"encoding/json"
	"fmt"
	"strings"
	"time"

	"wellscan/planner"
)

// OpenScan opens the store of the scan in dir for a run of spec: a new
// store records the spec and its fingerprint; an existing one must have
// the same fingerprint (molecule, coordinates, engine), otherwise
// OpenScan fails with ErrSpecChanged and leaves the store as it was —
// except that the engine settings may change while no point has
// finished (its failed points are then planned again).
// Changes to the grid, refinement or queue are accepted.
func OpenScan(dir string, spec *planner.Spec, opts OpenOptions) (*Store, error) {
	st, err := Open(dir, opts)
	if err != nil {
		return nil, err
	}
	meta, err := st.Meta()
	if err != nil {
		st.Close()
		return nil, err
	}
	fp, _ := json.Marshal(spec.Fingerprint())
	if ok, _, diff := compatibleFingerprint(meta.Fingerprint, spec); !ok {
		var old planner.Fingerprint
		_ = json.Unmarshal([]byte(meta.Fingerprint), &old)
		if ok, err := acceptEngineChange(st, old, spec.Fingerprint()); ok || err != nil {
			if err == nil {
				err = st.SetSpec(spec.Text(), string(fp))
			}
			if err != nil {
				st.Close()
				return nil, err
			}
			return st, nil
		}
		st.Close()
		return nil, fmt.Errorf("%w since this scan started: %s changed, which changes the energy of every point; restore the old settings or start a new scan in another directory",
			ErrSpecChanged, strings.Join(diff, " and "))
	}
	if meta.Fingerprint != string(fp) || string(meta.LastSpec) != string(spec.Text()) {
		if err := st.SetSpec(spec.Text(), string(fp)); err != nil {
			st.Close()
			return nil, err
		}
	}
	return st, nil
}

// acceptEngineChange decides whether a scan may go on after its engine
// settings changed: only while no point has finished, since then no
// energy of the old settings is kept (a wrong program path or basis name
// fixed after every point failed). It then plans the failed points again
// with fresh attempts, records an event, and returns true. A change of
// the molecule or the coordinates, or any point done, returns false.
func acceptEngineChange(st *Store, old, now planner.Fingerprint) (bool, error) {
	if old.Molecule != now.Molecule || old.Coordinates != now.Coordinates {
		return false, nil
	}
	recs, err := st.Points()
	if err != nil {
		return false, err
	}
	var again []PointRecord
	for _, r := range recs {
		switch r.State {
		case Done:
			return false, nil
		case Failed:
			r.State, r.Attempts, r.Class, r.Jumps, r.Permanent = Planned, 0, "", 0, false
			r.LastError = "planned again: engine settings changed before any point finished (last error: " + r.LastError + ")"
			again = append(again, r)
		}
	}
	ev := Event{Time: time.Now(), Kind: EventResume, Message: fmt.Sprintf("engine settings changed before any point finished: accepted; %d failed point(s) planned again with fresh attempts", len(again))}
	st.notes = append(st.notes, ev.Message)
	return true, st.Commit(again, nil, []Event{ev})
}

// Notes are what [OpenScan] accepted that the user should hear of (an
// engine change before any point finished); empty otherwise.
func (s *Store) Notes() []string { return append([]string(nil), s.notes...) }
