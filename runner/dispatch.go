package runner

import (
	"container/heap"
	"math"

	"wellscan/planner"
)

// dispatcher decides which planned point goes to the next free worker.
// Continuation works best when a point starts from a done neighbour one
// step away, so on a queue that runs points in this process's workers
// (a Pool) points are handed out by the squared distance to their
// nearest done point with orbitals (smallest first, then round, then
// coordinate order). A round with nothing done starts from the planned
// point nearest the middle of all planned points; with one or two slots
// the other worker waits for it (a point started beside a running one
// would start cold, and measured on the 30-point CO scan with two workers
// a second cold seed cost 6.5 % more SCF iterations per point, waiting
// 1.2 %, BenchmarkScanRunner_COWorkers); with more slots each further
// worker seeds the planned point farthest from the running ones, since
// holding them all back would cost more time than their cold starts cost
// iterations.
// The neighbours of each done point come next, so every worker soon has a
// point one or two steps from a done one.
//
// Queues that compute elsewhere (a batch scheduler sorts and packs the
// points itself, and its compute nodes pick their own guesses), scans
// with the continuation guess off, and backends that do not continue
// from a neighbour (not a ContinuationBackend, or one that leaves no
// orbitals) get the points in plain order (round, then coordinate values).
//
// Every operation costs O(log n) in the number of points, except the
// re-scan when the queue of points with a done neighbour runs dry, which
// is linear and happens about once per round.
type dispatcher struct {
	r        *scanRun
	h        dispatchHeap
	key      map[string]float64 // the distance each planned point is queued with
	planned  map[string]*PointRecord
	running  map[string]*PointRecord
	prepared map[string]Task // tasks built and not yet handed out: geometry kept
	plain    bool            // hand out in round and coordinate order
	wait     bool            // with nothing done, hold the other workers back (else seed far from the running points)
	anyDone  bool            // some point is done: no more waiting for a first one
}

// ContinuationBackend is implemented by backends that start a point from
// the orbitals of a done neighbour (Task.GuessPath) and leave their own
// for the next (Outcome.Orbitals); UsesGuess reports whether this one
// does (a spec can turn the guess off). The round loop orders points for
// continuation only for such backends; others get plain order.
type ContinuationBackend interface {
	UsesGuess() bool
}

func newDispatcher(r *scanRun) *dispatcher {
	d := &dispatcher{r: r, key: map[string]float64{}, planned: map[string]*PointRecord{},
		running: map[string]*PointRecord{}, prepared: map[string]Task{}}
	_, pool := r.Queue.(Pool)
	cb, cont := r.Backend.(ContinuationBackend)
	d.plain = !pool || !cont || !cb.UsesGuess() || r.Spec.Engine.Guess == "fresh"
	d.wait = r.Queue.Slots() <= 2
	for _, rec := range r.recs {
		if rec.State == Done {
			d.anyDone = true
		}
	}
	for _, rec := range r.recs {
		if rec.State == Planned {
			d.add(rec)
		}
	}
	return d
}

// len is the number of planned points not yet handed out.
func (d *dispatcher) len() int { return len(d.planned) }

// add queues a planned point by its distance to the nearest done point
// (not at all while it has none: the re-scan finds it).
func (d *dispatcher) add(rec *PointRecord) {
	d.planned[rec.Key] = rec
	if d.plain {
		d.offer(rec, 0)
		return
	}
	if _, dist := d.r.nearestDone(rec); !math.IsInf(dist, 1) {
		d.offer(rec, dist)
	}
}

// offer queues rec with distance dist if that is less than it has.
func (d *dispatcher) offer(rec *PointRecord, dist float64) {
	if old, ok := d.key[rec.Key]; ok && old <= dist {
		return
	}
	d.key[rec.Key] = dist
	heap.Push(&d.h, dispatchEntry{rec: rec, dist: dist})
}

