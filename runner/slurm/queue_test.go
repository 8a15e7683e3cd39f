package slurm

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/model"
)

// fakeSlurm answers scontrol, sbatch and squeue like a one-node Slurm
// would, and runs the compute-node side (NodeTask with the model backend)
// in process for tasks whose fate is COMPLETED. fate decides, per
// submission (1-based) and task index, how the task ends: a Slurm state,
// or "VANISH" (it leaves squeue with no state).
type fakeSlurm struct {
	t    *testing.T
	fate func(sub, index int) string

	mu sync.Mutex
	// hold keeps tasks PENDING (the node does nothing) while true.
	hold bool
	// down makes the next down squeue calls after the first fail as an
	// unreachable controller does.
	down  int
	polls int
	subs  int
	tasks []*fakeTask
	calls map[string]int
}

type fakeTask struct {
	array, index int
	jobDir       string
	comment      string
	state        string
	fate         string
}

var (
	arrayRE   = regexp.MustCompile(`(?m)^#SBATCH --array=(\d+)-(\d+)%\d+$`)
	commentRE = regexp.MustCompile(`(?m)^#SBATCH --comment=(\S+)$`)
)

func (f *fakeSlurm) Run(ctx context.Context, c Cmd) (Output, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	if f.calls == nil {
		f.calls = map[string]int{}
	}
	f.calls[c.Argv[0]]++
	switch c.Argv[0] {
	case "scontrol":
		return Output{Stdout: []byte("MaxArraySize            = 1001\nMinJobAge               = 300 sec\n")}, nil
	case "sbatch":
		script := c.Argv[len(c.Argv)-1]
		b, err := os.ReadFile(script)
		if err != nil {
			return Output{}, err
		}
		m := arrayRE.FindSubmatch(b)
		cm := commentRE.FindSubmatch(b)
		if m == nil || cm == nil {
			f.t.Errorf("script without --array or --comment:\n%s", b)
			return Output{ExitCode: 1, Stderr: []byte("bad script")}, nil
		}
		f.subs++
		id := 1000 * f.subs
		lo, _ := strconv.Atoi(string(m[1]))
		hi, _ := strconv.Atoi(string(m[2]))
		for i := lo; i <= hi; i++ {
			f.tasks = append(f.tasks, &fakeTask{array: id, index: i, jobDir: filepath.Dir(script),
				comment: string(cm[1]), state: "PENDING", fate: f.fate(f.subs, i)})
		}
		return Output{Stdout: []byte(fmt.Sprintf("%d\n", id))}, nil
	case "sacct":
		// As Slurm answers without accounting (SOURCES.md §4).
		return Output{ExitCode: 1, Stderr: []byte("sacct: error: Slurm accounting storage is disabled\n")}, nil
	case "squeue":
		f.polls++
		if f.down > 0 && f.polls > 1 {
			f.down--
			return Output{ExitCode: 1, Stderr: []byte("squeue: error: Unable to contact slurm controller (connect failure)\n")}, nil
		}
		var b strings.Builder
		for _, t := range f.tasks {
			switch {
			case t.state == "PENDING" && !f.hold:
				// It starts; the next listing shows its end.
				t.state = "RUNNING"
			case t.state == "RUNNING":
				// The task runs now and ends with its fate.
				t.state = t.fate
				switch t.fate {
				case "COMPLETED":
					err := NodeTask{JobDir: t.jobDir, Task: t.index, NewBackend: func(s *planner.Spec) (runner.Backend, error) {
						return model.New(s)
					}}.Run(ctx)
					if err != nil {
						f.t.Errorf("node task %d_%d: %v", t.array, t.index, err)
					}
				case "COMPLETED_NO_NODE":
					t.state = "COMPLETED"
				}
			}
			if t.state == "VANISH" {
				continue
			}
			fmt.Fprintf(&b, "%d_%d|%d|%d|%d|%s|None|%s\n", t.array, t.index, t.array+t.index+1, t.array, t.index, t.state, t.comment)
		}
		return Output{Stdout: []byte(b.String())}, nil
	}
	f.t.Errorf("unexpected command %q", c.Argv)
	return Output{ExitCode: 1}, nil
}

