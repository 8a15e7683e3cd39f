package runner

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sort"
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

// Runner runs one scan. Fill the fields, then call Run once.
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
	// them: a queue whose tasks outlive this process (a batch scheduler)
	// returns them as LeftRunning, the store keeps them submitted, and a
	// later Run picks up their results and goes on with refinement. Run
	// then reports Summary.Detached.
	Detach bool

	fp        string
	lastFlush time.Time
	recs      map[string]*PointRecord
	dirty     map[string]bool
	rounds    map[int]*RoundRecord
	dirtyR    map[int]bool
	events    []Event
	idx       *pointIndex // look-ups by coordinate values; built on first use
	tally     map[State]int
	snapNext  time.Time        // wall clock: no running snapshot before this (tally.go)
	tallied   map[string]State // each point's state as counted in tally
	pointTime time.Duration    // summed compute time of the points computed by this run
	start     time.Time
	computed  int
	reused    int
	earlier   int // done in the store when Run started
	round     int
	lastPlan  planner.RefinePlan
	host      string // this machine, for result files
	suffix    string // temporary-file suffix of this process
	warned    map[string]bool
	firsts    []Result  // the first completions of this run, while none is done (sameFailureStop)
	home      *scanHome // the scan directory as opened at the start (moved.go)
	firstsOff bool
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
	if r.Now == nil {
		r.Now = time.Now
	}
	if r.SnapshotEvery == 0 {
		r.SnapshotEvery = 2 * time.Second
	}
	if r.FlushEvery == 0 {
		r.FlushEvery = 20 * time.Millisecond
	}
	if r.CPUs == 0 {
		r.CPUs = runtime.NumCPU()
	}
	r.start = r.Now()
	// Every path handed to a backend (Task.Dir, guess files) is absolute,
	// so what a backend returns relative to the working directory cannot
	// be mistaken for a path relative to the point directory; paths stored
	// in the store and result files stay relative to the scan directory.
	if abs, err := filepath.Abs(r.Dir); err == nil {
		r.Dir = abs
	} else {
		return Summary{}, fmt.Errorf("runner: scan directory %s: %w", r.Dir, err)
	}
	r.home = watchHome(r.Dir)
	defer r.home.close()
	r.host, _ = os.Hostname()
	r.suffix = tmpSuffix()
	fp, _ := json.Marshal(r.Spec.Fingerprint())
	r.fp = string(fp)
	r.dirty, r.dirtyR = map[string]bool{}, map[int]bool{}
	if err := r.load(); err != nil {
		return Summary{}, err
	}
	if err := r.reconcile(); err != nil {
		return Summary{}, err
	}

	in := make(chan Task)
	// Unbuffered: a worker cannot take a new task before its completion is
	// ingested, so every task is built knowing every finished point (the
	// continuation guess picks the nearest done neighbour).
	out := make(chan Completion)
	qerr := make(chan error, 1)
	go func() { qerr <- r.Queue.Run(r.home.context(ctx), r.work, in, out) }()
	stopQueue := func() error {
		close(in)
		for {
			select {
			case c := <-out:
				r.ingest(c)
			case err := <-qerr:
				for {
					select {
					case c := <-out:
						r.ingest(c)
					default:
						return err
					}
				}
			}
		}
	}

	for {
		err := r.runRound(ctx, in, out)
		if errors.Is(err, errDetach) {
			qe := stopQueue()
			left := r.counts()[Submitted]
			r.emit(Event{Kind: "detach", Round: r.round, Message: fmt.Sprintf("detached: %d points left with the %s queue", left, r.Queue.Name())})
			ferr := r.flush()
			r.snapshot("detached")
			sum := r.summary()
			sum.Detached = true
			return sum, errors.Join(qe, ferr)
		}
		if err != nil {
			qe := stopQueue()
			ferr := r.flush()
			if !errors.Is(err, ErrSameFailure) {
				r.emit(Event{Kind: "interrupt", Round: r.round, Message: "interrupted; points in flight return to planned"})
			}
			_ = r.flush()
			r.snapshot("interrupted")
			return r.summary(), errors.Join(fmt.Errorf("runner: %w", err), qe, ferr)
		}
		if r.checkJumps() > 0 {
			continue // recompute the rejected points before refining
		}
		plan := planner.Refine(r.Spec, r.samples(), r.round)
		r.lastPlan = plan
		rr := r.roundRec(r.round)
		if rr.Finished.IsZero() {
			rr.Finished = r.Now()
		}
		rr.Status, rr.Reason = string(plan.Status), plan.Reason
		r.dirtyR[r.round] = true
		r.emit(Event{Kind: "refine", Round: r.round, Message: string(plan.Status) + ": " + plan.Reason})
		if plan.Status != planner.RefineContinue {
			break
		}
		r.round++
		for _, p := range plan.Points {
			r.plan(p, r.round)
		}
		nr := r.roundRec(r.round)
		nr.Points = len(plan.Points)
		r.emit(Event{Kind: "round", Round: r.round, Message: fmt.Sprintf("round %d: %d points", r.round, len(plan.Points))})
		if err := r.flush(); err != nil {
			return r.summary(), err
		}
		r.warnOnce("backup", r.Store.Backup(DBFile+".bak"))
	}
	qe := stopQueue()
	r.emit(Event{Kind: "finish", Round: r.round, Message: string(r.lastPlan.Status)})
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