// next takes the planned point to hand out next; nil when none is left.
func (d *dispatcher) next() *PointRecord {
	for len(d.planned) > 0 {
		if len(d.h) == 0 {
			if !d.anyDone && len(d.running) > 0 {
				if d.wait {
					return nil // wait for the first point
				}
				if rec := d.farSeed(); rec != nil {
					d.take(rec)
					return rec
				}
				return nil
			}
			if rec := d.rescan(); rec != nil {
				d.take(rec)
				return rec
			}
			if len(d.h) == 0 {
				return nil
			}
			continue
		}
		e := heap.Pop(&d.h).(dispatchEntry)
		if d.planned[e.rec.Key] != e.rec || e.rec.State != Planned || d.key[e.rec.Key] != e.dist {
			continue // stale: handed out, or queued again nearer
		}
		d.take(e.rec)
		return e.rec
	}
	return nil
}

func (d *dispatcher) take(rec *PointRecord) {
	delete(d.planned, rec.Key)
	delete(d.key, rec.Key)
}

// putBack returns a point taken by next but not handed out.
func (d *dispatcher) putBack(rec *PointRecord) {
	if rec.State == Planned {
		d.add(rec)
	}
}

// rescan runs when no queued point has a done neighbour: it queues every
// planned point that now has one and returns nil, or, when none has,
// returns a seed.
func (d *dispatcher) rescan() *PointRecord {
	var stale []string
	for k, rec := range d.planned {
		if rec.State != Planned {
			stale = append(stale, k)
			continue
		}
		if _, dist := d.r.nearestDone(rec); !math.IsInf(dist, 1) {
			d.offer(rec, dist)
		}
	}
	for _, k := range stale {
		delete(d.planned, k)
		delete(d.key, k)
	}
	if len(d.h) > 0 || len(d.planned) == 0 {
		return nil
	}
	return d.seed()
}

// seed picks a point to start from nothing: the planned point nearest
// the middle of all planned points (ties to the earlier in round and
// coordinate order).
func (d *dispatcher) seed() *PointRecord {
	var lo, hi []float64
	for _, rec := range d.planned {
		if lo == nil {
			lo, hi = append([]float64(nil), rec.Values...), append([]float64(nil), rec.Values...)
		}
		for i, v := range rec.Values {
			if i < len(lo) {
				lo[i], hi[i] = min(lo[i], v), max(hi[i], v)
			}
		}
	}
	var best *PointRecord
	bestScore := 0.0
	for _, rec := range d.planned {
		s := 0.0
		for i, v := range rec.Values {
			if i < len(lo) {
				c := (lo[i]+hi[i])/2 - v
				s += c * c
			}
		}
		if best == nil || s < bestScore || (s == bestScore && queueLess(rec, best)) {
			best, bestScore = rec, s
		}
	}
	return best
}

// farSeed picks, while nothing is done, the planned point farthest from
// every running point: with more than two workers, holding all but one
// back for the first point would cost more time than the cold starts of
// a few more seeds cost iterations.
func (d *dispatcher) farSeed() *PointRecord {
	var best *PointRecord
	bestScore := 0.0
	for _, rec := range d.planned {
		if rec.State != Planned {
			continue
		}
		s := math.Inf(1)
		for _, o := range d.running {
			s = min(s, sqDist(rec.Values, o.Values))
		}
		if best == nil || s > bestScore || (s == bestScore && queueLess(rec, best)) {
			best, bestScore = rec, s
		}
	}
	return best
}

// dispatched records that rec was handed to a worker: the planned points
// next to it on its scan lines are queued if they have a done neighbour,
// so that a worker does not wait for a re-scan to find them.
func (d *dispatcher) dispatched(rec *PointRecord) {
	d.running[rec.Key] = rec
	delete(d.prepared, rec.Key)
	if d.plain {
		return
	}
	d.neighbours(rec, func(o *PointRecord) {
		if _, dist := d.r.nearestDone(o); !math.IsInf(dist, 1) {
			d.offer(o, dist)
		}
	})
}

