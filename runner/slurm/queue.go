package slurm

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"wellscan/planner"
	"wellscan/runner"
)

// NodeSubcommand is the wellscan subcommand a job script runs on the
// compute node; the script appends --job-dir DIR --task N.
const NodeSubcommand = "node-task"

// JobMetaFile is written into jobs/<token>/ before sbatch runs: the
// submission token, the scan directory and each point's attempt number.
const JobMetaFile = "job.json"

// jobIDFile holds the job id once sbatch has answered.
const jobIDFile = "jobid"

// JobsDir is the directory of a scan that holds one directory per
// submission, named by its token.
const JobsDir = "jobs"

// jobMeta is the content of jobs/<token>/job.json.
type jobMeta struct {
	Token   string `json:"token"`
	ScanDir string `json:"scan_dir"`
	// Fingerprint is the spec fingerprint at submission; a node refuses to
	// compute when scan.toml changed the energy-defining settings since.
	Fingerprint string `json:"fingerprint"`
	// Attempts maps point key to the attempt number the node writes into
	// its result file.
	Attempts map[string]int `json:"attempts"`
	// Cold lists points the node computes without a continuation guess
	// (recomputations after an energy jump).
	Cold []string `json:"cold,omitempty"`
}

// QueueStats counts what a Queue did; read it after Run returns (or at
// any time: it is guarded).
type QueueStats struct {
	Submissions  int // sbatch calls that created a job
	Adopted      int // array tasks taken over from an earlier run
	Points       int // points submitted (not counting adopted or reused ones)
	Cycles       int // poll cycles
	Commands     int // scheduler commands run by poll cycles
	MaxPerCycle  int // most commands in one cycle
	InfraRetries int // points sent back without using an attempt
}

// Queue runs a scan's points as Slurm job arrays: a [runner.Batch]. It
// never opens the scan's store: the result files decide.
//
// Each batch of tasks the round loop hands over (tasks arriving within
// Gather of each other) becomes one array (split at MaxArraySize) whose
// tasks each compute packSize points in turn (config.PointsPerTask when
// set, else sized from the point times measured so far). The queue polls
// with one batched status command per cycle, hands every point whose
// result file appears back as a Completion, and turns tasks that ended
// without a result into failures by class:
//
//   - NODE_FAIL, BOOT_FAIL, PREEMPTED, lost (vanished, or COMPLETED without
//     a result, after the grace period): the point goes back to planned
//     without using an attempt (a Completion with Interrupted set), at most
//     retryPolicy.Infra times per point and run; after that a failure of
//     class "lost" that uses an attempt.
//   - TIMEOUT / OUT_OF_MEMORY: with escalation budget left, back to planned
//     without using an attempt, and the point's later tasks ask for more
//     time / memory; otherwise a permanent failure.
//   - FAILED, DEADLINE: a failure of class "task-failed" (uses an attempt).
//   - CANCELLED: a permanent failure of class "cancelled" (not retried).
//
// On cancellation it stops polling, leaves the jobs running, returns the
// points already submitted as left running ([runner.Completion.LeftRunning])
// and those not yet submitted as interrupted; with
// [runner.BatchOptions.Detach] it submits what it gathered and returns
// every point as left running as soon as the round loop has handed over
// its tasks. When the status command starts failing, and
// when it answers again, it tells [runner.BatchOptions.Notice]; the points
// are judged by their result files meanwhile. A later Run adopts the live tasks
// of earlier submissions (found by their token in one status listing)
// instead of submitting their points again.
type Queue struct {
	// Client runs the scheduler's commands; a test may give it a
	// recording Runner.
	Client *Client
	// Binary is the wellscan executable for the job scripts (absolute).
	Binary string

	spec   *planner.Spec
	config config
	// policy is the poll schedule; grace the lost grace period.
	policy pollPolicy
	grace  time.Duration
	retry  retryPolicy
	// gather is how long the queue waits for more tasks before it submits
	// a batch; 0 means defaultGather.
	gather time.Duration
	// now is the clock; nil means time.Now.
	now func() time.Time

	mu      sync.Mutex
	stats   QueueStats
	jobName string
}

var _ runner.Batch = (*Queue)(nil)

