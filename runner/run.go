package runner

import (
	"context"
	"errors"
	"fmt"
	"time"

	"wellscan/planner"
)

// Runner runs one scan. Its fields are the settings: fill them, then
// call Run. Run keeps the state of the run in a value of its own
// (scanRun, state.go) and never changes the Runner.
type Runner struct {
	Spec    *planner.Spec
	Dir     string
	Store   *Store
	Backend Backend
	Queue   Queue
	// OnEvent receives every event, from Run's goroutine; nil: none.
	OnEvent func(Event)
	// Now is the clock; nil: time.Now.
	Now func() time.Time
	// SnapshotEvery is how often status.json is rewritten while points
	// run; 0: every 2 s.
	SnapshotEvery time.Duration
	// FlushEvery is the shortest interval between store transactions
	// while points stream in; 0: 20 ms.
	FlushEvery time.Duration
	// CPUs to share between concurrent points; 0: runtime.NumCPU().
	CPUs int
	// Detach makes Run return as soon as every planned point of the
	// current round has been handed to the queue, instead of waiting for
	// them: a [Batch] queue returns them as LeftRunning
	// ([BatchOptions.Detach]), the store keeps them submitted, and a later
	// Run picks up their results and goes on with refinement. Run then
	// reports Summary.Detached. A [Pool] computes the points it was handed
	// before Run returns.
	Detach bool
}

// Summary is the outcome of Run.
type Summary struct {
	Rounds   int
	Counts   map[State]int
	Status   planner.RefineStatus
	Reason   string
	Extrema  []planner.Extremum
	Failed   []PointRecord
	Computed int // points computed by this run
	Reused   int // results taken from result files left by an earlier run
	// Warnings are the scan's warnings at the end of the run, most
	// serious first ([ScanWarnings]), as `status` shows them.
	Warnings []Warning
	// Earlier counts the points that were already done in the store when
	// this run started (finished by earlier runs); with Reused, what this
	// run did not compute itself.
	Earlier int
	Elapsed time.Duration
	// Detached is true when Run returned with points left running on the
	// queue (Runner.Detach); Status then describes the last finished round.
	Detached bool
	// QueueNote, after an interrupted run on a [Batch] queue, says what
	// the run left with the batch system ([Batch.DetachNote]); "" otherwise.
	QueueNote string
	// Points are every point's record at the end of the run (internal
	// units), so that the closing analysis reads nothing again.
	Points []PointRecord
}

// errDetach ends a round early in detached mode (Runner.Detach).
var errDetach = errors.New("runner: detached")

// ErrPointsFailed is returned (wrapped) by Run when the scan finished but
// some points failed for good.
var ErrPointsFailed = errors.New("runner: some points failed")

// Run drives the scan to its end: it reconciles the store with the
// result files on disk, then repeats rounds (dispatch every planned point,
// wait, ingest, refine) until refinement adds nothing. On cancellation it
// abandons the points in flight (they return to planned without using an
// attempt), writes the store and status.json, and returns an error
// wrapping ctx.Err().
func (r *Runner) Run(ctx context.Context) (Summary, error) {
	s, err := newScanRun(*r)
	if err != nil {
		return Summary{}, err
	}
	defer s.home.close()
	if err := s.reconcile(); err != nil {
		return Summary{}, err
	}
	return s.loop(ctx)
}

// loop is the round loop: it starts the queue, runs rounds until
// refinement adds nothing, a detached round has been handed over, or the
// run is interrupted, and stops the queue.
func (r *scanRun) loop(ctx context.Context) (Summary, error) {
	q, err := r.startQueue(ctx)
	if err != nil {
		return Summary{}, err
	}
	for {
		err := r.runRound(ctx, q)
		if errors.Is(err, errDetach) {
			return r.detached(r.stopQueue(q))
		}
		if err != nil {
			return r.interrupted(err, r.stopQueue(q))
		}
		if r.checkJumps() > 0 {
			continue // recompute the rejected points before refining
		}
		if !r.refine() {
			break
		}
		if err := r.flush(); err != nil {
			return r.summary(), err
		}
		r.warnOnce("backup", r.Store.Backup(DBFile+".bak"))
	}
	return r.finished(r.stopQueue(q))
}

// refine ends the current round: it records the refinement plan and, when
// the plan asks for more points, plans them as the next round and returns
// true.
func (r *scanRun) refine() bool {
	plan := planner.Refine(r.Spec, r.samples(), r.round)
	r.lastPlan = plan
	rr := r.roundRec(r.round)
	if rr.Finished.IsZero() {
		rr.Finished = r.Now()
	}
	rr.Status, rr.Reason = string(plan.Status), plan.Reason
	r.dirtyR[r.round] = true
	r.emit(Event{Kind: EventRefine, Round: r.round, Message: string(plan.Status) + ": " + plan.Reason})
	if plan.Status != planner.RefineContinue {
		return false
	}
	r.round++
	for _, p := range plan.Points {
		r.plan(p, r.round)
	}
	nr := r.roundRec(r.round)
	nr.Points = len(plan.Points)
	r.emit(Event{Kind: EventRound, Round: r.round, Message: fmt.Sprintf("round %d: %d points", r.round, len(plan.Points))})
	return true
}

