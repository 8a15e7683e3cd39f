package slurm

import (
	"context"
	"errors"
	"fmt"
	"math"
	"time"
)

// pollPolicy sets how often the scheduler is asked. Defaults from the
// SOURCES.md §1: first poll 30 s after a submit, then every 60 s,
// ×1.5 while nothing changes, up to 300 s, reset on any change, never below
// 15 s.
type pollPolicy struct {
	FirstDelay time.Duration
	Interval   time.Duration
	Backoff    float64
	Max        time.Duration
	// Floor is the lowest interval allowed; tests lower it.
	Floor time.Duration
}

// defaultPollPolicy returns the defaults above.
func defaultPollPolicy() pollPolicy {
	return pollPolicy{FirstDelay: 30 * time.Second, Interval: 60 * time.Second, Backoff: 1.5,
		Max: 300 * time.Second, Floor: 15 * time.Second}
}

// Validate refuses intervals below the floor and other inconsistent values.
func (p pollPolicy) Validate() error {
	switch {
	case p.Floor <= 0:
		return fmt.Errorf("slurm: poll floor %s must be positive", p.Floor)
	case p.FirstDelay < p.Floor || p.Interval < p.Floor:
		return fmt.Errorf("slurm: poll intervals (first %s, interval %s) may not be below the floor %s", p.FirstDelay, p.Interval, p.Floor)
	case p.Max < p.Interval:
		return fmt.Errorf("slurm: poll maximum %s is below the interval %s", p.Max, p.Interval)
	case p.Backoff < 1 || math.IsNaN(p.Backoff) || math.IsInf(p.Backoff, 0):
		return fmt.Errorf("slurm: poll backoff %g must be a finite number ≥ 1", p.Backoff)
	}
	return nil
}

// WithoutAccounting caps the intervals at minJobAge/2, so a finished task is
// still seen in the status listing before the controller forgets it (Slurm's
// MinJobAge, 300 s by default). The floor still applies.
func (p pollPolicy) WithoutAccounting(minJobAge time.Duration) pollPolicy {
	limit := max(minJobAge/2, p.Floor)
	p.Max = min(p.Max, limit)
	p.Interval = min(p.Interval, p.Max)
	p.FirstDelay = min(p.FirstDelay, p.Max)
	return p
}

// Next returns the wait before the next poll, given the previous wait (0
// for the first poll after a submit) and whether the last poll saw a change.
func (p pollPolicy) Next(prev time.Duration, changed bool) time.Duration {
	var d time.Duration
	switch {
	case prev == 0:
		d = p.FirstDelay
	case changed:
		d = p.Interval
	default:
		d = time.Duration(float64(prev) * p.Backoff)
		d = max(d, p.Interval)
	}
	return max(min(d, p.Max), p.Floor)
}

// NextFor is Next for tasks expected to run about task each (0: not
// measured yet): the first poll after a submission and the interval while
// tasks change come no later than that expected time, since a task ending
// without its results is what a poll is for (results are found by
// looking at their files, see lookPolicy); never below the floor, and
// the back-off while nothing changes is Next's.
func (p pollPolicy) NextFor(prev time.Duration, changed bool, task time.Duration) time.Duration {
	d := p.Next(prev, changed)
	if task > 0 && (prev == 0 || changed) {
		d = max(min(d, task), p.Floor)
	}
	return d
}

// accounting says whether the history command can be used.
type accounting int

const (
	// The zero value ("unknown"): not asked yet.
	_ accounting = iota
	// accountingOn: the history command answered.
	accountingOn
	// accountingOff: the site keeps none (or the profile has no history
	// command); only status and result files are used for the rest of the run.
	accountingOff
)

func (a accounting) String() string {
	return [...]string{"unknown", "on", "off"}[a]
}

// taskStatus is a task's state after a poll cycle.
type taskStatus struct {
	TaskState
	// Seen: the task appeared in this cycle's status or history output.
	Seen bool
	// MissingSince is when the task was first missing from both status and
	// history while its last known state was not final; zero otherwise.
	MissingSince time.Time
	// Submitted is when its job was tracked; zero for tasks found by name only.
	Submitted time.Time
}