// defaultGather is the default Queue.gather: the round loop hands over a
// round's points within microseconds of each other, so 100 ms gathers a
// whole round into one submission while adding little to its latency.
const defaultGather = 100 * time.Millisecond

// NewQueue builds the queue of spec: [queue.slurm] decoded, the Slurm
// profile, scheduler commands run with os/exec.
func NewQueue(spec *planner.Spec) (*Queue, error) {
	cfg, err := decodeConfig(spec)
	if err != nil {
		return nil, err
	}
	bin := cfg.Binary
	if bin == "" {
		exe, err := os.Executable()
		if err != nil {
			return nil, fmt.Errorf("slurm: find the wellscan binary for the job scripts: %w (set queue.slurm.binary)", err)
		}
		bin, err = filepath.Abs(exe)
		if err != nil {
			return nil, fmt.Errorf("slurm: %w", err)
		}
	}
	client, err := NewClient(cfg.SchedulerProfile(), ExecRunner{})
	if err != nil {
		return nil, err
	}
	retry := defaultRetryPolicy()
	return &Queue{spec: spec, config: cfg, Client: client, Binary: bin, policy: cfg.Policy(), grace: cfg.Grace(), retry: retry}, nil
}

// Name implements runner.Queue: the scheduler profile's name ("slurm").
func (q *Queue) Name() string {
	if q.Client != nil {
		return q.Client.Profile().Name
	}
	return "slurm"
}

// Slots implements runner.Queue: the array throttle times the packing
// (the configured one, or the default before anything is measured).
func (q *Queue) Slots() int {
	return q.throttle() * q.pointsPerTask()
}

func (q *Queue) throttle() int {
	if q.config.Throttle > 0 {
		return q.config.Throttle
	}
	return defaultThrottle
}

func (q *Queue) pointsPerTask() int {
	if q.config.PointsPerTask > 0 {
		return q.config.PointsPerTask
	}
	return defaultPointsPerTask
}

// Stats returns a copy of the counters.
func (q *Queue) Stats() QueueStats {
	q.mu.Lock()
	defer q.mu.Unlock()
	return q.stats
}

func (q *Queue) count(f func(*QueueStats)) {
	q.mu.Lock()
	f(&q.stats)
	q.mu.Unlock()
}

// inflight is one point handed to Slurm.
type inflight struct {
	task runner.Task
	ref  taskRef
}

// keyState is what one Run remembers per point across its tries.
type keyState struct {
	budget budget
	res    Resources // escalated resources; zero: the config's
}

// run is the state of one Queue.Submit.
type run struct {
	q       *Queue
	opts    runner.BatchOptions
	ctx     context.Context
	out     chan<- runner.Completion
	now     func() time.Time
	scanDir string
	fp      string
	jobName string
	poller  *poller
	maxArr  int

	listed    bool
	failing   int                // poll cycles in a row whose status command failed
	adoptable map[string]taskRef // key → live task of an earlier submission
	// endedEarlier: key → the final state of its latest task, which ended
	// while no run watched it (a detached scan, a killed orchestrator).
	endedEarlier map[string]pointTask
	byRef        map[taskRef][]string
	pending      map[string]*inflight
	ended        map[taskRef]time.Time // when a task was first seen final (or lost)
	keys         map[string]*keyState
	batch        []runner.Task
	seq          int
	policy       pollPolicy
	measured     []time.Duration // compute time of points finished in this run
}

