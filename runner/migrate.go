package runner

import (
	"fmt"
	"math"
	"runtime/debug"
	"sort"

	bolt "go.etcd.io/bbolt"

	"wellscan/planner"
)

// Rekey removes the records of del and writes put, with events saying
// why, in one transaction (so a crash cannot lose a record between the
// two). Used when points are folded onto canonical keys; the point
// directories stay on disk.
func (s *Store) Rekey(put []PointRecord, del []string, events []Event) (err error) {
	defer guardStore(s.path(), &err, debug.SetPanicOnFault(true))
	return s.db.Update(func(tx *bolt.Tx) error {
		pb := tx.Bucket(bucketPoints)
		for _, k := range del {
			if err := pb.Delete([]byte(k)); err != nil {
				return err
			}
		}
		if err := putRecords(pb, put); err != nil {
			return err
		}
		return appendEvents(tx.Bucket(bucketEvents), events)
	})
}

// canonicalKeys folds records whose keys are not canonical for the spec —
// a torsion written before its values were kept modulo the period, or a
// spec that gained a shorter period — onto the canonical key of the same
// geometry. Nothing computed is lost: a done record moves to its canonical
// key unless that key is done already; then the two energies are compared
// and the difference is reported in an event (the canonical record is
// kept). It returns the events that explain what changed.
func canonicalKeys(spec *planner.Spec, recs map[string]*PointRecord) (renamed []*PointRecord, removed []string, events []Event) {
	keys := make([]string, 0, len(recs))
	for k := range recs {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		rec := recs[k]
		cp, err := spec.CanonicalPoint(k)
		if err != nil || cp.Key == k {
			continue
		}
		other, exists := recs[cp.Key]
		switch {
		case !exists:
			rec.Key, rec.Values = cp.Key, cp.Values
			delete(recs, k)
			recs[cp.Key] = rec
			renamed = append(renamed, rec)
			removed = append(removed, k)
			events = append(events, Event{Kind: EventResume, Key: cp.Key, Message: fmt.Sprintf("point %s is the same geometry as %s (the torsion's values are kept modulo its period): recorded under %s", k, cp.Key, cp.Key)})
		case rec.State == Done && other.State != Done:
			// The computed one wins the canonical key.
			rec.Key, rec.Values = cp.Key, cp.Values
			rec.Round = min(rec.Round, other.Round)
			delete(recs, k)
			recs[cp.Key] = rec
			renamed = append(renamed, rec)
			removed = append(removed, k)
			events = append(events, Event{Kind: EventResume, Key: cp.Key, Message: fmt.Sprintf("point %s (done) is the same geometry as %s (%s): its energy is recorded under %s", k, cp.Key, other.State, cp.Key)})
		default:
			msg := fmt.Sprintf("point %s is the same geometry as %s (the torsion's values are kept modulo its period); %s is kept", k, cp.Key, cp.Key)
			if rec.State == Done && other.State == Done && rec.Energy != nil && other.Energy != nil {
				d := math.Abs(*rec.Energy - *other.Energy)
				msg += fmt.Sprintf("; their energies differ by %.3g E_h", d)
				if d > 1e-6 {
					msg += " — more than the SCF convergence explains: check the period (is the rotor really symmetric?) or the electronic state"
				}
			}
			delete(recs, k)
			removed = append(removed, k)
			events = append(events, Event{Kind: EventResume, Key: k, Message: msg})
		}
	}
	return renamed, removed, events
}
