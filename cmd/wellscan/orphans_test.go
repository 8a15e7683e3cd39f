package main

import (
	"bufio"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"wellscan/runner"
)

// orphanSpec drives prog.sh (a fixed shell script in the scan directory)
// for 11 points on two workers; the script logs each start to
// starts.log, then prints a Morse energy (invented constants) after a
// delay set per test.
const orphanSpec = `title = "orphan test"
[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.90
to = 1.40
step = 0.05
[refine]
adaptive = false
[engine]
kind = "command"
[engine.command]
template = "point.tmpl"
input = "point.inp"
shell = true
script = "prog.sh"
energy = { label = "energy", unit = "hartree" }
[queue]
workers = 2
`

// orphanScript is prog.sh: DELAY is replaced by a shell snippet.
const orphanScript = `#!/bin/sh
echo "$WELLSCAN_KEY $$" >> ../../starts.log
echo $$ > pid
DELAY
awk -v r="$WELLSCAN_COORD_R" 'BEGIN { x = 1 - exp(-2.3 * (r - 1.13)); printf "energy = %.10f\n", -112.7 + 0.41 * x * x }'
`

func orphanScan(t *testing.T, delay string) string {
	t.Helper()
	dir := t.TempDir()
	writeSpec(t, dir, orphanSpec)
	for name, body := range map[string]string{
		"point.tmpl": "point {{.Key}}\n",
		"prog.sh":    strings.Replace(orphanScript, "DELAY", delay, 1),
	} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o700); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// starts counts the program starts per point key from starts.log.
func starts(t *testing.T, dir string) map[string]int {
	t.Helper()
	out := map[string]int{}
	f, err := os.Open(filepath.Join(dir, "starts.log"))
	if err != nil {
		return out
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if k, _, ok := strings.Cut(sc.Text(), " "); ok {
			out[k]++
		}
	}
	return out
}

// alive reports whether pid is a live process (a zombie counts as gone).
func alive(pid int) bool {
	if syscall.Kill(pid, 0) != nil {
		return false
	}
	b, err := os.ReadFile("/proc/" + strconv.Itoa(pid) + "/stat")
	if err != nil {
		return true
	}
	s := string(b)
	if i := strings.LastIndexByte(s, ')'); i >= 0 && i+2 < len(s) {
		return s[i+2] != 'Z'
	}
	return true
}

// survives reports whether pid is still alive 5 s from now and is still
// the process the point started: its working directory is the point
// directory pointDir. SIGKILL is asynchronous: a process the run has just
// killed may need a moment of scheduling to end, more so on a loaded
// machine, while one the run missed (these tests' sleeps last 60 s) is
// still there after 5 s. The directory check keeps a busy machine's PID
// reuse (a CI run starts thousands of processes) from counting another
// process as a survivor.
func survives(pid int, pointDir string) bool {
	for deadline := time.Now().Add(5 * time.Second); time.Now().Before(deadline); time.Sleep(20 * time.Millisecond) {
		if !alive(pid) || !inDir(pid, pointDir) {
			return false
		}
	}
	return alive(pid) && inDir(pid, pointDir)
}

// inDir reports whether pid's working directory is dir (or cannot be read,
// which counts as yes: no false all-clear).
func inDir(pid int, dir string) bool {
	cwd, err := os.Readlink("/proc/" + strconv.Itoa(pid) + "/cwd")
	if err != nil {
		return true
	}
	want, err := filepath.EvalSymlinks(dir)
	if err != nil {
		return true
	}
	return strings.TrimSuffix(cwd, " (deleted)") == want
}

// pidsIn reads every file named name under the scan's point directories.
func pidsIn(t *testing.T, dir, name string) map[string]int {
	t.Helper()
	out := map[string]int{}
	ms, _ := filepath.Glob(filepath.Join(dir, runner.PointsDir, "*", name))
	for _, m := range ms {
		b, err := os.ReadFile(m)
		if err != nil {
			continue
		}
		if pid, err := strconv.Atoi(strings.TrimSpace(string(b))); err == nil {
			out[filepath.Base(filepath.Dir(m))] = pid
		}
	}
	return out
}

