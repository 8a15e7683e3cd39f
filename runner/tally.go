package runner

import "time"

// tallyCounts returns the number of points in each state, kept up to date
// at every flush from the records that changed (every state change
// touches its record), so the progress shown with each commit costs
// nothing per point already recorded.
func (r *scanRun) tallyCounts() map[State]int {
	if r.tally == nil {
		r.tally, r.tallied = map[State]int{}, make(map[string]State, len(r.recs))
		for _, s := range States {
			r.tally[s] = 0
		}
		for k, rec := range r.recs {
			r.tally[rec.State]++
			r.tallied[k] = rec.State
		}
	}
	c := make(map[State]int, len(r.tally))
	for s, n := range r.tally {
		c[s] = n
	}
	return c
}

// retally brings the tally in line with the records marked dirty.
func (r *scanRun) retally() {
	if r.tally == nil {
		return
	}
	for k := range r.dirty {
		rec := r.recs[k]
		if rec == nil {
			continue
		}
		if old, ok := r.tallied[k]; ok {
			if old == rec.State {
				continue
			}
			r.tally[old]--
		}
		r.tally[rec.State]++
		r.tallied[k] = rec.State
	}
}

// measure adds the compute time of a point this run computed (its result
// file's start and finish) to the basis of the ETA.
func (r *scanRun) measure(res Result) {
	if d := res.Finished.Sub(res.Started); d > 0 {
		r.pointTime += d
	}
}

// eta estimates the time left for left points from the measured compute
// time of the points this run computed, spread over the queue's slots;
// 0 (unknown) before any point was computed here. Time spent waiting for
// a batch queue or a poll is not a point's compute time and does not
// inflate the estimate.
func (r *scanRun) eta(left int) time.Duration {
	if r.computed == 0 || left <= 0 {
		return 0
	}
	per := r.pointTime / time.Duration(r.computed)
	slots := max(1, min(r.Queue.Slots(), left))
	waves := (left + slots - 1) / slots
	return per * time.Duration(waves)
}

// snapshotRunning rewrites status.json while points run, at most every
// SnapshotEvery, and never more often than 20 times its own cost: a
// snapshot holds every point (and checks the curve for discontinuities),
// so on a large scan it would otherwise cost more per point the more
// points there are. The wall clock paces it, whatever Runner.Now is.
func (r *scanRun) snapshotRunning() {
	now := time.Now()
	if now.Before(r.snapNext) {
		return
	}
	r.snapshot("running")
	r.snapNext = now.Add(20 * time.Since(now))
}
