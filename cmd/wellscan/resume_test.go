package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"testing"
	"time"

	"wellscan/runner"
)

// slowSpec is a model scan whose points take 150 ms each, so that a kill
// lands mid-round (invented Morse constants, atomic units).
var slowSpec = coMorse{Title: "kill and resume", From: "0.90", To: "1.50", Step: "0.05", Refine: "target_step = 0.002", Delay: "150ms", Queue: "[queue]\nworkers = 2"}.String()

// buildWellscan compiles this command into a temporary directory.
func buildWellscan(t *testing.T) string {
	t.Helper()
	goBin, err := exec.LookPath("go")
	if err != nil {
		t.Skipf("no go command on PATH: %v", err)
	}
	bin := filepath.Join(t.TempDir(), "wellscan")
	cmd := exec.Command(goBin, "build", "-o", bin, ".")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

type pointState struct {
	State  runner.State
	Energy float64
	Round  int
}

// storeState reads the store of dir: key → state, and done events per key.
func storeState(t *testing.T, dir string) (map[string]pointState, map[string]int) {
	t.Helper()
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: 5 * time.Second})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	recs, err := st.Points()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]pointState{}
	for _, r := range recs {
		ps := pointState{State: r.State, Round: r.Round}
		if r.Energy != nil {
			ps.Energy = *r.Energy
		}
		out[r.Key] = ps
	}
	evs, err := st.Events()
	if err != nil {
		t.Fatal(err)
	}
	done := map[string]int{}
	for _, e := range evs {
		if e.Kind == runner.EventDone {
			done[e.Key]++
		}
	}
	return out, done
}

func runToEnd(t *testing.T, bin, dir string) {
	t.Helper()
	out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput()
	if err != nil {
		t.Fatalf("wellscan run %s: %v\n%s", dir, err, out)
	}
}

func sameStore(t *testing.T, got, want map[string]pointState) {
	t.Helper()
	var keys []string
	for k := range want {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	if len(got) != len(want) {
		t.Errorf("%d points, uninterrupted run has %d", len(got), len(want))
	}
	for _, k := range keys {
		// Exact equality: the model is deterministic and a resumed scan
		// must plan the same points in the same rounds.
		if got[k] != want[k] {
			t.Errorf("point %s = %+v, uninterrupted run has %+v", k, got[k], want[k])
		}
	}
}

func TestRun_KillAndResume(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs scans as child processes")
	}
	bin := buildWellscan(t)

	ref := t.TempDir()
	writeSpec(t, ref, slowSpec)
	runToEnd(t, bin, ref)
	want, _ := storeState(t, ref)

	dir := t.TempDir()
	writeSpec(t, dir, slowSpec)
	midRound := 0
	for i := range 6 {
		after := []time.Duration{220, 300, 380}[i%3]
		cmd := exec.Command(bin, "run", "-q", dir)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		time.Sleep(after * time.Millisecond)
		if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
			t.Fatal(err)
		}
		_ = cmd.Wait()
		if cmd.ProcessState.ExitCode() == 0 {
			t.Logf("kill %d: the run had already finished", i+1)
			continue
		}
		got, _ := storeState(t, dir)
		var n [5]int
		for _, p := range got {
			switch p.State {
			case runner.Done:
				n[0]++
			case runner.Running, runner.Submitted:
				n[1]++
			case runner.Planned:
				n[2]++
			}
		}
		t.Logf("kill %d after %d ms: %d done, %d in flight, %d planned", i+1, after, n[0], n[1], n[2])
		if n[1]+n[2] > 0 {
			midRound++
		}
	}
	if midRound < 3 {
		t.Fatalf("only %d kills landed mid-round; the test did not exercise resume", midRound)
	}
	runToEnd(t, bin, dir)
	got, done := storeState(t, dir)
	sameStore(t, got, want)
	for k, p := range got {
		if p.State != runner.Done {
			t.Errorf("%s is %s", k, p.State)
		}
		if done[k] != 1 {
			t.Errorf("%s reached done %d times, want exactly once", k, done[k])
		}
	}
}

func TestRun_SIGINT_Exit130StoreIntact(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs scans as child processes")
	}
	bin := buildWellscan(t)
	ref := t.TempDir()
	writeSpec(t, ref, slowSpec)
	runToEnd(t, bin, ref)
	want, _ := storeState(t, ref)

	dir := t.TempDir()
	writeSpec(t, dir, slowSpec)
	cmd := exec.Command(bin, "run", "-q", dir)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	time.Sleep(300 * time.Millisecond)
	if err := cmd.Process.Signal(os.Interrupt); err != nil {
		t.Fatal(err)
	}
	_ = cmd.Wait()
	if code := cmd.ProcessState.ExitCode(); code != 130 {
		t.Fatalf("exit code %d after SIGINT, want 130\n%s", code, stderr.String())
	}
	if !strings.Contains(stderr.String(), "rerun `wellscan run") {
		t.Errorf("stderr lacks the resume hint: %s", stderr.String())
	}
	got, _ := storeState(t, dir)
	for k, p := range got {
		if p.State == runner.Running || p.State == runner.Submitted {
			t.Errorf("%s left %s after SIGINT", k, p.State)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, runner.LockFile)); err == nil {
		t.Errorf("lock file left behind after a clean interrupt")
	}
	snap, err := runner.ReadSnapshot(dir)
	if err != nil || snap.State != "interrupted" {
		t.Errorf("snapshot state %q (%v), want interrupted", snap.State, err)
	}
	runToEnd(t, bin, dir)
	got, _ = storeState(t, dir)
	sameStore(t, got, want)
}