// finished records that rec left the running state (done, failed, or
// planned again); a done point brings its planned scan-line neighbours
// nearer the front of the queue.
func (d *dispatcher) finished(rec *PointRecord) {
	delete(d.running, rec.Key)
	switch rec.State {
	case Planned:
		d.add(rec)

	case Done:
		d.anyDone = true
		if d.plain {
			return
		}
		if rec.Orbitals == "" {
			// This backend leaves no orbitals to continue from: plain
			// order from now on.
			d.plain = true
			clear(d.key)
			d.h = d.h[:0]
			for _, o := range d.planned {
				d.offer(o, 0)
			}
			return
		}
		d.neighbours(rec, func(o *PointRecord) {
			d.offer(o, sqDist(o.Values, rec.Values))
		})
	}
}

// neighbours calls f with each planned point next to rec on one of its
// scan lines (at most two per coordinate).
func (d *dispatcher) neighbours(rec *PointRecord, f func(*PointRecord)) {
	idx := d.r.index()
	for axis := range rec.Values {
		for _, dir := range []int{-1, 1} {
			for _, k := range idx.all.lineNext(rec.Values, axis, dir, 64) {
				if o := d.planned[k]; o != nil && o.State == Planned {
					f(o)
				}
			}
		}
	}
}

// task builds the Task for rec: geometry, directory, continuation guess
// and a thread share.
func (r *scanRun) task(rec *PointRecord, active int) (Task, error) {
	p := planner.Point{Key: rec.Key, Values: rec.Values}
	mol, err := r.Spec.Geometry(p)
	if err != nil {
		return Task{}, err
	}
	t := Task{Key: rec.Key, Values: rec.Values, Mol: mol, Dir: PointDir(r.Dir, rec.Key), Attempt: rec.Attempts + 1, Cold: rec.Jumps > 0}
	// A point whose energy jumped is recomputed from a cold start: its
	// continuation guess may be what carried it onto another state.
	r.setGuess(&t, rec)
	r.setThreads(&t, active)
	return t, nil
}

// preparedTask is task, reusing the geometry of a task prepared for rec
// earlier and not handed out; the guess and thread share are chosen anew.
func (r *scanRun) preparedTask(d *dispatcher, rec *PointRecord, active int) (Task, error) {
	if t, ok := d.prepared[rec.Key]; ok && t.Attempt == rec.Attempts+1 {
		r.setGuess(&t, rec)
		r.setThreads(&t, active)
		return t, nil
	}
	t, err := r.task(rec, active)
	if err == nil {
		d.prepared[rec.Key] = t
	}
	return t, err
}

func (r *scanRun) setThreads(t *Task, active int) {
	t.Threads = r.Spec.Queue.Threads
	if t.Threads == 0 {
		t.Threads = max(1, r.CPUs/max(1, min(r.Queue.Slots(), active)))
	}
}

func sqDist(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		if i < len(b) {
			s += (a[i] - b[i]) * (a[i] - b[i])
		}
	}
	return s
}

// queueLess is the tie order of planned points: round, then coordinate
// values, then key.
func queueLess(a, b *PointRecord) bool {
	if a.Round != b.Round {
		return a.Round < b.Round
	}
	for i := range a.Values {
		if i < len(b.Values) && a.Values[i] != b.Values[i] {
			return a.Values[i] < b.Values[i]
		}
	}
	return a.Key < b.Key
}

type dispatchEntry struct {
	rec  *PointRecord
	dist float64
}

// dispatchHeap orders entries by round, then distance to the nearest done
// point, then coordinate order.
type dispatchHeap []dispatchEntry

func (h dispatchHeap) Len() int { return len(h) }
func (h dispatchHeap) Less(i, j int) bool {
	a, b := h[i], h[j]
	if a.rec.Round != b.rec.Round {
		return a.rec.Round < b.rec.Round
	}
	if a.dist != b.dist {
		return a.dist < b.dist
	}
	return queueLess(a.rec, b.rec)
}
func (h dispatchHeap) Swap(i, j int) { h[i], h[j] = h[j], h[i] }
func (h *dispatchHeap) Push(x any)   { *h = append(*h, x.(dispatchEntry)) }
func (h *dispatchHeap) Pop() any {
	old := *h
	e := old[len(old)-1]
	*h = old[:len(old)-1]
	return e
}
