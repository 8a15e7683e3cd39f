package runner

import (
	"fmt"
	"time"

	"wellscan/planner"
)

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
	ev := Event{Time: time.Now(), Kind: "resume", Message: fmt.Sprintf("engine settings changed before any point finished: accepted; %d failed point(s) planned again with fresh attempts", len(again))}
	st.notes = append(st.notes, ev.Message)
	return true, st.Commit(again, nil, []Event{ev})
}

// Notes are what [OpenScan] accepted that the user should hear of (an
// engine change before any point finished); empty otherwise.
func (s *Store) Notes() []string { return append([]string(nil), s.notes...) }
