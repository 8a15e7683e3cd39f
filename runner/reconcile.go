package runner

import (
	"fmt"
	"path/filepath"
)

// reconcile brings the store in line with the files on disk after a
// crash, and plans round 1 (or points a grown grid added).
func (r *scanRun) reconcile() error {
	resumed := 0
	for _, k := range r.keys() {
		rec := r.recs[k]
		if rec.Damaged != "" {
			r.repairDamaged(rec)
			resumed++
			continue
		}
		if rec.State == Done {
			r.restoreResult(rec)
			continue
		}
		if rec.State == Failed {
			r.retryIfAllowed(rec)
			continue
		}
		if rec.State == Dropped {
			continue
		}
		inFlight := rec.State == Submitted || rec.State == Running
		if res, ok := ReadResult(r.Dir, k, r.fp); ok && (res.Status == ResultDone || (inFlight && res.Attempt == rec.Attempts)) {
			r.apply(rec, res)
			r.reused++
			resumed++
			continue
		}
		if inFlight {
			// Lost with the process that ran it, or still with a batch
			// queue: back to planned without using up an attempt; the
			// queue adopts a task that still runs it instead of running it
			// again.
			msg := "in flight when the last run stopped; planned again"
			if rec.State == Submitted {
				msg = "left with the queue by an earlier run; asking the queue about it"
			}
			rec.State = Planned
			rec.Attempts = max(0, rec.Attempts-1)
			r.touch(rec)
			r.emit(Event{Kind: EventPlanned, Key: k, Round: rec.Round, Message: msg})
			resumed++
		}
	}
	if r.round == 0 {
		r.round = 1
	}
	r.roundRec(r.round)
	added := 0
	for _, p := range r.Spec.InitialPoints() {
		if _, ok := r.recs[p.Key]; !ok {
			r.plan(p, r.round)
			added++
		}
	}
	if added > 0 {
		r.roundRec(r.round).Points += added
		r.emit(Event{Kind: EventRound, Round: r.round, Message: fmt.Sprintf("round %d: %d points from the grid", r.round, added)})
	}
	if resumed > 0 {
		r.emit(Event{Kind: EventResume, Round: r.round, Message: fmt.Sprintf("resumed: %d points reconciled with their result files", resumed)})
	}
	return r.flush()
}

// restoreResult rewrites the result file of a done point when it is
// missing or unreadable. Points computed in this process are recorded by
// the store; their result files are written without fsync and a machine
// crash can lose them. They are a copy for people and for compute nodes
// (which read their neighbours' result files for continuation guesses),
// so they are rebuilt from the record.
func (r *scanRun) restoreResult(rec *PointRecord) {
	if rec.Energy == nil {
		return
	}
	msg := "result file was missing or unreadable; rewritten from the store"
	if res, ok := ReadResult(r.Dir, rec.Key, r.fp); ok {
		if res.Status == ResultDone && res.Energy == *rec.Energy {
			return
		}
		msg = fmt.Sprintf("%s says %s E = %.10f hartree but the store (checksum intact) says E = %.10f hartree; kept the store's copy and rewrote the file", ResultFile, res.Status, res.Energy, *rec.Energy)
	}
	orb := ""
	if rec.Orbitals != "" {
		if rel, err := filepath.Rel(PointDir(r.Dir, rec.Key), filepath.Join(r.Dir, filepath.FromSlash(rec.Orbitals))); err == nil {
			orb = rel
		}
	}
	res := rec.doneResult(r.fp, r.host, orb)
	if err := writeResult(r.Dir, res, r.suffix, false); err != nil {
		return // a convenience copy; the store has the result
	}
	r.emit(Event{Kind: EventResume, Key: rec.Key, Round: rec.Round, Message: msg})
}