// Submit implements runner.Batch.
func (q *Queue) Submit(ctx context.Context, in <-chan runner.Task, out chan<- runner.Completion, opts runner.BatchOptions) error {
	if q.spec == nil || q.Client == nil || q.Binary == "" {
		return errors.New("slurm: Queue needs Spec, Client and Binary (use NewQueue)")
	}
	if err := q.policy.Validate(); err != nil {
		return err
	}
	now := q.now
	if now == nil {
		now = time.Now
	}
	gather := q.gather
	if gather == 0 {
		gather = defaultGather
	}
	r := &run{q: q, opts: opts, ctx: ctx, out: out, now: now, fp: runner.SpecFingerprint(q.spec),
		adoptable: map[string]taskRef{}, endedEarlier: map[string]pointTask{}, byRef: map[taskRef][]string{}, pending: map[string]*inflight{},
		ended: map[taskRef]time.Time{}, keys: map[string]*keyState{}, maxArr: 1000, policy: q.policy}

	var gatherT, pollT *time.Timer
	var gatherC, pollC <-chan time.Time
	var firstInBatch time.Time
	var wait time.Duration
	armPoll := func(changed bool) {
		if pollT != nil {
			return
		}
		wait = r.policy.NextFor(wait, changed, r.expectedTask())
		pollT = time.NewTimer(wait)
		pollC = pollT.C
	}
	// Result-file looks (look.go): cheap, and what records a point as soon
	// as its file is there; the scheduler polls above find tasks that end
	// without one.
	var lookT *time.Timer
	var lookC <-chan time.Time
	var lookCost time.Duration
	var lookSince time.Time // the last submission, or the first point handed over
	look := q.config.Look()
	armLook := func(first bool) {
		if lookT != nil {
			return
		}
		if first || lookSince.IsZero() {
			lookSince = time.Now()
		}
		wait := look.Next(first, time.Since(lookSince), expectedPoint(r.measured), lookCost)
		lookT = time.NewTimer(wait)
		lookC = lookT.C
	}
	defer func() {
		if gatherT != nil {
			gatherT.Stop()
		}
		if pollT != nil {
			pollT.Stop()
		}
		if lookT != nil {
			lookT.Stop()
		}
	}()
	for {
		if in == nil && len(r.pending) == 0 && len(r.batch) == 0 {
			return nil
		}
		select {
		case t, ok := <-in:
			if !ok {
				in = nil
				if opts.Detach {
					if gatherT != nil {
						gatherT.Stop()
						gatherT, gatherC = nil, nil
					}
					if len(r.batch) > 0 {
						r.submitBatch()
					}
					r.leave()
					return nil
				}
				continue
			}
			if err := r.arrive(t); err != nil {
				// Nothing was submitted for t: it fails (and is retried
				// while attempts last); the run goes on.
				out <- runner.Completion{Task: t, Result: r.failure(t, runner.ClassSubmit, false, err.Error())}
			}
			if len(r.pending) > 0 {
				armPoll(true)
				armLook(true)
			}
			if len(r.batch) == 0 {
				continue
			}
			if len(r.batch) == 1 {
				firstInBatch = now()
			}
			d := gather
			if left := 5*gather - now().Sub(firstInBatch); left < d {
				d = max(left, 0)
			}
			if gatherT != nil {
				gatherT.Stop()
			}
			gatherT = time.NewTimer(d)
			gatherC = gatherT.C
		case <-gatherC:
			gatherT, gatherC = nil, nil
			r.submitBatch()
			if len(r.pending) > 0 {
				if pollT != nil {
					pollT.Stop()
					pollT, pollC = nil, nil
				}
				wait = 0 // first poll after a submit
				armPoll(true)
				if lookT != nil {
					lookT.Stop()
					lookT, lookC = nil, nil
				}
				armLook(true) // first look after a submit
			}
		case <-lookC:
			lookT, lookC = nil, nil
			t0 := time.Now()
			r.harvest()
			lookCost = time.Since(t0)
			if len(r.pending) > 0 {
				armLook(false)
			}
		case <-pollC:
			pollT, pollC = nil, nil
			changed := r.cycle()
			if len(r.pending) > 0 {
				armPoll(changed)
			} else {
				wait = 0
			}
		case <-ctx.Done():
			// Leave the jobs running; points not yet submitted return to
			// planned, submitted ones stay submitted and a later run adopts
			// their task.
			for _, t := range r.batch {
				out <- runner.Completion{Task: t, Interrupted: true}
			}
			r.batch = nil
			r.leave()
			if in != nil {
				for t := range in {
					out <- runner.Completion{Task: t, Interrupted: true}
				}
			}
			return nil
		}
	}
}