func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out waiting for %s", what)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// TestRun_KilledOrchestrator_ProgramNotRunTwice is issue 15 item 13: the
// orchestrator is SIGKILLed while its programs run; they go on, and the
// resumed run waits for them and takes their output instead of starting a
// second copy in the same directory.
func TestRun_KilledOrchestrator_ProgramNotRunTwice(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and kills it")
	}
	bin := buildWellscan(t)
	dir := orphanScan(t, "sleep 1")
	cmd := exec.Command(bin, "run", "-q", dir)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "two programs to start", func() bool { return len(starts(t, dir)) >= 2 })
	_ = cmd.Process.Signal(syscall.SIGKILL)
	_ = cmd.Wait()
	running := pidsIn(t, dir, "pid")
	for k, pid := range running {
		if !alive(pid) {
			t.Logf("program of %s already ended", k)
		}
	}
	runToEnd(t, bin, dir)
	for k, n := range starts(t, dir) {
		if n != 1 {
			t.Errorf("the program of %s started %d times, want once", k, n)
		}
	}
	got, _ := storeState(t, dir)
	for k, p := range got {
		if p.State != runner.Done {
			t.Errorf("point %s is %s, want done", k, p.State)
		}
	}
	if len(got) != 11 {
		t.Errorf("%d points, want 11", len(got))
	}
}

// TestRun_Signals_StopProgramsAndDescendants is issue 15 item 13: SIGINT,
// SIGTERM, SIGHUP and SIGPIPE each end a run with exit 130, and the
// programs in flight end with it, including a grandchild that left the
// process group with setsid.
func TestRun_Signals_StopProgramsAndDescendants(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and signals it")
	}
	bin := buildWellscan(t)
	delay := `setsid sleep 60 & echo $! > grandchild
if [ "$WELLSCAN_KEY" = "r=0.90000" ]; then sleep 1.5; else sleep 60; fi`
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM, syscall.SIGHUP, syscall.SIGPIPE} {
		t.Run(sig.String(), func(t *testing.T) {
			dir := orphanScan(t, delay)
			cmd := exec.Command(bin, "run", "--json", dir)
			stdout, err := cmd.StdoutPipe()
			if err != nil {
				t.Fatal(err)
			}
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			waitFor(t, "two programs and their grandchildren", func() bool { return len(pidsIn(t, dir, "grandchild")) >= 2 })
			if sig == syscall.SIGPIPE {
				// The reader goes away; the next event (r=0.90000 finishing)
				// is written into a closed pipe.
				stdout.Close()
			} else {
				_ = cmd.Process.Signal(sig)
				go func() { _, _ = bufio.NewReader(stdout).WriteTo(discard{}) }()
			}
			done := make(chan struct{})
			go func() { _ = cmd.Wait(); close(done) }()
			select {
			case <-done:
			case <-time.After(30 * time.Second):
				_ = cmd.Process.Kill()
				t.Fatalf("run did not stop after %v", sig)
			}
			if code := cmd.ProcessState.ExitCode(); code != 130 {
				t.Errorf("exit %d after %v, want 130", code, sig)
			}
			for what, pids := range map[string]map[string]int{"program": pidsIn(t, dir, "pid"), "setsid grandchild": pidsIn(t, dir, "grandchild")} {
				for k, pid := range pids {
					if survives(pid, runner.PointDir(dir, k)) {
						t.Errorf("%s of %s (PID %d) still runs after %v", what, k, pid, sig)
						_ = syscall.Kill(pid, syscall.SIGKILL)
					}
				}
			}
			// A record may stay only for a program that ended by itself.
			recs, _ := filepath.Glob(filepath.Join(dir, runner.PointsDir, "*", "running.json"))
			for _, r := range recs {
				if b, _ := os.ReadFile(r); !strings.Contains(string(b), `"exited":true`) {
					t.Errorf("%s says a program still runs after a clean stop: %s", r, b)
				}
			}
		})
	}
}

type discard struct{}

func (discard) Write(p []byte) (int, error) { return len(p), nil }

