//go:build slurm

package main

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
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

// relaxedBendSpec is a 4-point relaxed bend of water at RHF/STO-3G (an
// invented scan): at each point the bend is held and both O–H bonds
// relax. Thresholds are tightened 30× (as in TestRun_CrashTorture_Relaxed)
// so that optimisations started from different neighbours meet within
// 1e-8 Eh, and the SCF is converged to 1e-12 Eh.
const relaxedBendSpec = `title = "relaxed water bend"
[molecule]
geometry = """
O 0 0 0.1173
H 0 0.7572 -0.4692
H 0 -0.7572 -0.4692
"""
[[scan]]
name = "theta"
angle = [2, 1, 3]
values = [95, 100, 105, 110]
relax = true
[relax]
tighter = 30
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "rhf"
basis = "STO-3G"
convergence = 1e-12
%QUEUE%`

const relaxedBendSlurmQueue = `[queue]
kind = "slurm"
[queue.slurm]
points_per_task = 1
throttle = 1
time = "5m"
memory_mb = 200
poll_interval = "300ms"
fast_poll = true
lost_after = "10s"
`

// TestSlurm_RelaxedScan_EqualsLocal_KillOrchestrator runs the relaxed
// water bend on the one-node Slurm (each point one task: node-task drives
// the whole optimisation), kills the orchestrator with SIGKILL once the
// first point is back, and reruns it. Every point's relaxed energy must
// equal a local run's to 1e-8 Eh (the independent reference: the same
// spec on the local queue), and no gradient may have been computed twice
// beyond one in flight per task running at the kill (relax-gradients.log
// of each point against its checkpoint's count).
func TestSlurm_RelaxedScan_EqualsLocal_KillOrchestrator(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)

	local := t.TempDir()
	writeSpec(t, local, strings.Replace(relaxedBendSpec, "%QUEUE%", "[queue]\nworkers = 1\n", 1))
	start := time.Now()
	runToEnd(t, bin, local)
	t.Logf("local run: %v", time.Since(start).Round(time.Millisecond))
	want, _ := storeState(t, local)
	if len(want) != 4 {
		t.Fatalf("local run: %d points, want 4", len(want))
	}

	dir := slurmScanDir(t, strings.Replace(relaxedBendSpec, "%QUEUE%", relaxedBendSlurmQueue, 1))
	start = time.Now()
	cmd := exec.Command(bin, "run", "-q", dir)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	// Kill while a point is being optimised on the node: its checkpoint
	// exists, its result does not.
	deadline := time.Now().Add(90 * time.Second)
	for !midOptimisation(dir) && time.Now().Before(deadline) {
		time.Sleep(5 * time.Millisecond)
	}
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	_ = cmd.Wait()
	atKill := resultFiles(dir)
	if atKill >= 4 {
		t.Fatalf("%d result files when the orchestrator was killed; the test needs a kill mid-scan", atKill)
	}
	t.Logf("orchestrator killed after %v with %d of 4 relaxed points back, one being optimised", time.Since(start).Round(time.Millisecond), atKill)
	out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput()
	if err != nil {
		t.Fatalf("rerun: %v\n%s", err, out)
	}
	t.Logf("slurm run including the rerun: %v", time.Since(start).Round(time.Millisecond))

	got, done := storeState(t, dir)
	var keys []string
	for k := range want {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	computed := computedLines(t, dir)
	logged, kept := 0, 0
	for _, k := range keys {
		g, w := got[k], want[k]
		if g.State != runner.Done || done[k] != 1 {
			t.Errorf("%s: %s, done %d times, want done once", k, g.State, done[k])
		}
		// Same constrained minimum, thresholds tightened 30×: 1e-8 Eh.
		if d := math.Abs(g.Energy - w.Energy); d > 1e-8 {
			t.Errorf("%s: Slurm %.10f Eh, local %.10f Eh (differ by %.1e)", k, g.Energy, w.Energy, d)
		}
		st, err := runner.ReadRelaxState(runner.PointDir(dir, k))
		if err != nil {
			t.Fatal(err)
		}
		n := gradientsLogged(t, dir, []string{k})
		logged += n
		kept += st.Gradients
		t.Logf("%s: E = %.10f Eh (local %.10f, Δ %.1e), %d gradients computed, %d in the checkpoint, computed on the node %d time(s)",
			k, g.Energy, w.Energy, g.Energy-w.Energy, n, st.Gradients, computed[k])
		if computed[k] != 1 {
			t.Errorf("%s: optimised %d times on the node, want once", k, computed[k])
		}
	}
	// points_per_task = 1, throttle = 1: at most one task (one gradient)
	// was in flight when the orchestrator died.
	if logged > kept+1 {
		t.Errorf("%d gradients computed, %d kept: more than the one in flight was lost", logged, kept)
	}
}

// midOptimisation reports whether some point of dir has an optimiser
// checkpoint but no result yet.
func midOptimisation(dir string) bool {
	states, _ := filepath.Glob(filepath.Join(dir, runner.PointsDir, "*", runner.RelaxStateFile))
	for _, st := range states {
		if _, err := os.Stat(filepath.Join(filepath.Dir(st), runner.ResultFile)); errors.Is(err, fs.ErrNotExist) {
			return true
		}
	}
	return false
}