// leave hands every point in flight back as LeftRunning (or with its
// result, if it finished meanwhile) and forgets them.
func (r *run) leave() {
	for _, k := range sortedKeys(r.pending) {
		t := r.pending[k].task
		if res, ok := runner.ReadResult(r.scanDir, k, r.fp); ok && res.Status == runner.ResultDone {
			r.out <- runner.Completion{Task: t, Result: res} // finished meanwhile
			continue
		}
		r.out <- runner.Completion{Task: t, LeftRunning: true}
	}
	r.pending = nil
}

func sortedKeys[V any](m map[string]V) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

// arrive takes one task: a point that is already done is reused, one that
// a live task of an earlier submission runs is adopted, the rest wait for
// the next batch.
func (r *run) arrive(t runner.Task) error {
	if r.scanDir == "" {
		dir, err := filepath.Abs(filepath.Dir(filepath.Dir(t.Dir)))
		if err != nil {
			return fmt.Errorf("slurm: scan directory of %s: %w", t.Dir, err)
		}
		name := JobNameFor(dir)
		p, err := newPoller(r.q.Client, name, r.now)
		if err != nil {
			return err
		}
		r.scanDir, r.jobName, r.poller = dir, name, p
		r.q.mu.Lock()
		r.q.jobName = name
		r.q.mu.Unlock()
		if r.q.Client.Profile().Name != "slurm" {
			// No limits query for other schedulers: keep the defaults.
		} else if lim, err := readSlurmLimits(r.ctx, r.q.Client.runner); err == nil {
			r.maxArr = min(1000, max(1, lim.MaxArraySize-1))
			r.policy = r.policy.WithoutAccounting(lim.MinJobAge)
		}
	}
	if res, ok := runner.ReadResult(r.scanDir, t.Key, r.fp); ok && res.Status == runner.ResultDone {
		r.out <- runner.Completion{Task: t, Result: res, Reused: true}
		return nil
	}
	if !r.listed {
		r.listed = true
		r.listLive()
	}
	if ref, ok := r.adoptable[t.Key]; ok {
		delete(r.adoptable, t.Key)
		r.pending[t.Key] = &inflight{task: t, ref: ref}
		if len(r.byRef[ref]) == 0 {
			r.q.count(func(s *QueueStats) { s.Adopted++ })
		}
		r.byRef[ref] = append(r.byRef[ref], t.Key)
		return nil
	}
	// A task of an earlier run may have finished the point since the first
	// look (for example while the listing ran).
	if res, ok := runner.ReadResult(r.scanDir, t.Key, r.fp); ok && res.Status == runner.ResultDone {
		r.out <- runner.Completion{Task: t, Result: res, Reused: true}
		return nil
	}
	if pt, ok := r.endedEarlier[t.Key]; ok {
		// Its task ended without a result while no run watched: decide as
		// if this run had seen it end. A retry goes into this batch (with
		// more time or memory where the class asks for it).
		delete(r.endedEarlier, t.Key)
		st := taskStatus{TaskState: pt.State, Seen: true}
		if c := r.decide(t, pt.Class(), st, pt.Ref); !c.Interrupted {
			r.out <- c
			return nil
		}
	}
	r.batch = append(r.batch, t)
	return nil
}

// listLive runs one status listing and records, for every point whose
// latest task (see latestTasks) is still live, that task, to adopt it;
// for points whose latest task ended while no run watched it, its final
// state, to decide on when the point arrives. A failed listing adopts
// nothing (points are then submitted again; the node side skips points
// already done, so at worst work is repeated).
func (r *run) listLive() {
	tasks, err := r.q.Client.listStatus(r.ctx, r.jobName)
	if err != nil {
		return
	}
	tracked := map[taskRef]bool{}
	for k, pt := range latestTasks(r.scanDir, tasks, true) {
		if pt.Class().Terminal() {
			r.endedEarlier[k] = pt
			continue
		}
		if !tracked[pt.Ref] {
			tracked[pt.Ref] = true
			r.poller.Track(pt.Ref.Array, pt.Ref.Index, 1, r.now().Add(-48*time.Hour))
		}
		r.adoptable[k] = pt.Ref
	}
}