// TestRun_SetsidGrandchild_CleanedAfterSuccess: a program that leaves a
// grandchild behind in its own session (setsid) and exits 0; the run
// kills the grandchild when the point is done.
func TestRun_SetsidGrandchild_CleanedAfterSuccess(t *testing.T) {
	dir := orphanScan(t, "setsid sleep 60 & echo $! > grandchild")
	if code, out, errs := wellscan(t, "run", "-q", dir); code != 0 {
		t.Fatalf("run: exit %d\n%s%s", code, out, errs)
	}
	gc := pidsIn(t, dir, "grandchild")
	if len(gc) != 11 {
		t.Fatalf("%d grandchild PID files, want 11", len(gc))
	}
	for k, pid := range gc {
		if survives(pid, runner.PointDir(dir, k)) {
			t.Errorf("grandchild of %s (PID %d) outlived the run", k, pid)
			_ = syscall.Kill(pid, syscall.SIGKILL)
		}
	}
}

// TestRun_CrashTorture_Command extends the crash torture to the command
// engine: the orchestrator is SIGKILLed at random moments while external
// programs run; in the end every point is done exactly once and no
// program ever started twice for a point.
func TestRun_CrashTorture_Command(t *testing.T) {
	if testing.Short() && os.Getenv("WELLSCAN_TORTURE") == "" {
		t.Skip("builds the binary and kills scans as child processes")
	}
	seed := tortureSeed(t)
	t.Logf("seed %d (rerun with WELLSCAN_TORTURE_SEED=%d)", seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0xc0de))
	bin := buildWellscan(t)
	for rep := range tortureReps() {
		dir := orphanScan(t, "sleep 0.2")
		n := killCount(8, 3)
		killed := killLoop(t, bin, dir, rng, n, 150*time.Millisecond, 600*time.Millisecond)
		t.Logf("scan %d survived %d SIGKILLs", rep+1, killed)
		runToEnd(t, bin, dir)
		checkBolt(t, dir)
		got, done := storeState(t, dir)
		if len(got) != 11 {
			t.Errorf("%d points, want 11", len(got))
		}
		for k, p := range got {
			if p.State != runner.Done || done[k] != 1 {
				t.Errorf("point %s: %s, done %d times; want done once", k, p.State, done[k])
			}
		}
		for k, c := range starts(t, dir) {
			if c != 1 {
				t.Errorf("the program of %s started %d times, want once", k, c)
			}
		}
	}
}

// TestCLI_RetryDrop_ExitCodes is issue 19 item 1: a failed point makes
// run exit 3; dropped, the scan ends with 0 and status lists it; retried,
// it is computed again (and fails again here, exit 3).
func TestCLI_RetryDrop_ExitCodes(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, strings.Replace(modelSpec, "offset = -112.7", "offset = -112.7\nfail = [\"r=1.10000\"]", 1))
	steps := []struct {
		args []string
		code int
		want string
	}{
		{[]string{"run", "-q", dir}, 3, "wellscan retry " + dir + " --all"},
		{[]string{"retry", dir}, 1, "name point keys, --class CLASS or --all"},
		{[]string{"drop", dir, "r=1.10000", "--reason", "model gap"}, 0, "dropped: r=1.10000"},
		{[]string{"run", "-q", dir}, 0, "1 dropped"},
		{[]string{"status", dir}, 0, "dropped 1"},
		{[]string{"retry", dir, "--class", "error"}, 1, "no point matches"},
		{[]string{"retry", dir, "r=1.10000"}, 0, "planned again: 1 point(s): r=1.10000"},
		{[]string{"run", "-q", dir}, 3, "failed: r=1.10000"},
		{[]string{"retry", dir, "--class", "error"}, 0, "planned again: 1 point(s)"},
	}
	for _, s := range steps {
		code, out, errs := wellscan(t, s.args...)
		if code != s.code || !strings.Contains(out+errs, s.want) {
			t.Fatalf("%v: exit %d, want %d with %q\n%s%s", s.args, code, s.code, s.want, out, errs)
		}
	}
}