func (r *Runner) load() error {
	recs, err := r.Store.Points()
	if err != nil {
		return err
	}
	r.recs = map[string]*PointRecord{}
	for i := range recs {
		r.recs[recs[i].Key] = &recs[i]
		r.round = max(r.round, recs[i].Round)
		if recs[i].State == Done {
			r.earlier++
		}
	}
	if renamed, removed, evs := canonicalKeys(r.Spec, r.recs); len(removed) > 0 {
		put := make([]PointRecord, len(renamed))
		for i, rec := range renamed {
			put[i] = *rec
		}
		for i := range evs {
			evs[i].Time = r.Now()
		}
		if err := r.Store.Rekey(put, removed, evs); err != nil {
			return err
		}
		if r.OnEvent != nil {
			pr := r.progress()
			for _, e := range evs {
				e.Progress = &pr
				r.OnEvent(e)
			}
		}
	}
	rounds, err := r.Store.Rounds()
	if err != nil {
		return err
	}
	r.rounds = map[int]*RoundRecord{}
	for i := range rounds {
		r.rounds[rounds[i].Round] = &rounds[i]
	}
	return nil
}

// reconcile brings the store in line with the files on disk after a
// crash, and plans round 1 (or points a grown grid added).
func (r *Runner) reconcile() error {
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
		if res, ok := ReadResult(r.Dir, k, r.fp); ok && (res.Status == "done" || (inFlight && res.Attempt == rec.Attempts)) {
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
			r.emit(Event{Kind: string(Planned), Key: k, Round: rec.Round, Message: msg})
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
		r.emit(Event{Kind: "round", Round: r.round, Message: fmt.Sprintf("round %d: %d points from the grid", r.round, added)})
	}
	if resumed > 0 {
		r.emit(Event{Kind: "resume", Round: r.round, Message: fmt.Sprintf("resumed: %d points reconciled with their result files", resumed)})
	}
	return r.flush()
}