// TestSlurm_RelaxedPoint_NodeKilled_ResumesFromCheckpoint SIGKILLs the
// node-task process of the relaxed water bend while it optimises a point
// (after its first checkpoint is written): the orchestrator retries the
// point, the new task continues from the point's checkpoint, every
// energy still equals the local run's to 1e-8 Eh, and at most the one
// gradient in flight is lost.
func TestSlurm_RelaxedPoint_NodeKilled_ResumesFromCheckpoint(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	local := t.TempDir()
	writeSpec(t, local, strings.Replace(relaxedBendSpec, "%QUEUE%", "[queue]\nworkers = 1\n", 1))
	runToEnd(t, bin, local)
	want, _ := storeState(t, local)

	dir := slurmScanDir(t, strings.Replace(relaxedBendSpec, "%QUEUE%", relaxedBendSlurmQueue, 1))
	cmd := exec.Command(bin, "run", "-q", dir)
	var out strings.Builder
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	pid := nodePID(t, dir)
	// Wait for a checkpoint of a point still being optimised (written
	// after its first gradient), then kill.
	deadline := time.Now().Add(60 * time.Second)
	for !midOptimisation(dir) && time.Now().Before(deadline) {
		time.Sleep(2 * time.Millisecond)
	}
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
	resumed, logged, kept := 0, 0, 0
	for _, r := range recs {
		if r.State != runner.Done || r.Energy == nil {
			t.Errorf("%s: %s (%s)", r.Key, r.State, r.LastError)
			continue
		}
		// Same constrained minimum, thresholds tightened 30×: 1e-8 Eh.
		if d := math.Abs(*r.Energy - want[r.Key].Energy); d > 1e-8 {
			t.Errorf("%s: Slurm %.10f Eh, local %.10f Eh (differ by %.1e)", r.Key, *r.Energy, want[r.Key].Energy, d)
		}
		cp, err := runner.ReadRelaxState(runner.PointDir(dir, r.Key))
		if err != nil {
			t.Fatal(err)
		}
		n := gradientsLogged(t, dir, []string{r.Key})
		logged += n
		kept += cp.Gradients
		if r.Extra["relax_resumed_at"] > 0 {
			resumed++
		}
		t.Logf("%s: attempts %d, resumed at gradient %v, %d gradients computed, %d in the checkpoint, E = %.10f Eh (local Δ %.1e)",
			r.Key, r.Attempts, r.Extra["relax_resumed_at"], n, cp.Gradients, *r.Energy, *r.Energy-want[r.Key].Energy)
	}
	if resumed != 1 {
		t.Errorf("%d points continued from a checkpoint, want 1 (the killed task's point)", resumed)
	}
	if logged > kept+1 {
		t.Errorf("%d gradients computed, %d kept: more than the one in flight was lost", logged, kept)
	}
}

// TestSlurm_RelaxedScanThroughProgram runs the relaxed bend of the toy
// force field runner/command/testdata/bend.awk on the one-node Slurm,
// once reading the program's forces and once by central differences of
// its energies: node-task drives each optimisation through the program.
// With the bonds relaxed the energy is the bend term E0 + kt/2 (θ − θ0)²
// of the script's invented constants (an independent closed form).
func TestSlurm_RelaxedScanThroughProgram(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	for _, tc := range []struct{ name, gradient string }{
		{"forces read", bendForces},
		{"differences", ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			// bendDir writes the spec and copies bend.awk and morse.tmpl.
			src := bendDir(t, bendStart, tc.gradient, "")
			dir := slurmScanDir(t, "")
			for _, name := range []string{"bend.awk", "morse.tmpl"} {
				b, err := os.ReadFile(filepath.Join(src, name))
				if err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			spec, err := os.ReadFile(filepath.Join(src, "scan.toml"))
			if err != nil {
				t.Fatal(err)
			}
			writeSpec(t, dir, string(spec)+`[[scan]]
name = "theta"
angle = [2, 1, 3]
values = [95, 104, 115]
relax = true
[relax]
tighter = 10
[refine]
adaptive = false
`+relaxedBendSlurmQueue)
			start := time.Now()
			runToEnd(t, bin, dir)
			got, done := storeState(t, dir)
			if len(got) != 3 {
				t.Fatalf("%d points, want 3", len(got))
			}
			computed := computedLines(t, dir)
			for k, p := range got {
				var deg float64
				if _, err := fmt.Sscanf(k, "theta=%g", &deg); err != nil {
					t.Fatalf("key %q: %v", k, err)
				}
				d := (deg - bendTheta0) * math.Pi / 180
				want := (bendE0 + 0.5*bendKTheta*d*d) / hartreeInEV // bend.awk's invented constants
				// Thresholds tightened 10×: bonds (0.41 Eh/bohr²) within
				// 1.1e-4 bohr of r0, an energy error below 1e-8 Eh.
				if p.State != runner.Done || done[k] != 1 || math.Abs(p.Energy-want) > 1e-8 {
					t.Errorf("%s: %s (done %d times), E = %.10f Eh, want %.10f", k, p.State, done[k], p.Energy, want)
				}
				if computed[k] != 1 {
					t.Errorf("%s: optimised %d times on the node, want once", k, computed[k])
				}
				steps, _ := filepath.Glob(filepath.Join(runner.PointDir(dir, k), "relax", "step-*"))
				t.Logf("%s: E = %.10f Eh (closed form Δ %.1e), %d program steps", k, p.Energy, p.Energy-want, len(steps))
			}
			t.Logf("relaxed scan through the program on Slurm: %v", time.Since(start).Round(time.Millisecond))
		})
	}
}