// Class returns the class of the last known state.
func (t taskStatus) Class() Class { return Classify(t.State) }

// Lost reports whether the task left the scheduler without a final state at
// least grace ago. The caller must check the result file before acting.
func (t taskStatus) Lost(now time.Time, grace time.Duration) bool {
	return !t.MissingSince.IsZero() && now.Sub(t.MissingSince) >= grace
}

// pollSnapshot is the outcome of one poll cycle.
type pollSnapshot struct {
	Time  time.Time
	Tasks map[taskRef]taskStatus
	// Commands is the number of scheduler commands this cycle ran (1 or 2).
	Commands int
	// Changed is true when any task's state differs from the previous cycle.
	Changed    bool
	Accounting accounting
	// HistoryErr is a failed history query (not "no accounting"); the cycle
	// still counts, with status data only.
	HistoryErr error
}

// Counts returns the number of tasks per class.
func (s pollSnapshot) Counts() map[Class]int {
	m := map[Class]int{}
	for _, t := range s.Tasks {
		m[t.Class()]++
	}
	return m
}

// poller tracks one scan's tasks across poll cycles.
type poller struct {
	client  *Client
	jobName string
	now     func() time.Time

	accounting accounting
	tasks      map[taskRef]taskStatus
}

// newPoller returns a poller for all jobs named jobName. now is the clock
// (nil: time.Now).
func newPoller(c *Client, jobName string, now func() time.Time) (*poller, error) {
	if err := validateValue("job name", jobName); err != nil {
		return nil, err
	}
	if now == nil {
		now = time.Now
	}
	p := &poller{client: c, jobName: jobName, now: now, tasks: map[taskRef]taskStatus{}}
	if c.history == nil {
		p.accounting = accountingOff
	}
	return p, nil
}

// accounting reports what the poller knows about the history command.
func (p *poller) Accounting() accounting { return p.accounting }

// Track registers a submitted array (tasks first..first+n-1 of job id
// array), so that tasks that never show up in the status output are noticed.
// Call it right after a successful submit.
func (p *poller) Track(array string, first, n int, submitted time.Time) {
	for i := first; i < first+n; i++ {
		ref := taskRef{Array: array, Index: i}
		if _, ok := p.tasks[ref]; !ok {
			p.tasks[ref] = taskStatus{TaskState: TaskState{ID: ref.String(), Array: array, Index: i}, Submitted: submitted}
		}
	}
}

// Forget drops tasks the caller no longer needs (ingested results).
func (p *poller) Forget(refs ...taskRef) {
	for _, r := range refs {
		delete(p.tasks, r)
	}
}