// restoreResult rewrites the result file of a done point when it is
// missing or unreadable. Points computed in this process are recorded by
// the store; their result files are written without fsync and a machine
// crash can lose them. They are a copy for people and for compute nodes
// (which read their neighbours' result files for continuation guesses),
// so they are rebuilt from the record.
func (r *Runner) restoreResult(rec *PointRecord) {
	if rec.Energy == nil {
		return
	}
	msg := "result file was missing or unreadable; rewritten from the store"
	if res, ok := ReadResult(r.Dir, rec.Key, r.fp); ok {
		if res.Status == "done" && res.Energy == *rec.Energy {
			return
		}
		msg = fmt.Sprintf("%s says %s E = %.10f hartree but the store (checksum intact) says E = %.10f hartree; kept the store's copy and rewrote the file", ResultFile, res.Status, res.Energy, *rec.Energy)
	}
	res := Result{Key: rec.Key, Fingerprint: r.fp, Attempt: rec.Attempts, Status: "done", Energy: *rec.Energy,
		Converged: rec.Converged, Iterations: rec.Iterations, SSquared: rec.SSquared, Extra: rec.Extra,
		Backend: rec.Backend, Host: r.host, PID: os.Getpid(), Started: rec.Started, Finished: rec.Finished}
	if rec.Orbitals != "" {
		if rel, err := filepath.Rel(PointDir(r.Dir, rec.Key), filepath.Join(r.Dir, filepath.FromSlash(rec.Orbitals))); err == nil {
			res.Orbitals = rel
		}
	}

	if err := writeResult(r.Dir, res, r.suffix, false); err != nil {
		return // a convenience copy; the store has the result
	}
	r.emit(Event{Kind: "resume", Key: rec.Key, Round: rec.Round, Message: msg})
}