// resources returns the resources for a set of points: the config's, with
// time and memory raised to the largest escalation among them.
func (r *run) resources(ts []runner.Task) Resources {
	res := r.q.config.Resources()
	for _, t := range ts {
		if ks := r.keys[t.Key]; ks != nil {
			res.Time = max(res.Time, ks.res.Time)
			res.MemMB = max(res.MemMB, ks.res.MemMB)
		}
	}
	return res
}

func (r *run) key(k string) *keyState {
	ks := r.keys[k]
	if ks == nil {
		ks = &keyState{}
		r.keys[k] = ks
	}
	return ks
}

// expectedTask is the expected run time of one array task: the packing
// times the median point time of this run; 0 before any point finished.
func (r *run) expectedTask() time.Duration {
	p := expectedPoint(r.measured)
	if p == 0 {
		return 0
	}
	return time.Duration(packSize(r.q.config.PointsPerTask, r.measured, 0)) * p
}

// submitBatch packs the batch into arrays and submits them.
func (r *run) submitBatch() {
	batch := r.batch
	r.batch = nil
	sort.SliceStable(batch, func(a, b int) bool {
		for i := range batch[a].Values {
			if batch[a].Values[i] != batch[b].Values[i] {
				return batch[a].Values[i] < batch[b].Values[i]
			}
		}
		return batch[a].Key < batch[b].Key
	})
	k := packSize(r.q.config.PointsPerTask, r.measured, r.resources(batch).Time)
	per := k * r.maxArr
	for start := 0; start < len(batch); start += per {
		r.submitArray(batch[start:min(start+per, len(batch))], k)
	}
}

// submitArray writes jobs/<token>/ (manifest, script, job.json: the
// token is on disk before sbatch runs) and submits one array.
func (r *run) submitArray(ts []runner.Task, k int) {
	r.seq++
	scan8 := strings.TrimPrefix(r.jobName, "ws-")
	token := fmt.Sprintf("%s-%s-%d", scan8, strconv.FormatInt(r.now().UnixMilli(), 36), r.seq)
	jobDir := filepath.Join(r.scanDir, JobsDir, token)
	prof := r.q.Client.Profile()
	m := &Manifest{First: prof.FirstIndex}
	meta := jobMeta{Token: token, ScanDir: r.scanDir, Fingerprint: r.fp, Attempts: map[string]int{}}
	for i := 0; i < len(ts); i += k {
		var keys []string
		for _, t := range ts[i:min(i+k, len(ts))] {
			keys = append(keys, t.Key)
			meta.Attempts[t.Key] = t.Attempt
			if t.Cold {
				meta.Cold = append(meta.Cold, t.Key)
			}
		}
		m.Tasks = append(m.Tasks, keys)
	}
	res := r.resources(ts)
	spec := ScriptSpec{JobName: r.jobName, Token: token, Tasks: len(m.Tasks), Throttle: r.q.throttle(),
		JobDir: jobDir, Worker: []string{r.q.Binary, NodeSubcommand}, Resources: res}
	fail := func(class runner.FailureClass, permanent bool, err error) {
		for _, t := range ts {
			r.out <- runner.Completion{Task: t, Result: r.failure(t, class, permanent, err.Error())}
		}
	}
	script, err := PrepareJob(prof, spec, m)
	if err != nil {
		fail(runner.ClassSubmit, true, err)
		return
	}
	mb, _ := json.MarshalIndent(meta, "", "  ")
	if err := writeJobFile(jobDir, JobMetaFile, append(mb, '\n')); err != nil {
		fail("io", false, err)
		return
	}
	submitted := r.now()
	id, err := r.q.Client.submitEnv(r.ctx, script, r.q.config.SubmitEnv(os.Environ()))
	if err != nil {
		var se *submitError
		if errors.As(err, &se) && se.Kind == submitRejected {
			fail(runner.ClassSubmitRejected, true, err)
			return
		}
		if r.ctx.Err() != nil {
			// Interrupted while sbatch ran: the job may exist; a later run
			// finds it by its token and adopts it.
			for _, t := range ts {
				r.out <- runner.Completion{Task: t, Interrupted: true}
			}
			return
		}
		// The job may exist although sbatch did not say so: look for the
		// token once before giving up on this submission.
		id = r.findToken(token)
		if id == "" {
			fail(runner.ClassSubmit, false, err)
			return
		}
	}
	_ = writeJobFile(jobDir, jobIDFile, []byte(id+"\n"))
	r.poller.Track(id, m.First, len(m.Tasks), submitted)
	for i, keys := range m.Tasks {
		ref := taskRef{Array: id, Index: m.First + i}
		r.byRef[ref] = keys
	}
	for j, t := range ts {
		r.pending[t.Key] = &inflight{task: t, ref: taskRef{Array: id, Index: m.First + j/k}}
	}
	r.q.count(func(s *QueueStats) { s.Submissions++; s.Points += len(ts) })
}