// fakeSpec is a 10-point model scan (invented Morse constants, atomic
// units) with a fast poll, 3 points per task.
const fakeSpec = `[molecule]
geometry = """
H 0 0 0
F 0 0 0.92
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.80
to = 1.25
step = 0.05
[refine]
adaptive = false
[engine]
kind = "model"
[[engine.model.term]]
shape = "morse"
depth = 0.22
width = 1.2
center = 1.73
[queue]
kind = "slurm"
attempts = 3
[queue.slurm]
points_per_task = 3
time = "10m"
poll_interval = "100ms"
fast_poll = true
lost_after = "300ms"
`

type fakeRun struct {
	sum   runner.Summary
	err   error
	recs  map[string]runner.PointRecord
	stats QueueStats
	fake  *fakeSlurm
	// notices are the messages of the runner's notice events.
	notices []string
}

func runFake(t *testing.T, fate func(sub, index int) string) fakeRun {
	t.Helper()
	return runFakeIn(t, fakeScanDir(t), &fakeSlurm{t: t, fate: fate}, false)
}

// fakeScanDir is a scan directory holding fakeSpec.
func fakeScanDir(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(fakeSpec), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir
}

// runFakeIn runs (or resumes) the scan in dir against fake, attached or
// detached.
func runFakeIn(t *testing.T, dir string, fake Runner, detach bool, opts ...func(*Queue)) fakeRun {
	t.Helper()
	spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	q, err := NewQueue(spec)
	if err != nil {
		t.Fatal(err)
	}
	q.Client = mustClient(t, q.Client.Profile(), fake)
	q.Binary = "/nonexistent/wellscan" // the fake runs the node side in process
	q.gather = 20 * time.Millisecond
	for _, o := range opts {
		o(q)
	}
	backend, err := model.New(spec)
	if err != nil {
		t.Fatal(err)
	}
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	ctx, cancel := context.WithTimeout(t.Context(), 30*time.Second)
	defer cancel()
	fr := fakeRun{}
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: backend, Queue: q, Detach: detach,
		OnEvent: func(e runner.Event) {
			if e.Kind == runner.EventNotice {
				fr.notices = append(fr.notices, e.Message)
			}
		}}
	fr.fake, _ = fake.(*fakeSlurm)
	fr.sum, fr.err = r.Run(ctx)
	recs, err := st.Points()
	if err != nil {
		t.Fatal(err)
	}
	fr.recs = map[string]runner.PointRecord{}
	for _, rec := range recs {
		fr.recs[rec.Key] = rec
	}
	fr.stats = q.Stats()
	return fr
}

func TestQueue_Run_AllComplete(t *testing.T) {
	fr := runFake(t, func(int, int) string { return "COMPLETED" })
	if fr.err != nil {
		t.Fatal(fr.err)
	}
	if len(fr.recs) != 10 {
		t.Fatalf("%d points, want 10", len(fr.recs))
	}
	for k, rec := range fr.recs {
		if rec.State != runner.Done || rec.Attempts != 1 {
			t.Errorf("%s: %s after %d attempts", k, rec.State, rec.Attempts)
		}
	}
	// 10 points at 3 per task: one array of 4 tasks.
	if fr.stats.Submissions != 1 || fr.fake.calls["sbatch"] != 1 || fr.fake.subs != 1 || len(fr.fake.tasks) != 4 {
		t.Errorf("stats %+v, %d tasks; want 1 submission of 4 tasks", fr.stats, len(fr.fake.tasks))
	}
	// One status command per cycle (plus the one adoption listing).
	if fr.stats.MaxPerCycle != 1 || fr.fake.calls["squeue"] != fr.stats.Cycles+1 {
		t.Errorf("%d cycles, max %d commands per cycle, %d squeue calls", fr.stats.Cycles, fr.stats.MaxPerCycle, fr.fake.calls["squeue"])
	}
}

