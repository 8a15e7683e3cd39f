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
	"time"

	"wellscan/planner"
)

// work is the Worker: it runs one task in this process and writes its
// result file. A point whose result file already says done is not
// computed again. The result reaches the store through this process, whose
// commit makes it durable, so the result file is written atomically but
// without fsync: two fewer disk flushes per point.
func (r *scanRun) work(ctx context.Context, t Task) Completion {
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
	if res, ok := ReadResult(r.dir, t.Key, r.fp); ok && res.Status == ResultDone {
		return Completion{Task: t, Result: res, Reused: true}
	}
	if err := MkdirScan(r.dir, filepath.Join(PointsDir, t.Key)); err != nil {
		return Completion{Task: t, Result: r.failure(t, r.now(), ClassIO, err)}
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
		res = r.failure(t, start, ClassTimeout, fmt.Errorf("no result within %s: %w", r.spec.Queue.Timeout.Duration, err))
	case err != nil:
		res = r.failure(t, start, ClassError, err)
	default:
		res = r.resultOf(t, start, out)
	}
	if err := writeResult(r.dir, res, r.suffix, r.durable); err != nil {
		return Completion{Task: t, Result: r.failure(t, start, ClassIO, err)}
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

func (r pointComputer) failure(t Task, start time.Time, class FailureClass, err error) Result {
	return failedResult(t, r.fp, r.backend.Name(), r.host, class, false, err.Error(), start, r.now())
}

// resultOf is the Result of task t whose backend returned o: done when o
// converged to a finite energy, otherwise failed with o's class (or
// ClassNotConverged) and an error that names the backend.
func (r pointComputer) resultOf(t Task, start time.Time, o Outcome) Result {
	res := Result{Key: t.Key, Fingerprint: r.fp, Attempt: t.Attempt, Outcome: o, Backend: r.backend.Name(),
		Host: r.host, PID: os.Getpid(), Started: start, Finished: r.now()}
	if o.Orbitals != "" {
		res.Orbitals = orbitalsRel(t.Dir, o.Orbitals)
	}
	if o.Converged && !math.IsNaN(o.Energy) && !math.IsInf(o.Energy, 0) {
		res.Status = ResultDone
		res.Class, res.Error, res.Permanent = "", "", false
		return res
	}
	res.Status = ResultFailed
	if res.Class == "" {
		res.Class = ClassNotConverged
	}
	res.Error = fmt.Sprintf("backend %s: %s", r.backend.Name(), res.Class)
	if o.Error != "" { // the class is in res.Class: not twice in the text
		res.Error = fmt.Sprintf("backend %s: %s", r.backend.Name(), o.Error)
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
