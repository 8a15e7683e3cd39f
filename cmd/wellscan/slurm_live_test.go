//go:build slurm

// Live end-to-end tests of [queue] kind = "slurm" against a real one-node
// Slurm started by the project's own script:
//
//	bash testdata/slurm/localslurm.sh start && go test -tags slurm ./cmd/wellscan/
//
// The wellscan binary is built into a temporary directory; the job scripts
// run its node-task subcommand. Scan directories live under t.TempDir(),
// which the jobs see because they run on this machine (as root).
package main

import (
	"bufio"
	"context"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/slurm"
)

// h2SlurmSpec is a 20-point RHF/STO-3G stretch of H2 (an invented scan)
// with refinement off, packed 4 points per array task. SCF energies are
// converged to 1e-12 hartree so that runs with different starting guesses
// agree far below the 1e-9 hartree the comparison allows.
const h2SlurmSpec = `title = "H2 stretch on the local Slurm"
[molecule]
geometry = """
H 0 0 0
H 0 0 0.74
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.50
to = 1.45
count = 20
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "rhf"
basis = "STO-3G"
convergence = 1e-12
[queue]
kind = "slurm"
[queue.slurm]
points_per_task = 4
throttle = 4
time = "5m"
memory_mb = 200
poll_interval = "300ms"
fast_poll = true
lost_after = "10s"
`

func needSlurm(t *testing.T) {
	t.Helper()
	if _, err := exec.LookPath("sbatch"); err != nil {
		t.Fatal("sbatch not found: start the local Slurm first (bash testdata/slurm/localslurm.sh start)")
	}
	if out, err := exec.Command("scontrol", "ping").CombinedOutput(); err != nil || !strings.Contains(string(out), "is UP") {
		t.Fatalf("slurmctld is not up (%v: %s): bash testdata/slurm/localslurm.sh start", err, out)
	}
}

// slurmScanDir makes a scan directory with spec and cancels the scan's
// jobs when the test ends, so nothing is left on the shared node.
func slurmScanDir(t *testing.T, spec string) string {
	t.Helper()
	dir := t.TempDir()
	writeSpec(t, dir, spec)
	abs, err := filepath.Abs(dir)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		_ = exec.Command("scancel", "--me", "--name="+slurm.JobNameFor(abs)).Run()
	})
	return abs
}

// runInProcess runs the scan in dir with the Slurm queue whose job scripts
// call bin, counting scheduler commands.
func runInProcess(t *testing.T, dir, bin string) (*slurm.Queue, *slurm.CountingRunner, runner.Summary) {
	t.Helper()
	spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	q, err := slurm.NewQueue(spec)
	if err != nil {
		t.Fatal(err)
	}
	counter := &slurm.CountingRunner{Next: slurm.ExecRunner{}}
	if q.Client, err = slurm.NewClient(slurm.Slurm(), counter); err != nil {
		t.Fatal(err)
	}
	q.Binary = bin
	backend, err := newBackend(spec)
	if err != nil {
		t.Fatal(err)
	}
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	ctx, cancel := context.WithTimeout(t.Context(), 2*time.Minute)
	defer cancel()
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: backend, Queue: q}
	sum, err := r.Run(ctx)
	if err != nil {
		t.Fatalf("run on Slurm: %v", err)
	}
	return q, counter, sum
}

