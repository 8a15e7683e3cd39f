package main

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"testing"

	"wellscan/runner"
)

// TestRun_ScanMovedMidRun_Command is issue 15 item 14 with the command
// engine: the scan directory is renamed while external programs run (11
// points, two workers, 0.3 s each). The run stops with exit 1 and says
// where the scan went and what to run; the programs in flight are
// stopped; no point is failed and no attempt is used; nothing is made
// again at the old path; `wellscan run NEWDIR` computes the rest, and
// every point finished before the move ran its program once.
func TestRun_ScanMovedMidRun_Command(t *testing.T) {
	dir := orphanScan(t, "sleep 0.3")
	moved := dir + "-moved"
	type result struct {
		code      int
		out, errs string
	}
	res := make(chan result, 1)
	go func() {
		code, out, errs := wellscan(t, "run", "-q", dir)
		res <- result{code, out, errs}
	}()
	waitFor(t, "four programs to start", func() bool {
		n := 0
		for _, c := range starts(t, dir) {
			n += c
		}
		return n >= 4
	})
	if err := os.Rename(dir, moved); err != nil {
		t.Fatal(err)
	}
	got := <-res
	if got.code != 1 {
		t.Fatalf("run: exit %d, want 1\n%s%s", got.code, got.out, got.errs)
	}
	if !strings.Contains(got.errs, "moved") || !strings.Contains(got.errs, "nothing computed is lost") {
		t.Errorf("stderr does not explain the move:\n%s", got.errs)
	}
	if runtime.GOOS == "linux" && !strings.Contains(got.errs, "wellscan run "+moved) {
		t.Errorf("stderr does not name the new place %s:\n%s", moved, got.errs)
	}
	if _, err := os.Lstat(dir); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("the old path %s exists again after the run: %v", dir, err)
	}
	for k, pid := range pidsIn(t, moved, "pid") {
		if alive(pid) {
			t.Errorf("the program of %s (PID %d) still runs after the run stopped", k, pid)
			_ = syscall.Kill(pid, syscall.SIGKILL)
		}
	}
	recs, _ := filepath.Glob(filepath.Join(moved, runner.PointsDir, "*", "running.json"))
	for _, r := range recs {
		if b, _ := os.ReadFile(r); !strings.Contains(string(b), `"exited":true`) {
			t.Errorf("%s says a program still runs after the run stopped: %s", r, b)
		}
	}
	before, _ := storeState(t, moved)
	doneBefore := 0
	for k, p := range before {
		switch p.State {
		case runner.Done:
			doneBefore++
		case runner.Planned:
		default:
			t.Errorf("point %s is %s after the move, want done or planned", k, p.State)
		}
	}
	if doneBefore == 0 || doneBefore == 11 {
		t.Fatalf("%d of 11 points done before the move: it did not happen mid-run", doneBefore)
	}
	st, err := runner.Open(moved, runner.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	pts, err := st.Points()
	st.Close()
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range pts {
		if p.State == runner.Planned && p.Attempts != 0 {
			t.Errorf("point %s has %d attempts used; the move must not count", p.Key, p.Attempts)
		}
	}

	if code, out, errs := wellscan(t, "run", "-q", moved); code != 0 {
		t.Fatalf("run in the new place: exit %d\n%s%s", code, out, errs)
	}
	after, _ := storeState(t, moved)
	if len(after) != 11 {
		t.Errorf("%d points, want 11", len(after))
	}
	n := starts(t, moved)
	for k, p := range after {
		r, err := strconv.ParseFloat(strings.TrimPrefix(k, "r="), 64)
		if err != nil {
			t.Fatalf("key %s: %v", k, err)
		}
		// Independent computation of the script's Morse curve (invented
		// constants); it prints 10 decimals, hence 1e-9 hartree.
		x := 1 - math.Exp(-2.3*(r-1.13))
		if want := -112.7 + 0.41*x*x; p.State != runner.Done || math.Abs(p.Energy-want) > 1e-9 {
			t.Errorf("point %s: %s E = %.10f hartree, want %.10f", k, p.State, p.Energy, want)
		}
		if before[k].State == runner.Done && n[k] != 1 {
			t.Errorf("the program of %s, done before the move, started %d times, want once", k, n[k])
		}
		if n[k] > 2 {
			t.Errorf("the program of %s started %d times; a point stopped by the move runs once more, at most", k, n[k])
		}
	}
}