func (r *run) findToken(token string) string {
	tasks, err := r.q.Client.listStatus(r.ctx, r.jobName)
	if err != nil {
		return ""
	}
	for _, t := range tasks {
		if tok, ok := t.token(); ok && tok == token {
			return t.Array
		}
	}
	return ""
}

// failure is a failed Result for t made by the queue (not by the node).
func (r *run) failure(t runner.Task, class runner.FailureClass, permanent bool, msg string) runner.Result {
	now := r.now()
	return runner.FailedResult(t, r.fp, "slurm", class, permanent, msg, now, now)
}

// cycle runs one poll: one status command, then the result files of every
// point in flight, then decisions for tasks that ended without results.
// It reports whether anything changed.
func (r *run) cycle() bool {
	snap, err := r.poller.Poll(r.ctx)
	switch {
	case err != nil && r.ctx.Err() == nil:
		r.failing++
		if r.failing == 1 && r.opts.Notice != nil {
			r.opts.Notice(fmt.Sprintf("%s does not answer (%v); points are judged by their result files until it does, polling less often", DisplayName(r.q.Name()), err))
		}
	case err == nil && r.failing > 0:
		if r.opts.Notice != nil {
			r.opts.Notice(fmt.Sprintf("%s answers again after %d failed poll(s)", DisplayName(r.q.Name()), r.failing))
		}
		r.failing = 0
	}
	r.q.count(func(s *QueueStats) {
		s.Cycles++
		s.Commands += snap.Commands
		s.MaxPerCycle = max(s.MaxPerCycle, snap.Commands)
	})
	changed := snap.Changed
	now := r.now()
	refs := make([]taskRef, 0, len(r.byRef))
	for ref := range r.byRef {
		refs = append(refs, ref)
	}
	sort.Slice(refs, func(a, b int) bool {
		if refs[a].Array != refs[b].Array {
			return refs[a].Array < refs[b].Array
		}
		return refs[a].Index < refs[b].Index
	})
	for _, ref := range refs {
		var left []string
		for _, k := range r.byRef[ref] {
			p := r.pending[k]
			if p == nil || p.ref != ref {
				continue // not (or no longer) ours in this task
			}
			if res, ok := runner.ReadResult(r.scanDir, k, r.fp); ok && (res.Status == runner.ResultDone || res.Attempt == p.task.Attempt) {
				if res.Status == runner.ResultDone && res.Finished.After(res.Started) {
					r.measured = append(r.measured, res.Finished.Sub(res.Started))
				}
				delete(r.pending, k)
				r.out <- runner.Completion{Task: p.task, Result: res}
				changed = true
				continue
			}
			left = append(left, k)
		}
		if len(left) == 0 {
			delete(r.byRef, ref)
			delete(r.ended, ref)
			r.poller.Forget(ref)
			continue
		}
		r.byRef[ref] = left
		if err != nil {
			continue // no scheduler data this cycle: result files only
		}
		st, ok := snap.Tasks[ref]
		if !ok {
			continue
		}
		class := st.Class()
		switch {
		case class.Terminal():
		case st.Lost(now, r.q.grace):
			class = classLost
		default:
			delete(r.ended, ref)
			continue
		}
		since, seen := r.ended[ref]
		if !seen {
			r.ended[ref] = now
			continue
		}
		if class != classLost && now.Sub(since) < r.q.grace {
			continue // results may not be visible yet on a shared filesystem
		}
		for _, k := range left {
			p := r.pending[k]
			delete(r.pending, k)
			r.out <- r.decide(p.task, class, st, ref)
		}
		changed = true
		delete(r.byRef, ref)
		delete(r.ended, ref)
		r.poller.Forget(ref)
	}
	return changed
}