func (r *Runner) keys() []string {
	ks := make([]string, 0, len(r.recs))
	for k := range r.recs {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

func (r *Runner) roundRec(n int) *RoundRecord {
	rr, ok := r.rounds[n]
	if !ok {
		rr = &RoundRecord{Round: n, Started: r.Now()}
		r.rounds[n] = rr
	}
	r.dirtyR[n] = true
	return rr
}

func (r *Runner) plan(p planner.Point, round int) {
	rec := &PointRecord{Key: p.Key, Values: p.Values, Round: round, State: Planned, Planned: r.Now(), Backend: r.Backend.Name()}
	r.recs[p.Key] = rec
	r.indexPoint(rec)
	r.touch(rec)
	r.emit(Event{Kind: string(Planned), Key: p.Key, Round: round})
}

func (r *Runner) touch(rec *PointRecord) { r.dirty[rec.Key] = true }

func (r *Runner) emit(e Event) {
	e.Time = r.Now()
	r.events = append(r.events, e)
}

// flush commits every pending change in one transaction, then tells the
// observer.
func (r *Runner) flush() error {
	if len(r.dirty) == 0 && len(r.dirtyR) == 0 && len(r.events) == 0 {
		return nil
	}
	recs := make([]PointRecord, 0, len(r.dirty))
	for k := range r.dirty {
		recs = append(recs, *r.recs[k])
	}
	rounds := make([]RoundRecord, 0, len(r.dirtyR))
	for n := range r.dirtyR {
		rounds = append(rounds, *r.rounds[n])
	}
	evs := r.events
	if err := r.Store.Commit(recs, rounds, evs); err != nil {
		return err
	}
	r.lastFlush = r.Now()
	r.retally()
	clear(r.dirty)
	clear(r.dirtyR)
	r.events = nil
	if r.OnEvent != nil {
		pr := r.progress()
		for _, e := range evs {
			e.Progress = &pr
			r.OnEvent(e)
		}
	}
	return nil
}

func (r *Runner) pendingChanges() bool {
	return len(r.dirty) > 0 || len(r.dirtyR) > 0 || len(r.events) > 0
}

func (r *Runner) counts() map[State]int {
	c := map[State]int{}
	for _, s := range States {
		c[s] = 0
	}
	for _, rec := range r.recs {
		c[rec.State]++
	}
	return c
}

func (r *Runner) progress() Progress {
	c := r.tallyCounts()
	p := Progress{Round: r.round, Counts: c, Total: len(r.recs), Elapsed: r.Now().Sub(r.start)}
	p.ETA = r.eta(c[Planned] + c[Submitted] + c[Running])
	return p
}

// runRound dispatches planned points until none is planned or in flight,
// in the order the dispatcher chooses (dispatch.go).
func (r *Runner) runRound(ctx context.Context, in chan<- Task, out <-chan Completion) error {
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
				rec.State, rec.Class, rec.LastError = Failed, "geometry", err.Error()
				r.touch(rec)
				r.emit(Event{Kind: string(Failed), Key: rec.Key, Round: rec.Round, Message: err.Error()})
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
			send, nv = in, *next
		}
		dispatched := func() {
			rec := nextRec
			rec.Attempts++
			rec.State, rec.Started = Running, r.Now()
			r.touch(rec)
			r.emit(Event{Kind: string(Submitted), Key: rec.Key, Round: rec.Round, Message: r.Queue.Name()})
			r.emit(Event{Kind: string(Running), Key: rec.Key, Round: rec.Round})
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
		case c := <-out:
			completed(c)
			if err := r.sameFailureStop(c); err != nil {
				return err
			}
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
		case c := <-out:
			completed(c)
			err = r.sameFailureStop(c)
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

// task builds the Task for rec: geometry, directory, continuation guess
// and a thread share.
func (r *Runner) task(rec *PointRecord, active int) (Task, error) {
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
func (r *Runner) preparedTask(d *dispatcher, rec *PointRecord, active int) (Task, error) {
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

func (r *Runner) setThreads(t *Task, active int) {
	t.Threads = r.Spec.Queue.Threads
	if t.Threads == 0 {
		t.Threads = max(1, r.CPUs/max(1, min(r.Queue.Slots(), active)))
	}
}

// work is the Worker: it runs one task in this process and writes its
// result file. A point whose result file already says done is not
// computed again. The result reaches the store through this process, whose
// commit makes it durable, so the result file is written atomically but
// without fsync: two fewer disk flushes per point.
func (r *Runner) work(ctx context.Context, t Task) Completion {
	return pointComputer{spec: r.Spec, dir: r.Dir, fp: r.fp, backend: r.Backend, now: r.Now, host: r.host, suffix: r.suffix}.work(ctx, t)
}

// ComputePoint computes task t of the scan in dir with backend b, exactly
// as a run's own workers do, and writes points/<key>/result.json (temporary
// file, fsync, rename). A point whose result file already says done is not
// computed again (Reused is set). It never opens the store, so the
// compute-node side of a batch queue can call it. On cancellation it
// returns a Completion with Interrupted set and writes nothing.
func ComputePoint(ctx context.Context, spec *planner.Spec, dir string, b Backend, t Task) Completion {
	if abs, err := filepath.Abs(dir); err == nil {
		dir = abs
	}
	if abs, err := filepath.Abs(t.Dir); err == nil {
		t.Dir = abs
	}
	host, _ := os.Hostname()
	return pointComputer{spec: spec, dir: dir, fp: SpecFingerprint(spec), backend: b, now: time.Now,
		host: host, suffix: tmpSuffix(), durable: true}.work(ctx, t)
}

// SpecFingerprint is the fingerprint text result files carry for spec
// (ReadResult's fingerprint argument).
func SpecFingerprint(spec *planner.Spec) string {
	fp, _ := json.Marshal(spec.Fingerprint())
	return string(fp)
}

// pointComputer runs one point in process and writes its result file.
type pointComputer struct {
	spec         *planner.Spec
	dir, fp      string
	backend      Backend
	now          func() time.Time
	host, suffix string
	// durable: fsync the result file (it is the only record of the work,
	// as on a compute node).
	durable bool
}

func (r pointComputer) work(ctx context.Context, t Task) Completion {
	if res, ok := ReadResult(r.dir, t.Key, r.fp); ok && res.Status == "done" {
		return Completion{Task: t, Result: res, Reused: true}
	}
	if err := MkdirScan(r.dir, filepath.Join(PointsDir, t.Key)); err != nil {
		return Completion{Task: t, Result: r.failure(t, r.now(), "io", err)}
	}
	cctx := ctx
	if to := r.spec.Queue.Timeout.Duration; to > 0 {
		var cancel context.CancelFunc
		cctx, cancel = context.WithTimeout(ctx, to)
		defer cancel()
	}
	start := r.now()
	out, err := r.computeSafely(cctx, t)
	if ctx.Err() != nil {
		return Completion{Task: t, Interrupted: true}
	}
	var res Result
	switch {
	case err != nil && errors.Is(cctx.Err(), context.DeadlineExceeded):
		res = r.failure(t, start, "timeout", fmt.Errorf("no result within %s: %w", r.spec.Queue.Timeout.Duration, err))
	case err != nil:
		res = r.failure(t, start, "error", err)
	default:
		res = r.resultOf(t, start, out)
	}
	if err := writeResult(r.dir, res, r.suffix, r.durable); err != nil {
		return Completion{Task: t, Result: r.failure(t, start, "io", err)}
	}
	return Completion{Task: t, Result: res}
}

// computeSafely turns a backend panic into an error for that point; a
// runtime error is a bug and panics on.
func (r pointComputer) computeSafely(ctx context.Context, t Task) (out Outcome, err error) {
	defer func() {
		if p := recover(); p != nil {
			if re, ok := p.(runtime.Error); ok {
				panic(re)
			}
			err = fmt.Errorf("runner: backend %s panicked: %v", r.backend.Name(), p)
		}
	}()
	return r.backend.Compute(ctx, t)
}

func (r pointComputer) base(t Task, start time.Time) Result {
	return Result{Key: t.Key, Fingerprint: r.fp, Attempt: t.Attempt, Backend: r.backend.Name(),
		Host: r.host, PID: os.Getpid(), Started: start, Finished: r.now()}
}

func (r pointComputer) failure(t Task, start time.Time, class string, err error) Result {
	res := r.base(t, start)
	res.Status, res.Class, res.Error = "failed", class, err.Error()
	return res
}

func (r pointComputer) resultOf(t Task, start time.Time, o Outcome) Result {
	res := r.base(t, start)
	res.Energy, res.Converged, res.Iterations, res.SSquared, res.Extra = o.Energy, o.Converged, o.Iterations, o.SSquared, o.Extra
	if o.OrbitalsPath != "" {
		res.Orbitals = orbitalsRel(t.Dir, o.OrbitalsPath)
	}
	if o.Converged && !math.IsNaN(o.Energy) && !math.IsInf(o.Energy, 0) {
		res.Status = "done"
	} else {
		res.Status, res.Class = "failed", o.Class
		if res.Class == "" {
			res.Class = "not-converged"
		}
		res.Error = fmt.Sprintf("backend %s: %s", r.backend.Name(), res.Class)
		if o.Detail != "" { // the class is in res.Class: not twice in the text
			res.Error = fmt.Sprintf("backend %s: %s", r.backend.Name(), o.Detail)
		}
		if o.Permanent {
			res.Permanent = true
		}
	}
	return res
}

// orbitalsRel returns the orbitals file p a backend reported for the
// task in taskDir as a path relative to taskDir (what result files hold).
// The backend contract allows an absolute path or one relative to
// Task.Dir; a relative path is taken as it is.
func orbitalsRel(taskDir, p string) string {
	if !filepath.IsAbs(p) {
		return filepath.Clean(p)
	}
	if abs, err := filepath.Abs(taskDir); err == nil {
		if rel, err := filepath.Rel(abs, p); err == nil {
			return rel
		}
	}
	return p
}

// storedOrbitals turns the orbitals path of key's result file (relative
// to the point directory; an absolute one from an older writer is
// accepted) into the store's form: slash-separated, relative to the scan
// directory.
func (r *Runner) storedOrbitals(key, orb string) string {
	p := filepath.Join(PointsDir, key, orb)
	if filepath.IsAbs(orb) {
		if rel, err := filepath.Rel(r.Dir, orb); err == nil {
			p = rel
		}
	}
	return filepath.ToSlash(p)
}

// retriable says whether a failure class may succeed on another try. A
// calculation that ran and did not converge, or a geometry that cannot be
// built, will fail the same way again.
func retriable(class string) bool {
	switch class {
	case "not-converged", "scf-not-converged", "geometry":
		return false
	}
	return true
}

// ingest applies a completion to its record; it returns the record.
func (r *Runner) ingest(c Completion) *PointRecord {
	c = r.home.excuse(c, r.Now())
	rec := r.recs[c.Task.Key]
	if rec == nil {
		return nil
	}
	if c.LeftRunning {
		rec.State = Submitted
		r.touch(rec)
		r.emit(Event{Kind: string(Submitted), Key: rec.Key, Round: rec.Round, Message: "left running with the " + r.Queue.Name() + " queue"})
		return rec
	}
	if c.Interrupted {
		rec.State = Planned
		rec.Attempts = max(0, rec.Attempts-1)
		r.touch(rec)
		r.emit(Event{Kind: string(Planned), Key: rec.Key, Round: rec.Round, Message: "interrupted"})
		return rec
	}
	switch {
	case c.Reused:
		r.reused++
	case c.Result.Status == "done":
		r.computed++
		r.measure(c.Result)
	}
	r.apply(rec, c.Result)
	return rec
}

// apply records result res on rec.
func (r *Runner) apply(rec *PointRecord, res Result) {
	rec.Finished = res.Finished
	if rec.Attempts < res.Attempt {
		rec.Attempts = res.Attempt
	}
	if res.Status == "done" {
		e := res.Energy
		rec.State, rec.Energy, rec.Converged, rec.Iterations, rec.SSquared, rec.Extra = Done, &e, true, res.Iterations, res.SSquared, res.Extra
		rec.Class, rec.LastError = "", ""
		rec.Seconds = res.Finished.Sub(res.Started).Seconds()
		if res.Orbitals != "" {
			rec.Orbitals = r.storedOrbitals(rec.Key, res.Orbitals)
		}
		r.indexPoint(rec)
		r.touch(rec)
		r.emit(Event{Kind: string(Done), Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("%.10f hartree", e)})
		return
	}
	rec.Class, rec.LastError = res.Class, res.Error
	rec.Permanent = res.Permanent || !retriable(res.Class)
	if !rec.Permanent && rec.Attempts < r.Spec.Queue.Attempts {
		rec.State = Planned
		r.touch(rec)
		r.emit(Event{Kind: "retry", Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("attempt %d of %d failed (%s): %s", rec.Attempts, r.Spec.Queue.Attempts, res.Class, res.Error)})
		return
	}
	rec.State = Failed
	r.touch(rec)
	r.emit(Event{Kind: string(Failed), Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("%s after %d attempts: %s", res.Class, rec.Attempts, res.Error)})
}

// checkJumps applies the energy-jump rule ([FindJumps], threshold
// [checks] max_jump_hartree) to the done points. A point rejected for the
// first time goes back to planned for one more try from a fresh guess,
// whatever its attempts; a point rejected again fails for good. Either
// way its result file is moved aside (kept as evidence), so neither a
// worker nor a resumed run takes the rejected energy back. It returns how
// many points were planned again.
func (r *Runner) checkJumps() int {
	limit := r.Spec.MaxJump()
	if !(limit > 0) {
		return 0
	}
	recs := make([]PointRecord, 0, len(r.recs))
	for _, k := range r.keys() {
		recs = append(recs, *r.recs[k])
	}
	replanned := 0
	var periods []float64
	for _, c := range r.Spec.Coordinates() {
		p := 0.0
		if c.Periodic() && c.FullPeriod {
			p = c.Period
		}
		periods = append(periods, p)
	}
	for _, j := range FindJumpsPeriodic(recs, limit, periods) {
		rec := r.recs[j.Key]
		rec.Jumps++
		msg := jumpMessage(r.Spec, rec, j, limit)
		res := filepath.Join(PointsDir, rec.Key, ResultFile)
		aside := filepath.Join(PointsDir, rec.Key, fmt.Sprintf("result.%s-%d.json", ClassEnergyJump, rec.Jumps))
		if err := renameInScan(r.Dir, res, aside); err != nil && !errors.Is(err, os.ErrNotExist) {
			msg += fmt.Sprintf(" (could not move %s aside: %v)", res, err)
		}
		rec.Energy, rec.Converged, rec.Class = nil, false, ClassEnergyJump
		r.touch(rec)
		if rec.Jumps == 1 {
			rec.State, rec.LastError = Planned, msg
			r.emit(Event{Kind: "retry", Key: rec.Key, Round: rec.Round, Message: msg + "; computing it once more from a fresh guess"})
			replanned++
			continue
		}
		rec.State, rec.Permanent = Failed, true
		rec.LastError = msg + "; it jumped again when recomputed from a fresh guess, so it stays failed"
		r.emit(Event{Kind: string(Failed), Key: rec.Key, Round: rec.Round, Message: rec.LastError})
	}
	return replanned
}

// jumpMessage is the error text of an energy-jump failure: the point, its
// coordinates, its energy, both neighbours' energies and the threshold,
// all labelled.
func jumpMessage(spec *planner.Spec, rec *PointRecord, j Jump, limit float64) string {
	where := ""
	if cs := spec.Coordinates(); j.Coordinate < len(cs) && len(cs) > 1 {
		where = " along " + cs[j.Coordinate].Name
	}
	dir := "above"
	if j.Energy < j.PrevEnergy {
		dir = "below"
	}
	return fmt.Sprintf("energy jump at %s (%s): E = %.10f hartree is %s both neighbours%s, %s with E = %.10f hartree (%+.6f) and %s with E = %.10f hartree (%+.6f), and %.6f hartree off the curve through its neighbours; [checks] max_jump_hartree = %g hartree",
		rec.Key, spec.Describe(rec.Values), j.Energy, dir, where, j.Prev, j.PrevEnergy, j.Energy-j.PrevEnergy, j.Next, j.NextEnergy, j.Energy-j.NextEnergy, math.Abs(j.Energy-j.Curve), limit)
}

// samples turns records into refinement input.
func (r *Runner) samples() []planner.Sample {
	return Samples(r.recs)
}

// Samples converts point records to refinement samples (ordered by key).
func Samples(recs map[string]*PointRecord) []planner.Sample {
	ks := make([]string, 0, len(recs))
	for k := range recs {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	var out []planner.Sample
	for _, k := range ks {
		rec := recs[k]
		s := planner.Sample{Key: k, Values: rec.Values, Round: rec.Round, Energy: math.NaN()}
		switch rec.State {
		case Done:
			s.Energy = *rec.Energy
		case Failed, Dropped:
			// A dropped point is a known key the refinement must not
			// propose again; like a failed one it brackets the curve.
			s.Failed = true
		}
		out = append(out, s)
	}
	return out
}

func (r *Runner) summary() Summary {
	s := Summary{Rounds: r.round, Counts: r.counts(), Status: r.lastPlan.Status, Reason: r.lastPlan.Reason,
		Extrema: r.lastPlan.Extrema, Computed: r.computed, Reused: r.reused, Earlier: r.earlier, Elapsed: r.Now().Sub(r.start)}
	recs := make([]PointRecord, 0, len(r.recs))
	for _, k := range r.keys() {
		recs = append(recs, *r.recs[k])
		if r.recs[k].State == Failed {
			s.Failed = append(s.Failed, *r.recs[k])
		}
	}
	rounds := make([]RoundRecord, 0, len(r.rounds))
	for _, rr := range r.rounds {
		rounds = append(rounds, *rr)
	}
	s.Warnings = ScanWarnings(recs, rounds)
	s.Points = recs
	return s
}

func (r *Runner) snapshot(state string) {
	recs := make([]PointRecord, 0, len(r.recs))
	for _, k := range r.keys() {
		recs = append(recs, *r.recs[k])
	}
	rounds := make([]RoundRecord, 0, len(r.rounds))
	for _, rr := range r.rounds {
		rounds = append(rounds, *rr)
	}
	snap := BuildSnapshot(r.Spec, recs, rounds, state, r.Now())
	r.warnOnce("snapshot", r.writeSnapshot(snap))
}
