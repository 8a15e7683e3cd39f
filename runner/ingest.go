package runner

import (
	"fmt"
	"path/filepath"
)

// ingest applies a completion to its record; it returns the record.
func (r *scanRun) ingest(c Completion) *PointRecord {
	c = r.home.excuse(c, r.Now())
	rec := r.recs[c.Task.Key]
	if rec == nil {
		return nil
	}
	if c.LeftRunning {
		rec.State = Submitted
		r.touch(rec)
		r.emit(Event{Kind: EventSubmitted, Key: rec.Key, Round: rec.Round, Message: "left running with the " + r.Queue.Name() + " queue"})
		return rec
	}
	if c.Interrupted {
		rec.State = Planned
		rec.Attempts = max(0, rec.Attempts-1)
		r.touch(rec)
		r.emit(Event{Kind: EventPlanned, Key: rec.Key, Round: rec.Round, Message: "interrupted"})
		return rec
	}
	switch {
	case c.Reused:
		r.reused++
	case c.Result.Status == ResultDone:
		r.computed++
		r.measure(c.Result)
	}
	r.apply(rec, c.Result)
	return rec
}

// apply records result res on rec.
func (r *scanRun) apply(rec *PointRecord, res Result) {
	rec.Finished = res.Finished
	if rec.Attempts < res.Attempt {
		rec.Attempts = res.Attempt
	}
	if res.Status == ResultDone {
		rec.setDone(res, storedOrbitals(r.Dir, rec.Key, res.Orbitals))
		r.indexPoint(rec)
		r.touch(rec)
		r.emit(Event{Kind: EventDone, Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("%.10f hartree", res.Energy)})
		return
	}
	rec.setFailure(res)
	rec.Permanent = res.Permanent || !retriable(res.Class)
	if !rec.Permanent && rec.Attempts < r.Spec.Queue.Attempts {
		rec.State = Planned
		r.touch(rec)
		r.emit(Event{Kind: EventRetry, Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("attempt %d of %d failed (%s): %s", rec.Attempts, r.Spec.Queue.Attempts, res.Class, res.Error)})
		return
	}
	rec.State = Failed
	r.touch(rec)
	r.emit(Event{Kind: EventFailed, Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("%s after %d attempts: %s", res.Class, rec.Attempts, res.Error)})
}

// storedOrbitals turns the orbitals path of key's result file in scan dir
// (relative to the point directory; an absolute one from an older writer
// is accepted) into the store's form: slash-separated, relative to the
// scan directory; "" for none.
func storedOrbitals(dir, key, orb string) string {
	if orb == "" {
		return ""
	}
	p := filepath.Join(PointsDir, key, orb)
	if filepath.IsAbs(orb) {
		if rel, err := filepath.Rel(dir, orb); err == nil {
			p = rel
		}
	}
	return filepath.ToSlash(p)
}