func TestQueue_Run_FaultClasses(t *testing.T) {
	tests := []struct {
		name string
		// first is the fate of task 0 (points r=0.80, 0.85, 0.90) in the
		// first submission; every other task completes.
		first        string
		wantState    runner.State
		wantAttempts int
		wantClass    runner.FailureClass
		wantSubs     int
	}{
		// Infrastructure: retried unchanged, no attempt used.
		{"node-fail", "NODE_FAIL", runner.Done, 1, "", 2},
		// Vanished without a state: lost after the grace, retried, no attempt used.
		{"vanished", "VANISH", runner.Done, 1, "", 2},
		// Completed with no result file: lost, like a vanished task.
		{"completed-without-result", "COMPLETED-EMPTY", runner.Done, 1, "", 2},
		// The worker failed: the point's own error, an attempt used.
		{"failed", "FAILED", runner.Done, 2, "", 2},
		// More time: escalated, no attempt used.
		{"timeout", "TIMEOUT", runner.Done, 1, "", 2},
		// Cancelled from outside: reported, not retried.
		{"cancelled", "CANCELLED", runner.Failed, 1, "cancelled", 1},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			fr := runFake(t, func(sub, index int) string {
				if sub == 1 && index == 0 {
					if tc.first == "COMPLETED-EMPTY" {
						return "COMPLETED_NO_NODE"
					}
					return tc.first
				}
				return "COMPLETED"
			})
			for _, k := range []string{"r=0.80000", "r=0.85000", "r=0.90000"} {
				rec := fr.recs[k]
				if rec.State != tc.wantState || rec.Attempts != tc.wantAttempts || rec.Class != tc.wantClass {
					t.Errorf("%s: %s after %d attempts, class %q; want %s after %d, class %q (%s)",
						k, rec.State, rec.Attempts, rec.Class, tc.wantState, tc.wantAttempts, tc.wantClass, rec.LastError)
				}
			}
			if fr.fake.subs != tc.wantSubs {
				t.Errorf("%d submissions, want %d", fr.fake.subs, tc.wantSubs)
			}
			if tc.first == "TIMEOUT" {
				b, err := os.ReadFile(filepath.Join(fr.fake.tasks[len(fr.fake.tasks)-1].jobDir, "submit.sh"))
				if err != nil || !strings.Contains(string(b), "--time=0-00:20:00") {
					t.Errorf("retry after TIMEOUT does not ask for twice the time (10m → 20m):\n%s", b)
				}
			}
			if tc.wantState == runner.Failed && fr.err == nil {
				t.Errorf("run error nil with failed points")
			}
		})
	}
}

func TestDecodeConfig_Errors(t *testing.T) {
	tests := []struct{ body, wantKey string }{
		{`partition = "a b"`, "queue.slurm.partition"},
		{`points_per_task = -1`, "queue.slurm.points_per_task"},
		{`poll_interval = "1s"`, "queue.slurm.poll_interval"},
		{`binary = "wellscan"`, "queue.slurm.binary"},
		{`extra = ["--job-name=x"]`, "queue.slurm.extra"},
		{`setup = ["module load a\nmodule load b"]`, "queue.slurm.setup"},
		{`colour = "red"`, "queue.slurm.colour"},
		{`time = "soon"`, "time"},
	}
	for _, tc := range tests {
		t.Run(tc.wantKey, func(t *testing.T) {
			text := strings.SplitN(fakeSpec, "[queue.slurm]", 2)[0] + "[queue.slurm]\n" + tc.body + "\n"
			spec, err := planner.Decode([]byte(text), "scan.toml")
			if err != nil {
				t.Fatal(err)
			}
			_, err = decodeConfig(spec)
			if err == nil || !strings.Contains(err.Error(), tc.wantKey) {
				t.Errorf("DecodeConfig(%s) = %v, want an error naming %s", tc.body, err, tc.wantKey)
			}
		})
	}
}

