package slurm

import (
	"sort"
	"strings"
	"time"

	"wellscan/runner"
)

// lookPolicy is the schedule of result-file looks: reading the result
// files of the points in flight, which asks the scheduler nothing (a stat
// or a small read per point on the shared filesystem). A point is
// recorded as soon as a look finds its file; scheduler polls
// (pollPolicy) are only needed to notice tasks that ended without one,
// so they can stay polite while looks follow the work.
//
// The first look comes First after a submission. Then, with point times
// measured in this run, every half point time; before that, every eighth
// of the time since the submission (so a result waits at most an eighth
// of its age to be seen). Never more often than Min, nor than 20 times
// the last look's own duration (a large scan on a slow shared filesystem
// spends at most 5 % of the time looking), and never less often than Max.
type lookPolicy struct {
	First, Min, Max time.Duration
}

// defaultLookPolicy: first look 500 ms after a submission, then between
// 250 ms and 30 s apart (ours: 30 s keeps a long task's results from
// waiting long for the orchestrator).
func defaultLookPolicy() lookPolicy {
	return lookPolicy{First: 500 * time.Millisecond, Min: 250 * time.Millisecond, Max: 30 * time.Second}
}

// Next returns the wait before the next look: first is true right after a
// submission, age is the time since it, point the expected compute time of
// one point (0: not measured yet), cost how long the last look took.
func (p lookPolicy) Next(first bool, age, point, cost time.Duration) time.Duration {
	base := age / 8
	if point > 0 {
		base = point / 2
	}
	if first {
		base = p.First
		if point > 0 {
			base = min(base, point/2)
		}
	}
	return min(max(base, p.Min, 20*cost), p.Max)
}

// expectedPoint is the median compute time of the points finished in this
// run; 0 before any.
func expectedPoint(measured []time.Duration) time.Duration {
	if len(measured) == 0 {
		return 0
	}
	d := append([]time.Duration(nil), measured...)
	sort.Slice(d, func(a, b int) bool { return d[a] < d[b] })
	return d[len(d)/2]
}

// harvest reads the result files of the points in flight and hands every
// one that has its result back to the round loop, as a poll cycle does,
// without asking the scheduler. It reports whether it found any.
func (r *run) harvest() bool {
	found := false
	for _, k := range sortedKeys(r.pending) {
		p := r.pending[k]
		res, ok := runner.ReadResult(r.scanDir, k, r.fp)
		if !ok || (res.Status != runner.ResultDone && res.Attempt != p.task.Attempt) {
			continue
		}
		if res.Status == runner.ResultDone && res.Finished.After(res.Started) {
			r.measured = append(r.measured, res.Finished.Sub(res.Started))
		}
		delete(r.pending, k)
		r.out <- runner.Completion{Task: p.task, Result: res}
		found = true
	}
	return found
}

// minimalEnvKeep lists the variables a submission passes on to the job
// with the default job environment (see jobEnv).
var minimalEnvKeep = []string{"PATH", "HOME", "USER", "LOGNAME", "SHELL", "LANG", "TZ", "TMPDIR", "SLURM_CONF"}

// jobEnv returns the environment the submit command runs with when the
// job takes its environment from the submission (--export=ALL) instead of
// from a login shell on the node: only PATH, HOME, USER, LOGNAME, SHELL,
// LANG, LC_*, TZ, TMPDIR, SLURM_CONF and SBATCH_* of env. Everything else
// the submitting shell has (library paths, thread counts, a loaded
// environment) stays out of the job, as with --export=NONE, but the
// node starts the task without running the user's login shell.
func jobEnv(env []string) []string {
	var out []string
	for _, e := range env {
		name, _, ok := strings.Cut(e, "=")
		if !ok {
			continue
		}
		keep := strings.HasPrefix(name, "LC_") || strings.HasPrefix(name, "SBATCH_")
		for _, k := range minimalEnvKeep {
			keep = keep || name == k
		}
		if keep {
			out = append(out, e)
		}
	}
	return out
}
