//go:build slurm

// Live tests against a real Slurm, started by the project's own script:
//
//	bash testdata/slurm/localslurm.sh start && go test -tags slurm ./runner/slurm/
//
// The test binary doubles as the compute-node worker: the job scripts exec
// it with the argument "node-run", and TestMain then behaves as a tiny
// worker that reads its manifest line and writes one result file per point
// with writeResultAtomic.
package slurm

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

const workerSubcommand = "node-run"

func TestMain(m *testing.M) {
	if len(os.Args) > 1 && os.Args[1] == workerSubcommand {
		os.Exit(fakeWorker(os.Args[2:]))
	}
	os.Exit(m.Run())
}

// fakeWorker is the compute-node side used by the live tests. Point keys
// steer it: "sleep=N" sleeps N seconds first, "exit=N" exits with N; every
// other key gets a result file points/<key>/result.json.
func fakeWorker(args []string) int {
	fs := flag.NewFlagSet(workerSubcommand, flag.ContinueOnError)
	jobDir := fs.String("job-dir", "", "job directory")
	task := fs.Int("task", -1, "array task index")
	if err := fs.Parse(args); err != nil {
		return 2
	}
	m, err := readManifest(*jobDir)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 2
	}
	keys, err := m.Task(*task)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 2
	}
	scan := filepath.Dir(filepath.Dir(*jobDir)) // <scan>/jobs/<id>
	for _, k := range keys {
		if v, ok := strings.CutPrefix(k, "sleep="); ok {
			n, _ := strconv.Atoi(v)
			time.Sleep(time.Duration(n) * time.Second)
			continue
		}
		if v, ok := strings.CutPrefix(k, "exit="); ok {
			n, _ := strconv.Atoi(v)
			return n
		}
		dir := filepath.Join(scan, "points", k)
		if err := os.MkdirAll(dir, 0o755); err != nil {
			fmt.Fprintln(os.Stderr, err)
			return 1
		}
		data, _ := json.Marshal(map[string]any{
			"v": 1, "key": k, "task": *task, "job": os.Getenv("SLURM_ARRAY_JOB_ID"),
		})
		if err := writeResultAtomic(dir, "result.json", data); err != nil {
			fmt.Fprintln(os.Stderr, err)
			return 1
		}
	}
	return 0
}

// liveEnv is one test's scan directory, client and poller.
type liveEnv struct {
	t       testing.TB
	scan    string
	jobName string
	counter *CountingRunner
	client  *Client
	poller  *poller
	seq     int
	// maxCommands is the most scheduler commands one poll cycle may run:
	// 1 (squeue) when finished jobs stay in squeue for the whole test
	// (MinJobAge ≥ 60 s), else 2 (squeue plus one sacct for those that left).
	maxCommands int
}

func newLiveEnv(t testing.TB) *liveEnv {
	t.Helper()
	if _, err := exec.LookPath("sbatch"); err != nil {
		t.Fatal("sbatch not found: start the local Slurm first (bash testdata/slurm/localslurm.sh start)")
	}
	if out, err := exec.Command("scontrol", "ping").CombinedOutput(); err != nil || !strings.Contains(string(out), "is UP") {
		t.Fatalf("slurmctld is not up (%v: %s): start it with bash testdata/slurm/localslurm.sh start", err, out)
	}
	lim, err := readSlurmLimits(t.Context(), ExecRunner{})
	if err != nil {
		t.Fatal(err)
	}
	e := &liveEnv{t: t, scan: t.TempDir(), maxCommands: 1}
	if lim.MinJobAge < time.Minute {
		e.maxCommands = 2
	}
	e.jobName = JobNameFor(t.Name() + time.Now().String())
	e.counter = &CountingRunner{Next: ExecRunner{}}
	e.client = mustClient(t, Slurm(), e.counter)
	p, err := newPoller(e.client, e.jobName, nil)
	if err != nil {
		t.Fatal(err)
	}
	e.poller = p
	t.Cleanup(func() {
		// Leave nothing running on the shared node.
		_ = e.client.Cancel(context.Background(), e.jobName)
	})
	return e
}

