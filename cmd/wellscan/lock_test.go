package main

import (
	"encoding/json"
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

// waitForLock polls until dir's lock file names pid (the run has opened
// its store) and status.json exists.
func waitForLock(t *testing.T, dir string, pid int) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for time.Now().Before(deadline) {
		b, err := os.ReadFile(filepath.Join(dir, runner.LockFile))
		var li runner.LockInfo
		if err == nil && json.Unmarshal(b, &li) == nil && li.PID == pid {
			if _, err := os.Stat(filepath.Join(dir, runner.StatusFile)); err == nil {
				return
			}
		}
		time.Sleep(10 * time.Millisecond)
	}
	t.Fatalf("run PID %d did not take the lock of %s within 10 s", pid, dir)
}

// TestRun_Locked_SecondRunStatusAndStaleLock: a second run of a held scan
// fails within 1 s with exit 11 naming the owner; status reads the
// snapshot meanwhile; after the owner is SIGKILLed its leftover lock
// record is explained as stale, and the next run resumes.
func TestRun_Locked_SecondRunStatusAndStaleLock(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs scans as child processes")
	}
	bin := buildWellscan(t)
	dir := t.TempDir()
	writeSpec(t, dir, slowSpec)
	owner := exec.Command(bin, "run", "-q", dir)
	if err := owner.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = owner.Process.Kill(); _ = owner.Wait() })
	pid := owner.Process.Pid
	waitForLock(t, dir, pid)
	host, _ := os.Hostname()

	start := time.Now()
	second := exec.Command(bin, "run", "-q", dir)
	out, _ := second.CombinedOutput()
	elapsed := time.Since(start)
	if code := second.ProcessState.ExitCode(); code != 11 {
		t.Errorf("second run: exit %d, want 11\n%s", code, out)
	}
	if elapsed > time.Second {
		t.Errorf("second run took %v to give up, want < 1 s", elapsed)
	}
	for _, w := range []string{"PID " + strconv.Itoa(pid), "on " + host} {
		if !strings.Contains(string(out), w) {
			t.Errorf("second run's message lacks %q:\n%s", w, out)
		}
	}

	st := exec.Command(bin, "status", dir)
	sout, err := st.CombinedOutput()
	if err != nil {
		t.Errorf("status while the scan runs: %v\n%s", err, sout)
	}
	if !strings.Contains(string(sout), "snapshot of") || !strings.Contains(string(sout), "run by PID "+strconv.Itoa(pid)) {
		t.Errorf("status while the scan runs does not read the snapshot:\n%s", sout)
	}

	if err := owner.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	_ = owner.Wait()
	if _, err := os.Stat(filepath.Join(dir, runner.LockFile)); err != nil {
		t.Fatalf("SIGKILL left no lock record to test with: %v", err)
	}
	stale := []string{"PID " + strconv.Itoa(pid), "died without closing the scan", "that process is no longer running", "safe to continue"}
	sout, err = exec.Command(bin, "status", dir).CombinedOutput()
	if err != nil {
		t.Errorf("status after the kill: %v\n%s", err, sout)
	}
	for _, w := range stale {
		if !strings.Contains(string(sout), w) {
			t.Errorf("status after the kill lacks %q:\n%s", w, sout)
		}
	}
	resume := exec.Command(bin, "run", "-q", dir)
	var stderr strings.Builder
	resume.Stderr = &stderr
	if err := resume.Run(); err != nil {
		t.Fatalf("resume after the kill: %v\n%s", err, stderr.String())
	}
	for _, w := range stale {
		if !strings.Contains(stderr.String(), w) {
			t.Errorf("resume's note lacks %q:\n%s", w, stderr.String())
		}
	}
	if _, err := os.Stat(filepath.Join(dir, runner.LockFile)); err == nil {
		t.Errorf("lock record left after a clean run")
	}
}