// decide turns a task that ended without a result for t into a Completion.
func (r *run) decide(t runner.Task, class Class, st taskStatus, ref taskRef) runner.Completion {
	ks := r.key(t.Key)
	res := r.resources([]runner.Task{t})
	d := r.q.retry.Decide(class, res, ks.budget)
	logs := filepath.Join(r.scanDir, JobsDir, "*", fmt.Sprintf("slurm-%s_%d.err", ref.Array, ref.Index))
	msg := fmt.Sprintf("array task %s ended %s without a result for this point (%s; log %s)", ref, nonEmpty(st.Native, class.String()), d.Reason, logs)
	switch class {
	case classInfra, classPreempted, classLost, classCompleted:
		if d.Retry {
			ks.budget = d.Used
			r.q.count(func(s *QueueStats) { s.InfraRetries++ })
			return runner.Completion{Task: t, Interrupted: true}
		}
		return runner.Completion{Task: t, Result: r.failure(t, runner.ClassLost, false, msg)}
	case classTimeout, classOutOfMemory:
		if d.Retry {
			ks.budget, ks.res = d.Used, d.Resources
			return runner.Completion{Task: t, Interrupted: true}
		}
		return runner.Completion{Task: t, Result: r.failure(t, map[Class]runner.FailureClass{classTimeout: runner.ClassTimeout, classOutOfMemory: runner.ClassOutOfMemory}[class], true, msg)}
	case classCancelled:
		return runner.Completion{Task: t, Result: r.failure(t, runner.ClassCancelled, true, msg)}
	}
	return runner.Completion{Task: t, Result: r.failure(t, runner.ClassTaskFailed, false, msg)}
}

func nonEmpty(a, b string) string {
	if a != "" {
		return a
	}
	return b
}

// DetachNote implements runner.Batch: what an interrupted attached run
// leaves behind (the jobs keep running) and how to cancel them.
func (q *Queue) DetachNote() string {
	q.mu.Lock()
	name := q.jobName
	q.mu.Unlock()
	sched := DisplayName(q.Name())
	if name == "" {
		return fmt.Sprintf("detached from %s; no job was submitted", sched)
	}
	return fmt.Sprintf("detached from %s: the scan's jobs (name %s) keep running and a later run picks up their results; see them with 'wellscan status DIR', cancel them with 'wellscan cancel DIR'", sched, name)
}

// Packing from measured point times (SOURCES.md §2; the numbers are
// ours): a task should run about packTarget, at most packMax points, and
// k·p90 must stay under packHeadroom of the walltime.
const (
	packTarget   = 30 * time.Minute
	packMax      = 64
	packHeadroom = 0.8
	packSamples  = 3
)

// packSize returns the points per array task: configured (> 0) wins;
// with at least three measured point durations, ceil(30 min / p50)
// clamped to [1, 64] and lowered until k·p90 ≤ 0.8·limit (limit 0: no
// walltime known); otherwise defaultPointsPerTask.
func packSize(configured int, measured []time.Duration, limit time.Duration) int {
	if configured > 0 {
		return configured
	}
	if len(measured) < packSamples {
		return defaultPointsPerTask
	}
	d := append([]time.Duration(nil), measured...)
	sort.Slice(d, func(a, b int) bool { return d[a] < d[b] })
	p50 := max(d[len(d)/2], time.Millisecond)
	p90 := max(d[min(len(d)-1, len(d)*9/10)], time.Millisecond)
	k := int((packTarget + p50 - 1) / p50)
	k = min(max(k, 1), packMax)
	if limit > 0 {
		for k > 1 && float64(time.Duration(k)*p90) > packHeadroom*float64(limit) {
			k--
		}
	}
	return k
}

// ClientFor returns a client for the scheduler spec's [queue] names,
// running commands with os/exec.
func ClientFor(spec *planner.Spec) (*Client, error) {
	cfg, err := decodeConfig(spec)
	if err != nil {
		return nil, err
	}
	return NewClient(cfg.SchedulerProfile(), ExecRunner{})
}