// prepare renders and writes one array whose task i runs keys[i].
func (e *liveEnv) prepare(res Resources, keys ...[]string) (ScriptSpec, string) {
	e.t.Helper()
	e.seq++
	exe, err := os.Executable()
	if err != nil {
		e.t.Fatal(err)
	}
	spec := ScriptSpec{
		JobName:   e.jobName,
		Token:     fmt.Sprintf("%s-r1-%d", strings.TrimPrefix(e.jobName, "ws-"), e.seq),
		Tasks:     len(keys),
		Throttle:  4,
		JobDir:    filepath.Join(e.scan, "jobs", fmt.Sprintf("r1-%d", e.seq)),
		Worker:    []string{exe, workerSubcommand},
		Resources: res,
	}
	script, err := PrepareJob(Slurm(), spec, &Manifest{First: 0, Tasks: keys})
	if err != nil {
		e.t.Fatal(err)
	}
	return spec, script
}

// prepareN prepares an array of n one-point tasks.
func (e *liveEnv) prepareN(res Resources, n int) (ScriptSpec, string) {
	keys := make([][]string, n)
	for i := range keys {
		keys[i] = []string{fmt.Sprintf("b=%d,i=%d", e.seq, i)}
	}
	return e.prepare(res, keys...)
}

// submit prepares and submits one array and tracks its tasks.
func (e *liveEnv) submit(res Resources, keys ...[]string) (string, ScriptSpec) {
	e.t.Helper()
	spec, script := e.prepare(res, keys...)
	submitted := time.Now()
	id, err := e.client.submit(e.t.Context(), script)
	if err != nil {
		e.t.Fatal(err)
	}
	e.poller.Track(id, 0, len(keys), submitted)
	return id, spec
}

// livePolicy polls fast: the local node finishes trivial tasks in ~1-3 s.
func livePolicy() pollPolicy {
	return pollPolicy{FirstDelay: 300 * time.Millisecond, Interval: 300 * time.Millisecond, Backoff: 1.5,
		Max: 2 * time.Second, Floor: 100 * time.Millisecond}
}

// waitFinal watches until every tracked task is in a final state, checking
// the number of scheduler commands of each cycle.
func (e *liveEnv) waitFinal(timeout time.Duration) pollSnapshot {
	e.t.Helper()
	ctx, cancel := context.WithTimeout(e.t.Context(), timeout)
	defer cancel()
	snap, err := e.poller.Watch(ctx, livePolicy(), nil, func(s pollSnapshot) bool {
		if s.Commands > e.maxCommands {
			e.t.Errorf("poll cycle ran %d scheduler commands, want at most %d", s.Commands, e.maxCommands)
		}
		for _, task := range s.Tasks {
			if !task.Class().Terminal() {
				return false
			}
		}
		return true
	})
	if err != nil {
		e.t.Fatalf("waiting for final states: %v (last: %+v)", err, snap.Tasks)
	}
	return snap
}

func TestLive_Array_ThreeTasksComplete(t *testing.T) {
	e := newLiveEnv(t)
	id, spec := e.submit(Resources{Time: 2 * time.Minute, MemMB: 100, Partition: "debug"},
		[]string{"r=1.10000"}, []string{"r=1.12000"}, []string{"r=1.14000", "r=1.16000"})
	snap := e.waitFinal(60 * time.Second)
	if len(snap.Tasks) != 3 {
		t.Fatalf("tasks = %+v, want 3", snap.Tasks)
	}
	for i := 0; i < 3; i++ {
		task := snap.Tasks[taskRef{id, i}]
		if task.State != "COMPLETED" {
			t.Errorf("task %d: state %q, want COMPLETED", i, task.State)
		}
		// The token travels in --comment, so an interrupted submit can be adopted.
		if tok, ok := task.token(); !ok || tok != spec.Token {
			t.Errorf("task %d: token %q (%v), want %q", i, tok, ok, spec.Token)
		}
	}
	for i, k := range []string{"r=1.10000", "r=1.12000", "r=1.14000", "r=1.16000"} {
		data, err := readResult(filepath.Join(e.scan, "points", k, "result.json"))
		if err != nil {
			t.Errorf("point %s: %v", k, err)
			continue
		}
		var r struct {
			Key  string
			Task int
			Job  string
		}
		if err := json.Unmarshal(data, &r); err != nil {
			t.Fatal(err)
		}
		if r.Key != k || r.Task != min(i, 2) || r.Job != id {
			t.Errorf("point %s: result %+v, want key %s, task %d, job %s", k, r, k, min(i, 2), id)
		}
	}
}