// Poll runs one cycle: one status command for the whole scan; then, only
// if some tracked task left the listing without a known final state and
// accounting is not known to be off, one history command bounded by the
// earliest submit time. The number of commands does not depend on the
// number of jobs or tasks.
func (p *poller) Poll(ctx context.Context) (pollSnapshot, error) {
	now := p.now()
	snap := pollSnapshot{Time: now}
	listed, err := p.client.listStatus(ctx, p.jobName)
	snap.Commands++
	if err != nil {
		snap.Accounting = p.accounting
		return snap, err
	}
	seen := map[taskRef]bool{}
	update := func(ref taskRef, t TaskState) {
		seen[ref] = true
		old := p.tasks[ref]
		if old.State != t.State || old.Reason != t.Reason {
			snap.Changed = true
		}
		p.tasks[ref] = taskStatus{TaskState: t, Seen: true, Submitted: old.Submitted}
	}
	arrays := map[string]bool{}
	for ref := range p.tasks {
		if ref.Index != noTask {
			arrays[ref.Array] = true
		}
	}
	var wholeArrays []TaskState
	for _, t := range listed {
		if t.Index == noTask && arrays[t.Array] {
			// One record for the whole array: Slurm shows an array whose
			// tasks never started (for example cancelled while pending) as
			// a single job with no task index. It stands for every tracked
			// task of that array without a record of its own.
			wholeArrays = append(wholeArrays, t)
			continue
		}
		update(t.ref(), t)
	}
	for _, w := range wholeArrays {
		for ref := range p.tasks {
			if ref.Array == w.Array && ref.Index != noTask && !seen[ref] {
				t := w
				t.Index = ref.Index
				t.ID = ref.String()
				update(ref, t)
			}
		}
	}
	// Tasks that left the listing and whose final state is not known.
	var gone []taskRef
	var since time.Time
	for ref, t := range p.tasks {
		if seen[ref] {
			continue
		}
		t.Seen = false
		p.tasks[ref] = t
		if t.Class().Terminal() {
			continue
		}
		gone = append(gone, ref)
		if !t.Submitted.IsZero() && (since.IsZero() || t.Submitted.Before(since)) {
			since = t.Submitted
		}
	}
	if len(gone) > 0 && p.accounting != accountingOff {
		if since.IsZero() {
			since = now.Add(-48 * time.Hour)
		}
		// One minute of margin for clock differences between hosts.
		hist, err := p.client.listHistory(ctx, p.jobName, since.Add(-time.Minute))
		snap.Commands++
		switch {
		case errors.Is(err, errNoAccounting):
			p.accounting = accountingOff
		case err != nil:
			snap.HistoryErr = err
		default:
			p.accounting = accountingOn
			byRef := map[taskRef]TaskState{}
			for _, h := range hist {
				byRef[h.ref()] = h
			}
			for _, ref := range gone {
				if h, ok := byRef[ref]; ok {
					old := p.tasks[ref]
					if old.State != h.State {
						snap.Changed = true
					}
					p.tasks[ref] = taskStatus{TaskState: h, Seen: true, Submitted: old.Submitted}
				}
			}
		}
	}
	for _, ref := range gone {
		t := p.tasks[ref]
		if !t.Seen && t.MissingSince.IsZero() {
			t.MissingSince = now
			p.tasks[ref] = t
			snap.Changed = true
		} else if t.Seen {
			t.MissingSince = time.Time{}
			p.tasks[ref] = t
		}
	}
	snap.Tasks = make(map[taskRef]taskStatus, len(p.tasks))
	for ref, t := range p.tasks {
		snap.Tasks[ref] = t
	}
	snap.Accounting = p.accounting
	return snap, nil
}

// maxPollFailures is how many status failures in a row poller.Watch
// tolerates before it gives up (SOURCES.md §1: "scheduler unreachable"
// after 5 failed cycles).
const maxPollFailures = 5

// Watch polls on the policy's schedule until done returns true for a
// snapshot, ctx ends, or the status command fails maxPollFailures times in
// a row. sleep waits (nil: a timer honouring ctx); tests inject a fake.
func (p *poller) Watch(ctx context.Context, policy pollPolicy, sleep func(context.Context, time.Duration) error,
	done func(pollSnapshot) bool) (pollSnapshot, error) {
	if err := policy.Validate(); err != nil {
		return pollSnapshot{}, err
	}
	if sleep == nil {
		sleep = sleepCtx
	}
	var wait time.Duration
	var last pollSnapshot
	failures := 0
	changed := false
	for {
		wait = policy.Next(wait, changed)
		if err := sleep(ctx, wait); err != nil {
			return last, err
		}
		snap, err := p.Poll(ctx)
		if err != nil {
			if ctx.Err() != nil {
				return last, ctx.Err()
			}
			failures++
			if failures >= maxPollFailures {
				return last, fmt.Errorf("slurm: scheduler unreachable after %d polls: %w", failures, err)
			}
			changed = false
			continue
		}
		failures = 0
		last = snap
		changed = snap.Changed
		if done(snap) {
			return snap, nil
		}
	}
}

func sleepCtx(ctx context.Context, d time.Duration) error {
	t := time.NewTimer(d)
	defer t.Stop()
	select {
	case <-ctx.Done():
		return ctx.Err()
	case <-t.C:
		return nil
	}
}