func TestDecodeConfig_Defaults(t *testing.T) {
	spec, err := planner.Decode([]byte(strings.SplitN(fakeSpec, "[queue.slurm]", 2)[0]), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	c, err := decodeConfig(spec)
	if err != nil {
		t.Fatal(err)
	}
	if got := c.Policy(); got != defaultPollPolicy() {
		t.Errorf("policy %+v, want the memo defaults %+v", got, defaultPollPolicy())
	}
	if c.Grace() != 3*time.Minute {
		t.Errorf("grace %s, want 3 poll intervals (3m)", c.Grace())
	}
}

func (f *fakeSlurm) locked(fn func()) {
	f.mu.Lock()
	defer f.mu.Unlock()
	fn()
}

// newFakeQueue returns a queue for spec that talks to fake.
func newFakeQueue(t *testing.T, spec *planner.Spec, fake *fakeSlurm) *Queue {
	t.Helper()
	q, err := NewQueue(spec)
	if err != nil {
		t.Fatal(err)
	}
	q.Client = mustClient(t, Slurm(), fake)
	q.Binary = "/nonexistent/wellscan"
	q.gather = 20 * time.Millisecond
	return q
}

func TestQueue_Run_InterruptedThenAdopted(t *testing.T) {
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(fakeSpec), 0o644); err != nil {
		t.Fatal(err)
	}
	spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	backend, err := model.New(spec)
	if err != nil {
		t.Fatal(err)
	}
	fake := &fakeSlurm{t: t, fate: func(int, int) string { return "COMPLETED" }, hold: true}
	runOnce := func(ctx context.Context) (*Queue, error) {
		st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
		if err != nil {
			t.Fatal(err)
		}
		defer st.Close()
		q := newFakeQueue(t, spec, fake)
		_, err = (&runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: backend, Queue: q}).Run(ctx)
		return q, err
	}

	// Run 1 submits, polls while every task waits, and is interrupted.
	ctx, cancel := context.WithCancel(t.Context())
	done := make(chan error, 1)
	go func() { _, err := runOnce(ctx); done <- err }()
	deadline := time.Now().Add(10 * time.Second)
	for {
		var polls int
		fake.locked(func() { polls = fake.polls })
		if polls >= 3 {
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("run 1 did not poll within 10 s")
		}
		time.Sleep(10 * time.Millisecond)
	}
	cancel()
	if err := <-done; !errors.Is(err, context.Canceled) {
		t.Fatalf("run 1: %v, want an error wrapping context.Canceled", err)
	}

	// Run 2 finds the waiting tasks by their token and adopts them.
	fake.locked(func() { fake.hold = false })
	q, err := runOnce(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	if fake.subs != 1 {
		t.Errorf("%d submissions, want 1: the second run must adopt, not resubmit", fake.subs)
	}
	if s := q.Stats(); s.Adopted != 4 || s.Submissions != 0 {
		t.Errorf("run 2 stats %+v, want 4 adopted tasks and no submission", s)
	}
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	recs, err := st.Points()
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range recs {
		if r.State != runner.Done || r.Attempts != 1 {
			t.Errorf("%s: %s after %d attempts, want done after 1", r.Key, r.State, r.Attempts)
		}
	}
}

func TestPackSize_Cases(t *testing.T) {
	ms := func(v ...int) []time.Duration {
		var d []time.Duration
		for _, x := range v {
			d = append(d, time.Duration(x)*time.Minute)
		}
		return d
	}
	tests := []struct {
		name       string
		configured int
		measured   []time.Duration
		limit      time.Duration
		want       int
	}{
		{"configured wins", 5, ms(1, 1, 1), time.Hour, 5},
		{"nothing measured", 0, ms(1, 1), time.Hour, defaultPointsPerTask},
		{"30 min of 4-min points", 0, ms(4, 4, 4), 0, 8},                   // ceil(30/4)
		{"long points: one per task", 0, ms(50, 60, 70), 0, 1},             // ceil(30/60) = 1
		{"fast points: capped", 0, ms(0, 0, 0), 0, packMax},                // 1 ms floor → cap
		{"walltime bounds k·p90", 0, ms(2, 2, 2, 10), 40 * time.Minute, 3}, // 15 by p50, 3·10 ≤ 32
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := packSize(tc.configured, tc.measured, tc.limit); got != tc.want {
				t.Errorf("PackSize = %d, want %d", got, tc.want)
			}
		})
	}
}