func TestLive_Submit_RejectedPartition(t *testing.T) {
	e := newLiveEnv(t)
	exe, _ := os.Executable()
	spec := ScriptSpec{JobName: e.jobName, Tasks: 1, JobDir: filepath.Join(e.scan, "jobs", "bad"),
		Worker: []string{exe, workerSubcommand}, Resources: Resources{Partition: "nope"}}
	script, err := PrepareJob(Slurm(), spec, &Manifest{Tasks: [][]string{{"a"}}})
	if err != nil {
		t.Fatal(err)
	}
	_, err = e.client.submit(t.Context(), script)
	var se *submitError
	if !errors.As(err, &se) || se.Kind != submitRejected || !strings.Contains(se.Message, "Invalid partition") {
		t.Errorf("Submit error = %v, want a rejected SubmitError naming the partition", err)
	}
}

// waitState polls until every task of the array is in one of the classes.
func (e *liveEnv) waitClass(id string, n int, classes ...Class) {
	e.t.Helper()
	deadline := time.Now().Add(30 * time.Second)
	for time.Now().Before(deadline) {
		snap, err := e.poller.Poll(e.t.Context())
		if err != nil {
			e.t.Fatal(err)
		}
		ok := 0
		for i := 0; i < n; i++ {
			for _, c := range classes {
				if snap.Tasks[taskRef{id, i}].Class() == c {
					ok++
				}
			}
		}
		if ok == n {
			return
		}
		time.Sleep(200 * time.Millisecond)
	}
	e.t.Fatalf("tasks of %s did not reach %v within 30 s", id, classes)
}

func TestLive_ExternalScancel_Cancelled(t *testing.T) {
	e := newLiveEnv(t)
	id, spec := e.submit(Resources{Time: 5 * time.Minute, MemMB: 100}, []string{"sleep=300"}, []string{"sleep=300"})
	e.waitClass(id, 2, classActive)
	// Someone else cancels the array, from outside wellscan.
	if out, err := exec.Command("scancel", id).CombinedOutput(); err != nil {
		t.Fatalf("scancel %s: %v: %s", id, err, out)
	}
	snap := e.waitFinal(30 * time.Second)
	pol := defaultRetryPolicy()
	for i := 0; i < 2; i++ {
		task := snap.Tasks[taskRef{id, i}]
		if task.State != "CANCELLED" {
			t.Errorf("task %d: state %q, want CANCELLED", i, task.State)
		}
		if d := pol.Decide(task.Class(), spec.Resources, budget{}); d.Retry {
			t.Errorf("task %d: cancelled task would be retried: %s", i, d.Reason)
		}
	}
}