func TestSlurm_Run_EnergiesEqualLocal(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)

	local := t.TempDir()
	writeSpec(t, local, strings.Replace(h2SlurmSpec, `kind = "slurm"`, `kind = "local"`, 1))
	start := time.Now()
	runToEnd(t, bin, local)
	localTime := time.Since(start)
	want, _ := storeState(t, local)

	dir := slurmScanDir(t, h2SlurmSpec)
	start = time.Now()
	q, counter, sum := runInProcess(t, dir, bin)
	slurmTime := time.Since(start)
	got, done := storeState(t, dir)

	if len(want) != 20 || len(got) != 20 {
		t.Fatalf("%d points on Slurm, %d locally, want 20 each", len(got), len(want))
	}
	for k, w := range want {
		g := got[k]
		if g.State != runner.Done || done[k] != 1 {
			t.Errorf("%s: %s, done %d times, want done once", k, g.State, done[k])
			continue
		}
		// The requirement: the same energies as a local run within
		// 1e-9 hartree (both converged to 1e-12, see h2SlurmSpec).
		if !scalar.EqualWithinAbs(g.Energy, w.Energy, 1e-9) {
			t.Errorf("%s: E = %.12f on Slurm, %.12f locally", k, g.Energy, w.Energy)
		}
	}
	if sum.Computed != 20 {
		t.Errorf("computed %d, want 20", sum.Computed)
	}
	s := q.Stats()
	// 20 points at 4 per task: one array of 5 tasks, one sbatch.
	if s.Submissions != 1 || s.Points != 20 || counter.Counts()["sbatch"] != 1 {
		t.Errorf("stats %+v, sbatch calls %d; want one submission of 20 points", s, counter.Counts()["sbatch"])
	}
	// One squeue per cycle; a second command (sacct) only for tasks that
	// left squeue, which the default MinJobAge of 300 s prevents here.
	if s.Cycles == 0 || s.MaxPerCycle > 2 || counter.Counts()["squeue"] < s.Cycles || counter.Counts()["squeue"] > s.Cycles+2 {
		t.Errorf("%d cycles, at most %d commands per cycle, %v commands in all", s.Cycles, s.MaxPerCycle, counter.Counts())
	}
	t.Logf("20 points: local %s, Slurm %s; %d submission(s), %.3f per point; %d poll cycles, %v commands, max %d per cycle",
		localTime.Round(time.Millisecond), slurmTime.Round(time.Millisecond), s.Submissions,
		float64(s.Submissions)/20, s.Cycles, counter.Counts(), s.MaxPerCycle)
}

// computedLines counts, per point key, the "computed KEY" lines that
// node-task tasks wrote to their logs: each is one calculation on a node.
func computedLines(t *testing.T, dir string) map[string]int {
	t.Helper()
	files, err := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*", "slurm-*.err"))
	if err != nil {
		t.Fatal(err)
	}
	n := map[string]int{}
	for _, f := range files {
		fh, err := os.Open(f)
		if err != nil {
			t.Fatal(err)
		}
		sc := bufio.NewScanner(fh)
		for sc.Scan() {
			if rest, ok := strings.CutPrefix(sc.Text(), "wellscan "+slurm.NodeSubcommand+": computed "); ok {
				key, _, _ := strings.Cut(rest, " ")
				n[key]++
			}
		}
		fh.Close()
	}
	return n
}

func resultFiles(dir string) int {
	m, _ := filepath.Glob(filepath.Join(dir, runner.PointsDir, "*", runner.ResultFile))
	return len(m)
}

func TestSlurm_KillOrchestrator_RerunComputesEachPointOnce(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	// Two points per task, two tasks at a time: ten tasks in five waves,
	// each task about a second (job start-up), so the kill lands while
	// tasks run and others wait.
	spec := strings.NewReplacer("points_per_task = 4", "points_per_task = 2", "throttle = 4", "throttle = 2").Replace(h2SlurmSpec)
	dir := slurmScanDir(t, spec)

	cmd := exec.Command(bin, "run", "-q", dir)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(60 * time.Second)
	for resultFiles(dir) == 0 && time.Now().Before(deadline) {
		time.Sleep(20 * time.Millisecond)
	}
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	_ = cmd.Wait()
	atKill := resultFiles(dir)
	if atKill == 0 || atKill >= 20 {
		t.Fatalf("%d result files when the orchestrator was killed; the test needs a kill mid-scan", atKill)
	}
	live, err := exec.Command("squeue", "--me", "-h", "-r", "--name="+slurm.JobNameFor(dir), "-o", "%i %T").Output()
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("killed with %d of 20 results written; tasks still queued or running:\n%s", atKill, live)
	if strings.TrimSpace(string(live)) == "" {
		t.Fatalf("no task was left in the queue after the kill; the test did not exercise adoption")
	}
	jobsBefore, _ := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*"))

	out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput()
	if err != nil {
		t.Fatalf("rerun: %v\n%s", err, out)
	}
	jobsAfter, _ := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*"))
	got, done := storeState(t, dir)
	computed := computedLines(t, dir)
	if len(got) != 20 {
		t.Fatalf("%d points, want 20", len(got))
	}
	for k, p := range got {
		if p.State != runner.Done || done[k] != 1 {
			t.Errorf("%s: %s, done %d times in the store, want done once", k, p.State, done[k])
		}
		if computed[k] != 1 {
			t.Errorf("%s computed %d times on the node, want exactly once", k, computed[k])
		}
	}
	// The rerun adopted the live tasks rather than submitting their points
	// again (the kill came after the one submission).
	if len(jobsAfter) != len(jobsBefore) {
		t.Errorf("%d submissions before the rerun, %d after; the rerun should adopt, not resubmit", len(jobsBefore), len(jobsAfter))
	}
	t.Logf("rerun output:\n%s", out)
}