// The example spec in README.md is complete and valid.
func TestDecodeConfig_READMEExample(t *testing.T) {
	b, err := os.ReadFile("README.md")
	if err != nil {
		t.Fatal(err)
	}
	_, rest, ok := strings.Cut(string(b), "```toml\n")
	body, _, ok2 := strings.Cut(rest, "```")
	if !ok || !ok2 {
		t.Fatal("README.md has no ```toml block")
	}
	spec, err := planner.Decode([]byte(body), "README.md")
	if err != nil {
		t.Fatal(err)
	}
	c, err := decodeConfig(spec)
	if err != nil {
		t.Fatal(err)
	}
	if spec.Queue.Kind != "slurm" || c.Partition != "short" || c.PointsPerTask != 8 || len(c.Setup) != 2 || c.Time.Duration != 30*time.Minute {
		t.Errorf("decoded %+v", c)
	}
	// The script it renders passes the profile's checks.
	ss := ScriptSpec{JobName: "ws-00000000", Token: "t-1", Tasks: 2, JobDir: "/scratch/scan/jobs/t-1",
		Worker: []string{c.Binary, NodeSubcommand}, Resources: c.Resources()}
	if _, err := Render(Slurm(), ss); err != nil {
		t.Errorf("render: %v", err)
	}
}

func countStates(recs map[string]runner.PointRecord) map[runner.State]int {
	c := map[runner.State]int{}
	for _, r := range recs {
		c[r.State]++
	}
	return c
}

// Detached: the first run submits and returns with every point submitted;
// a second detached run adopts the live tasks (no new sbatch); an attached
// run then collects every result. Each point is computed once.
func TestQueue_Detach_SubmitAdoptCollect(t *testing.T) {
	dir := fakeScanDir(t)
	fake := &fakeSlurm{t: t, fate: func(int, int) string { return "COMPLETED" }, hold: true}
	fr := runFakeIn(t, dir, fake, true)
	if fr.err != nil || !fr.sum.Detached {
		t.Fatalf("detached run: err %v, detached %v", fr.err, fr.sum.Detached)
	}
	if c := countStates(fr.recs); c[runner.Submitted] != 10 {
		t.Fatalf("after the detached run: %v, want 10 submitted", c)
	}
	if fake.calls["sbatch"] != 1 {
		t.Fatalf("%d sbatch calls, want 1", fake.calls["sbatch"])
	}
	for k, rec := range fr.recs {
		if rec.Attempts != 1 {
			t.Errorf("%s: %d attempts recorded, want 1", k, rec.Attempts)
		}
	}

	// Still pending: a second detached run adopts and submits nothing.
	fr = runFakeIn(t, dir, fake, true)
	if fr.err != nil || !fr.sum.Detached || fake.calls["sbatch"] != 1 || fr.stats.Adopted != 4 {
		t.Fatalf("second detached run: err %v, detached %v, %d sbatch, %d adopted (want 1 sbatch, 4 adopted)", fr.err, fr.sum.Detached, fake.calls["sbatch"], fr.stats.Adopted)
	}
	if c := countStates(fr.recs); c[runner.Submitted] != 10 {
		t.Fatalf("after the second detached run: %v", c)
	}

	fake.mu.Lock()
	fake.hold = false
	fake.mu.Unlock()
	fr = runFakeIn(t, dir, fake, false)
	if fr.err != nil || fr.sum.Detached {
		t.Fatalf("attached run: %v (detached %v)", fr.err, fr.sum.Detached)
	}
	for k, rec := range fr.recs {
		if rec.State != runner.Done || rec.Attempts != 1 {
			t.Errorf("%s: %s after %d attempts, want done after 1", k, rec.State, rec.Attempts)
		}
	}
	if fake.calls["sbatch"] != 1 {
		t.Errorf("%d sbatch calls in all, want 1", fake.calls["sbatch"])
	}
}