func TestLive_CancelByName_Confirms(t *testing.T) {
	e := newLiveEnv(t)
	// Two arrays under the scan's name; one task running, others pending
	// behind the throttle or still starting.
	id1, _ := e.submit(Resources{Time: 5 * time.Minute, MemMB: 100}, []string{"sleep=300"}, []string{"sleep=300"})
	id2, _ := e.submit(Resources{Time: 5 * time.Minute, MemMB: 100, Partition: "debug"}, []string{"sleep=300"})
	e.waitClass(id1, 2, classActive, classWaiting)
	before := e.counter.Counts()["scancel"]
	if err := e.client.Cancel(t.Context(), e.jobName); err != nil {
		t.Fatal(err)
	}
	if got := e.counter.Counts()["scancel"] - before; got != 1 {
		t.Errorf("Cancel ran scancel %d times for 2 arrays, want 1 (by name)", got)
	}
	ctx, cancel := context.WithTimeout(t.Context(), 30*time.Second)
	defer cancel()
	tasks, err := e.client.ConfirmCancelled(ctx, e.jobName, 200*time.Millisecond)
	if err != nil {
		t.Fatal(err)
	}
	for _, task := range tasks {
		if task.State != "CANCELLED" {
			t.Errorf("record %s: %s, want CANCELLED", task.ref(), task.State)
		}
	}
	// Tasks cancelled while pending may be listed as one record for the
	// whole array; the poller maps it onto every tracked task.
	snap, err := e.poller.Poll(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	for _, ref := range []taskRef{{id1, 0}, {id1, 1}, {id2, 0}} {
		if got := snap.Tasks[ref]; got.State != "CANCELLED" {
			t.Errorf("task %s: %q, want CANCELLED", ref, got.State)
		}
	}
	if len(snap.Tasks) != 3 {
		t.Errorf("poller has %d tasks, want 3: %+v", len(snap.Tasks), snap.Tasks)
	}
}

func TestLive_Poll_CommandsPerCycleConstant(t *testing.T) {
	e := newLiveEnv(t)
	res := Resources{Time: 2 * time.Minute, MemMB: 100}
	counts := []int{1, 4, 10}
	var ids []string
	total := 0
	for _, n := range counts {
		keys := make([][]string, n)
		for i := range keys {
			keys[i] = []string{fmt.Sprintf("n=%d,i=%d", n, i)}
		}
		id, _ := e.submit(res, keys...)
		ids = append(ids, id)
		total += n
	}
	before := e.counter.Total()
	cycles := 0
	ctx, cancel := context.WithTimeout(t.Context(), 120*time.Second)
	defer cancel()
	snap, err := e.poller.Watch(ctx, livePolicy(), nil, func(s pollSnapshot) bool {
		cycles++
		if s.Commands > e.maxCommands {
			t.Errorf("cycle %d with %d tasks: %d commands, want at most %d", cycles, len(s.Tasks), s.Commands, e.maxCommands)
		}
		return s.Counts()[classCompleted] == total
	})
	if err != nil {
		t.Fatal(err)
	}
	if got := e.counter.Total() - before; got > e.maxCommands*cycles {
		t.Errorf("%d scheduler commands over %d cycles for %d tasks in %d arrays, want at most %d per cycle", got, cycles, total, len(ids), e.maxCommands)
	}
	if len(snap.Tasks) != total {
		t.Errorf("tracked %d tasks, want %d", len(snap.Tasks), total)
	}
	t.Logf("%d tasks in %d arrays: %d cycles, %d commands", total, len(ids), cycles, e.counter.Total()-before)
}

func TestLive_FailedTask_ExitCode(t *testing.T) {
	e := newLiveEnv(t)
	id, spec := e.submit(Resources{Time: 2 * time.Minute, MemMB: 100}, []string{"exit=3"})
	snap := e.waitFinal(60 * time.Second)
	task := snap.Tasks[taskRef{id, 0}]
	if task.State != "FAILED" {
		t.Fatalf("state %q, want FAILED (exit 3; SOURCES.md §4)", task.State)
	}
	if d := defaultRetryPolicy().Decide(task.Class(), spec.Resources, budget{}); !d.Retry || d.Used.Attempts != 1 {
		t.Errorf("Decide(FAILED) = %+v, want a retry charged to attempts", d)
	}
}

// Costs 60-90 s: Slurm checks time limits every 30 s and has minute
// resolution (SOURCES.md §11).
func TestLive_Timeout_RetriedWithMoreTime(t *testing.T) {
	if os.Getenv("WELLSCAN_SLURM_SLOW") != "1" {
		t.Skip("set WELLSCAN_SLURM_SLOW=1 to run the ~90 s TIMEOUT test")
	}
	e := newLiveEnv(t)
	id, spec := e.submit(Resources{Time: time.Minute, MemMB: 100}, []string{"sleep=300"})
	snap := e.waitFinal(150 * time.Second)
	task := snap.Tasks[taskRef{id, 0}]
	if task.State != "TIMEOUT" {
		t.Fatalf("state %q, want TIMEOUT", task.State)
	}
	d := defaultRetryPolicy().Decide(task.Class(), spec.Resources, budget{})
	if !d.Retry || d.Resources.Time != 2*time.Minute {
		t.Errorf("Decide(TIMEOUT) = %+v, want a retry with 2 min", d)
	}
}

// The history path: with accounting (SLURM_LOCAL_ACCOUNTING=1) sacct reports
// the final states of the array's tasks; without it, the client recognises
// "accounting storage is disabled" and the test skips after checking that.
func TestLive_History_Sacct(t *testing.T) {
	e := newLiveEnv(t)
	start := time.Now()
	id, _ := e.submit(Resources{Time: 2 * time.Minute, MemMB: 100}, []string{"h=0"}, []string{"exit=3"})
	e.waitFinal(60 * time.Second)
	_, err := e.client.listHistory(t.Context(), e.jobName, start.Add(-time.Minute))
	if errors.Is(err, errNoAccounting) {
		t.Skipf("accounting is off (%v); start the local Slurm with SLURM_LOCAL_ACCOUNTING=1 to test sacct", err)
	}
	if err != nil {
		t.Fatal(err)
	}
	// sacct shows array tasks 2-5 s after squeue (SOURCES.md §5).
	want := map[taskRef]string{{id, 0}: "COMPLETED", {id, 1}: "FAILED"}
	deadline := time.Now().Add(30 * time.Second)
	for {
		hist, err := e.client.listHistory(t.Context(), e.jobName, start.Add(-time.Minute))
		if err != nil {
			t.Fatal(err)
		}
		got := map[taskRef]string{}
		exit := map[taskRef]string{}
		for _, h := range hist {
			got[h.ref()] = h.State
			exit[h.ref()] = h.ExitCode
		}
		if fmt.Sprint(got) == fmt.Sprint(want) {
			if exit[taskRef{id, 1}] != "3:0" {
				t.Errorf("exit code of the failed task = %q, want 3:0", exit[taskRef{id, 1}])
			}
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("sacct states = %v, want %v", got, want)
		}
		time.Sleep(500 * time.Millisecond)
	}
}

// Tasks leave squeue after MinJobAge; the poller then asks sacct once per
// cycle for their final states. Needs a local Slurm started with
// SLURM_LOCAL_ACCOUNTING=1 SLURM_LOCAL_MIN_JOB_AGE=5 (jobs vanish ~7 s after
// they end, SOURCES.md §4); skipped otherwise.
func TestLive_Poll_SacctAfterJobsLeaveQueue(t *testing.T) {
	e := newLiveEnv(t)
	lim, err := readSlurmLimits(t.Context(), ExecRunner{})
	if err != nil {
		t.Fatal(err)
	}
	if lim.MinJobAge > 30*time.Second {
		t.Skipf("MinJobAge is %s; start the local Slurm with SLURM_LOCAL_MIN_JOB_AGE=5 SLURM_LOCAL_ACCOUNTING=1 to test this", lim.MinJobAge)
	}
	if _, err := e.client.listHistory(t.Context(), e.jobName, time.Now()); errors.Is(err, errNoAccounting) {
		t.Skip("accounting is off; start the local Slurm with SLURM_LOCAL_ACCOUNTING=1 SLURM_LOCAL_MIN_JOB_AGE=5")
	}
	id, _ := e.submit(Resources{Time: 2 * time.Minute, MemMB: 100}, []string{"a=0"}, []string{"exit=3"})
	ctx, cancel := context.WithTimeout(t.Context(), 2*time.Minute)
	defer cancel()
	// The poller is away until the tasks have ended and left squeue (an
	// orchestrator that was down longer than MinJobAge): their final states
	// can then only come from sacct. Had it seen them final in squeue, it
	// would not ask sacct at all.
	pol := livePolicy()
	pol.FirstDelay, pol.Max = 25*time.Second, 25*time.Second
	snap, err := e.poller.Watch(ctx, pol, nil, func(s pollSnapshot) bool {
		if s.Commands > 2 {
			t.Errorf("cycle ran %d commands, want at most 2", s.Commands)
		}
		for _, task := range s.Tasks {
			if !task.FromHistory {
				return false
			}
		}
		return true
	})
	if err != nil {
		t.Fatalf("tasks never came from sacct: %v (last %+v)", err, snap.Tasks)
	}
	if got := snap.Tasks[taskRef{id, 0}]; got.State != "COMPLETED" {
		t.Errorf("task 0 from sacct: %q, want COMPLETED", got.State)
	}
	if got := snap.Tasks[taskRef{id, 1}]; got.State != "FAILED" || got.ExitCode != "3:0" {
		t.Errorf("task 1 from sacct: %q %q, want FAILED 3:0", got.State, got.ExitCode)
	}
	if snap.Accounting != accountingOn {
		t.Errorf("accounting = %s, want on", snap.Accounting)
	}
}