// detached ends a run whose round was handed over in detached mode; qe is
// the queue's error.
func (r *scanRun) detached(qe error) (Summary, error) {
	left := r.counts()[Submitted]
	r.emit(Event{Kind: EventDetach, Round: r.round, Message: fmt.Sprintf("detached: %d points left with the %s queue", left, r.Queue.Name())})
	ferr := r.flush()
	r.snapshot("detached")
	sum := r.summary()
	sum.Detached = true
	return sum, errors.Join(qe, ferr)
}

// interrupted ends a run whose round stopped with err (cancellation, or
// the same failure at the first points); qe is the queue's error.
func (r *scanRun) interrupted(err, qe error) (Summary, error) {
	ferr := r.flush()
	if !errors.Is(err, ErrSameFailure) {
		r.emit(Event{Kind: EventInterrupt, Round: r.round, Message: "interrupted; points in flight return to planned"})
	}
	_ = r.flush()
	r.snapshot("interrupted")
	sum := r.summary()
	if b, ok := r.Queue.(Batch); ok {
		sum.QueueNote = b.DetachNote()
	}
	return sum, errors.Join(fmt.Errorf("runner: %w", err), qe, ferr)
}

// finished ends a run whose refinement is over; qe is the queue's error.
// Points that failed for good make it return ErrPointsFailed.
func (r *scanRun) finished(qe error) (Summary, error) {
	r.emit(Event{Kind: EventFinish, Round: r.round, Message: string(r.lastPlan.Status)})
	if err := r.flush(); err != nil {
		return r.summary(), err
	}
	r.warnOnce("backup", r.Store.Backup(DBFile+".bak"))
	r.snapshot("finished")
	_ = r.flush()
	sum := r.summary()
	if qe != nil {
		return sum, qe
	}
	if len(sum.Failed) > 0 {
		return sum, fmt.Errorf("%w: %d of %d", ErrPointsFailed, len(sum.Failed), len(r.recs))
	}
	return sum, nil
}

// runRound dispatches planned points until none is planned or in flight,
// in the order the dispatcher chooses (dispatch.go).
func (r *scanRun) runRound(ctx context.Context, q *queueRun) error {
	queue := newDispatcher(r)
	inflight := 0
	var next *Task
	var nextRec *PointRecord
	tick := time.NewTicker(r.SnapshotEvery)
	defer tick.Stop()
	r.snapshot("running")
	for {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		if err := r.home.check(r.Now(), false); err != nil {
			return err
		}
		for next == nil && queue.len() > 0 {
			rec := queue.next()
			if rec == nil {
				break
			}
			t, err := r.preparedTask(queue, rec, queue.len()+1+inflight)
			if err != nil {
				rec.Attempts++
				rec.State, rec.Class, rec.LastError = Failed, ClassGeometry, err.Error()
				r.touch(rec)
				r.emit(Event{Kind: EventFailed, Key: rec.Key, Round: rec.Round, Message: err.Error()})
				continue
			}
			next, nextRec = &t, rec
		}
		if next == nil && inflight == 0 {
			return r.flush()
		}
		if next == nil && queue.len() == 0 && r.Detach {
			if err := r.flush(); err != nil {
				return err
			}
			return errDetach
		}
		var send chan<- Task
		var nv Task // the send expression is evaluated even when send is nil
		if next != nil {
			send, nv = q.in, *next
		}
		dispatched := func() {
			rec := nextRec
			rec.Attempts++
			rec.State, rec.Started = Running, r.Now()
			r.touch(rec)
			r.emit(Event{Kind: EventSubmitted, Key: rec.Key, Round: rec.Round, Message: r.Queue.Name()})
			r.emit(Event{Kind: EventRunning, Key: rec.Key, Round: rec.Round})
			inflight++
			queue.dispatched(rec)
			next, nextRec = nil, nil
		}
		completed := func(c Completion) {
			inflight--
			if nextRec != nil {
				// Choose again: a nearer neighbour may be done now. The
				// prepared task keeps its geometry.
				queue.putBack(nextRec)
				next, nextRec = nil, nil
			}
			if rec := r.ingest(c); rec != nil {
				queue.finished(rec)
			}
		}
		// Take whatever is ready without blocking; commit once nothing is.
		select {
		case send <- nv:
			dispatched()
			continue
		case c := <-q.out:
			completed(c)
			if err := r.sameFailureStop(c); err != nil {
				return err
			}
			continue
		case msg := <-q.notices:
			r.notice(msg)
			continue
		default:
		}
		// Commit at most every FlushEvery while points stream in: one
		// transaction then holds many transitions, and bbolt's fsync makes
		// them durable together. Nothing is lost by the wait: if this
		// process dies first, the result files the workers wrote (in the
		// page cache, which outlives the process) are taken on resume; if
		// the machine dies, a point not yet committed is computed again.
		var flushC <-chan time.Time
		var ft *time.Timer
		if r.pendingChanges() {
			if wait := r.FlushEvery - r.Now().Sub(r.lastFlush); wait > 0 {
				ft = time.NewTimer(wait)
				flushC = ft.C
			} else if err := r.flush(); err != nil {
				return err
			}
		}
		var err error
		select {
		case <-flushC:
			err = r.flush()
		case send <- nv:
			dispatched()
		case c := <-q.out:
			completed(c)
			err = r.sameFailureStop(c)
		case msg := <-q.notices:
			r.notice(msg)
		case <-tick.C:
			r.snapshotRunning()
		case <-ctx.Done():
			err = ctx.Err()
		}
		if ft != nil {
			ft.Stop()
		}
		if err != nil {
			return err
		}
	}
}