// slowSlurmSpec is a 6-point model scan (invented Morse constants, atomic
// units) whose points take 1.5 s each, 3 per array task, so that a test
// can act on the scheduler or the node while a task runs.
var slowSlurmSpec = coMorse{Title: "slow model scan on the local Slurm", From: "1.00", To: "1.25", Step: "0.05", Refine: "adaptive = false", Delay: "1500ms",
	Queue: `[queue]
kind = "slurm"
[queue.slurm]
points_per_task = 3
throttle = THROTTLE
time = "5m"
memory_mb = 200
poll_interval = "300ms"
fast_poll = true
lost_after = "5s"`}.String()

func waitResults(t *testing.T, dir string, n int) {
	t.Helper()
	deadline := time.Now().Add(60 * time.Second)
	for resultFiles(dir) < n {
		if time.Now().After(deadline) {
			t.Fatalf("no %d result files within 60 s", n)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

func TestSlurm_ExternalScancel_ReportedCancelledNotRetried(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	dir := slurmScanDir(t, strings.Replace(slowSlurmSpec, "THROTTLE", "1", 1))
	cmd := exec.Command(bin, "run", "-q", dir)
	var out strings.Builder
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitResults(t, dir, 1)
	if b, err := exec.Command("scancel", "--me", "--name="+slurm.JobNameFor(dir)).CombinedOutput(); err != nil {
		t.Fatalf("scancel: %v %s", err, b)
	}
	_ = cmd.Wait()
	if code := cmd.ProcessState.ExitCode(); code != 3 {
		t.Fatalf("exit %d after an external scancel, want 3 (some points failed)\n%s", code, out.String())
	}
	got, _ := storeState(t, dir)
	spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	recs, err := st.Points()
	st.Close()
	if err != nil {
		t.Fatal(err)
	}
	cancelled := 0
	for _, r := range recs {
		switch {
		case r.State == runner.Failed && r.Class == "cancelled" && r.Attempts == 1:
			cancelled++
		case r.State == runner.Done:
		default:
			t.Errorf("%s: %s, class %q, %d attempts; want done, or failed as cancelled after 1 attempt", r.Key, r.State, r.Class, r.Attempts)
		}
	}
	// Task 1 (three points) was still pending when it was cancelled.
	if cancelled < 3 || len(got) != len(spec.InitialPoints()) {
		t.Errorf("%d points cancelled of %d, want at least 3", cancelled, len(got))
	}
	if jobs, _ := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*")); len(jobs) != 1 {
		t.Errorf("%d submissions, want 1: cancelled tasks are not retried", len(jobs))
	}
}

// nodePID finds the node-task process working in dir, by its command line.
func nodePID(t *testing.T, dir string) int {
	t.Helper()
	deadline := time.Now().Add(30 * time.Second)
	for time.Now().Before(deadline) {
		ents, _ := os.ReadDir("/proc")
		for _, e := range ents {
			pid, err := strconv.Atoi(e.Name())
			if err != nil {
				continue
			}
			b, err := os.ReadFile(filepath.Join("/proc", e.Name(), "cmdline"))
			if err != nil {
				continue
			}
			args := strings.Split(string(b), "\x00")
			if len(args) > 3 && args[1] == slurm.NodeSubcommand && strings.HasPrefix(args[3], dir+string(filepath.Separator)) {
				return pid
			}
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatal("no node-task process found within 30 s")
	return 0
}

func TestSlurm_NodeProcessKilled_PointsRetried(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	dir := slurmScanDir(t, strings.Replace(slowSlurmSpec, "THROTTLE", "1", 1))
	cmd := exec.Command(bin, "run", "-q", dir)
	var out strings.Builder
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	pid := nodePID(t, dir)
	waitResults(t, dir, 1)
	if err := syscall.Kill(pid, syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	if err := cmd.Wait(); err != nil {
		t.Fatalf("run: %v\n%s", err, out.String())
	}
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	recs, err := st.Points()
	st.Close()
	if err != nil {
		t.Fatal(err)
	}
	retried := 0
	computed := computedLines(t, dir)
	for _, r := range recs {
		if r.State != runner.Done {
			t.Errorf("%s: %s (%s)", r.Key, r.State, r.LastError)
		}
		if r.Attempts > 1 {
			retried++
		}
		// The node logs "computed" after it renamed the result file into
		// place, so the kill can fall between the two for the point the
		// test waited for: that point has its result and no log line.
		if n := computed[r.Key]; n > 1 || (n == 0 && r.Attempts != 1) {
			t.Errorf("%s computed %d times (attempts %d), want once", r.Key, n, r.Attempts)
		}
	}
	// The killed task had finished one point; its other two were retried.
	if retried != 2 {
		t.Errorf("%d points retried, want 2 (the killed task's unfinished points)", retried)
	}
	if jobs, _ := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*")); len(jobs) != 2 {
		t.Errorf("%d submissions, want 2 (the retry is a new array)", len(jobs))
	}
	t.Logf("output:\n%s", out.String())
}

func TestSlurm_SIGINT_DetachesJobsKeepRunning(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	dir := slurmScanDir(t, strings.Replace(slowSlurmSpec, "THROTTLE", "2", 1))
	cmd := exec.Command(bin, "run", "-q", dir)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitResults(t, dir, 1)
	if err := cmd.Process.Signal(os.Interrupt); err != nil {
		t.Fatal(err)
	}
	_ = cmd.Wait()
	if code := cmd.ProcessState.ExitCode(); code != 130 || !strings.Contains(stderr.String(), "detached from Slurm") {
		t.Fatalf("exit %d, want 130 and a note that the jobs keep running:\n%s", code, stderr.String())
	}
	live, err := exec.Command("squeue", "--me", "-h", "-r", "-t", "PD,R", "--name="+slurm.JobNameFor(dir), "-o", "%i").Output()
	if err != nil || strings.TrimSpace(string(live)) == "" {
		t.Fatalf("no live task after Ctrl-C (%v); the interrupt must leave the jobs running", err)
	}
	if out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput(); err != nil {
		t.Fatalf("rerun: %v\n%s", err, out)
	}
	got, done := storeState(t, dir)
	computed := computedLines(t, dir)
	for k, p := range got {
		if p.State != runner.Done || done[k] != 1 || computed[k] != 1 {
			t.Errorf("%s: %s, done %d times, computed %d times; want once each", k, p.State, done[k], computed[k])
		}
	}
	if jobs, _ := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*")); len(jobs) != 1 {
		t.Errorf("%d submissions, want 1 (the rerun adopts)", len(jobs))
	}
}

// BenchmarkSlurm_Scan40 runs a 40-point RHF/STO-3G H2 scan (8 points per
// task, throttle 4) on the local Slurm, and the same scan on the local
// queue, and reports both wall-clock times per scan:
//
//	go test -tags slurm -run '^$' -bench Slurm_Scan40 -benchtime=1x ./cmd/wellscan/
func BenchmarkSlurm_Scan40(b *testing.B) {
	bin := buildWellscanB(b)
	spec := strings.NewReplacer("count = 20", "count = 40", "points_per_task = 4", "points_per_task = 8").Replace(h2SlurmSpec)
	localSpec := strings.Replace(spec, `kind = "slurm"`, `kind = "local"`, 1)
	var slurmTime, localTime time.Duration
	subs := 0
	b.ReportAllocs()
	for b.Loop() {
		for _, s := range []struct {
			text string
			d    *time.Duration
		}{{localSpec, &localTime}, {spec, &slurmTime}} {
			dir := b.TempDir()
			if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(s.text), 0o644); err != nil {
				b.Fatal(err)
			}
			start := time.Now()
			if out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput(); err != nil {
				b.Fatalf("run: %v\n%s", err, out)
			}
			*s.d += time.Since(start)
			if s.d == &slurmTime {
				jobs, _ := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*"))
				subs += len(jobs)
			}
		}
	}
	n := float64(b.N)
	b.ReportMetric(slurmTime.Seconds()/n, "s-slurm/scan")
	b.ReportMetric(localTime.Seconds()/n, "s-local/scan")
	b.ReportMetric(float64(subs)/n/40, "submissions/point")
}

func buildWellscanB(b *testing.B) string {
	b.Helper()
	bin := filepath.Join(b.TempDir(), "wellscan")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		b.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// TestSlurm_Timeout_RetriedWithMoreTime needs about three minutes (Slurm
// enforces time limits with minute resolution, checked every 30 s), so it
// runs only with WELLSCAN_SLURM_SLOW=1.
func TestSlurm_Timeout_RetriedWithMoreTime(t *testing.T) {
	if os.Getenv("WELLSCAN_SLURM_SLOW") != "1" {
		t.Skip("set WELLSCAN_SLURM_SLOW=1 for the TIMEOUT test (about three minutes)")
	}
	needSlurm(t)
	bin := buildWellscan(t)
	// Two points of 55 s in one task with a 1-minute limit: the first
	// finishes, the second is cut off by TIMEOUT.
	spec := strings.NewReplacer(`delay = "1500ms"`, `delay = "55s"`, "to = 1.25", "to = 1.05",
		"THROTTLE", "1", `time = "5m"`, `time = "1m"`).Replace(slowSlurmSpec)
	dir := slurmScanDir(t, spec)
	out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput()
	if err != nil {
		t.Fatalf("run: %v\n%s", err, out)
	}
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	recs, err := st.Points()
	st.Close()
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range recs {
		// A TIMEOUT uses the escalation budget, not an attempt.
		if r.State != runner.Done || r.Attempts != 1 {
			t.Errorf("%s: %s after %d attempts, want done after 1", r.Key, r.State, r.Attempts)
		}
	}
	jobs, _ := filepath.Glob(filepath.Join(dir, slurm.JobsDir, "*", "submit.sh"))
	longer := 0
	for _, j := range jobs {
		if b, err := os.ReadFile(j); err == nil && strings.Contains(string(b), "--time=0-00:02:00") {
			longer++
		}
	}
	if len(jobs) != 2 || longer != 1 {
		t.Errorf("%d submissions, %d with 2 minutes; want the retry to ask for twice the time", len(jobs), longer)
	}
}

// TestSlurm_Cancel_StopsTheScansJobs: after Ctrl-C detaches a run,
// `wellscan cancel DIR` cancels the scan's jobs by name and confirms that
// none is pending or running; a rerun then computes what is missing.
func TestSlurm_Cancel_StopsTheScansJobs(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	dir := slurmScanDir(t, strings.Replace(slowSlurmSpec, "THROTTLE", "2", 1))
	cmd := exec.Command(bin, "run", "-q", dir)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitResults(t, dir, 1)
	if err := cmd.Process.Signal(os.Interrupt); err != nil {
		t.Fatal(err)
	}
	_ = cmd.Wait()
	out, err := exec.Command(bin, "cancel", dir).CombinedOutput()
	if err != nil || !strings.Contains(string(out), "cancelled the Slurm jobs") {
		t.Fatalf("cancel: %v\n%s", err, out)
	}
	live, err := exec.Command("squeue", "--me", "-h", "-r", "-t", "PD,R", "--name="+slurm.JobNameFor(dir), "-o", "%i").Output()
	if err != nil || strings.TrimSpace(string(live)) != "" {
		t.Fatalf("after cancel, squeue still lists live tasks %q (%v)", live, err)
	}
	if out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput(); err != nil {
		t.Logf("rerun after cancel: %v\n%s", err, out)
	}
}

// Detached: `run --detach` submits round 1 and exits at once; `status`
// reconciles the submitted points with squeue and the result files while no
// orchestrator runs; repeated `run --detach` calls collect results, refine
// and submit the next rounds until the scan ends. Every point is computed
// once on a node.
func TestSlurm_Detach_StatusReconciles_RunsFinish(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	spec := strings.Replace(h2SlurmSpec, "adaptive = false", "adaptive = true", 1)
	dir := slurmScanDir(t, spec)

	start := time.Now()
	out, err := exec.Command(bin, "run", "-q", "--detach", dir).CombinedOutput()
	if err != nil || !strings.Contains(string(out), "detached: 20 point(s) left with the slurm queue") {
		t.Fatalf("run --detach: %v\n%s", err, out)
	}
	t.Logf("run --detach returned after %s", time.Since(start).Round(time.Millisecond))
	got, _ := storeState(t, dir)
	for k, p := range got {
		if p.State != runner.Submitted {
			t.Errorf("%s: %s after the detached run, want submitted", k, p.State)
		}
	}

	// status while nothing runs on the login node: one squeue, verdicts.
	out, err = exec.Command(bin, "status", dir).CombinedOutput()
	if err != nil || !strings.Contains(string(out), "queue: slurm jobs named "+slurm.JobNameFor(dir)) || !strings.Contains(string(out), "in flight (20 points)") {
		t.Fatalf("status: %v\n%s", err, out)
	}
	waitResults(t, dir, 20)
	var view struct {
		Counts map[string]int `json:"counts"`
		Queue  *slurm.View    `json:"queue"`
	}
	js, err := exec.Command(bin, "status", "--json", dir).Output()
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(js, &view); err != nil {
		t.Fatal(err)
	}
	if view.Queue == nil || view.Queue.Verdicts[slurm.VerdictFinished] != 20 || view.Counts["submitted"] != 20 {
		t.Fatalf("status --json after the tasks wrote their results: counts %v, queue %+v; want 20 submitted in the store, 20 finished", view.Counts, view.Queue)
	}
	if view.Queue.Commands != 1 {
		t.Errorf("status ran %d scheduler commands, want 1", view.Queue.Commands)
	}

	// Advance with detached runs until the scan ends.
	var last string
	for i := 0; ; i++ {
		if i == 40 {
			t.Fatalf("scan not finished after 40 detached runs; last output:\n%s", last)
		}
		out, err := exec.Command(bin, "run", "-q", "--detach", dir).CombinedOutput()
		last = string(out)
		if err != nil {
			t.Fatalf("run --detach #%d: %v\n%s", i+2, err, out)
		}
		if !strings.Contains(last, "detached:") {
			break
		}
		time.Sleep(500 * time.Millisecond)
	}
	if !strings.Contains(last, "refinement: converged") {
		t.Errorf("last run did not report converged refinement:\n%s", last)
	}
	got, done := storeState(t, dir)
	computed := computedLines(t, dir)
	if len(got) <= 20 {
		t.Errorf("%d points: refinement added none", len(got))
	}
	for k, p := range got {
		if p.State != runner.Done || done[k] != 1 || computed[k] != 1 {
			t.Errorf("%s: %s, done %d times, computed %d times; want once each", k, p.State, done[k], computed[k])
		}
	}
}