// Tasks that end while no run watches are decided when a later run lists
// them: a CANCELLED task's points fail as cancelled (not resubmitted), a
// TIMEOUT task's points are resubmitted with twice the time, without
// using an attempt.
func TestQueue_Detach_EndedWhileDetached(t *testing.T) {
	dir := fakeScanDir(t)
	fake := &fakeSlurm{t: t, hold: true, fate: func(sub, index int) string {
		switch {
		case sub == 1 && index == 0:
			return "CANCELLED"
		case sub == 1 && index == 1:
			return "TIMEOUT"
		}
		return "COMPLETED"
	}}
	if fr := runFakeIn(t, dir, fake, true); fr.err != nil || !fr.sum.Detached {
		t.Fatalf("detached run: %v", fr.err)
	}
	// The tasks run to their ends with no orchestrator watching: two
	// listings move each task PENDING → RUNNING → its fate.
	fake.mu.Lock()
	fake.hold = false
	fake.mu.Unlock()
	for range 2 {
		if _, err := fake.Run(t.Context(), Cmd{Argv: []string{"squeue"}}); err != nil {
			t.Fatal(err)
		}
	}
	fr := runFakeIn(t, dir, fake, false)
	if !errors.Is(fr.err, runner.ErrPointsFailed) {
		t.Fatalf("run: %v, want some points failed (the cancelled ones)", fr.err)
	}
	c := countStates(fr.recs)
	if c[runner.Failed] != 3 || c[runner.Done] != 7 {
		t.Fatalf("states %v, want 3 failed (cancelled task) and 7 done", c)
	}
	for _, rec := range fr.recs {
		if rec.State == runner.Failed && rec.Class != "cancelled" {
			t.Errorf("%s: failed as %q, want cancelled", rec.Key, rec.Class)
		}
		if rec.Attempts != 1 {
			t.Errorf("%s: %d attempts, want 1 (neither class uses one)", rec.Key, rec.Attempts)
		}
	}
	// The timed-out task's 3 points were submitted again, with 20 min.
	if fake.subs != 2 {
		t.Fatalf("%d submissions, want 2", fake.subs)
	}
	var jobs []string
	ents, _ := os.ReadDir(filepath.Join(dir, JobsDir))
	for _, e := range ents {
		b, err := os.ReadFile(filepath.Join(dir, JobsDir, e.Name(), "submit.sh"))
		if err == nil {
			jobs = append(jobs, string(b))
		}
	}
	n := 0
	for _, j := range jobs {
		if strings.Contains(j, "--time=0-00:20:00") {
			n++
		}
	}
	if n != 1 {
		t.Errorf("%d scripts ask for 20 min, want 1 (the resubmission); scripts:\n%s", n, strings.Join(jobs, "\n---\n"))
	}
}

// A controller that stops answering for a while: the run says so once,
// says when it answers again (both as notice events of the runner), and
// finishes with every point done once.
func TestQueue_Run_SchedulerUnreachableNoticed(t *testing.T) {
	fake := &fakeSlurm{t: t, fate: func(int, int) string { return "COMPLETED" }, down: 3}
	fr := runFakeIn(t, fakeScanDir(t), fake, false)
	notices := fr.notices
	if fr.err != nil {
		t.Fatal(fr.err)
	}
	for k, rec := range fr.recs {
		if rec.State != runner.Done || rec.Attempts != 1 {
			t.Errorf("%s: %s after %d attempts", k, rec.State, rec.Attempts)
		}
	}
	if len(notices) != 2 || !strings.Contains(notices[0], "Slurm does not answer") || !strings.Contains(notices[0], "Unable to contact") ||
		!strings.Contains(notices[1], "answers again after 3 failed poll(s)") {
		t.Errorf("notices %q, want one 'does not answer' and one 'answers again after 3'", notices)
	}
	if fake.subs != 1 {
		t.Errorf("%d submissions, want 1 (an outage is no reason to resubmit)", fake.subs)
	}
}
