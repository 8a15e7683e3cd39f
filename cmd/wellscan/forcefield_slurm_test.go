//go:build slurm

package main

import (
	"math"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner/report"
)

// ffSlurmSpec is the water RHF/6-31G* quartic force field of
// forcefield_test.go on the local Slurm, 4 points per array task.
func ffSlurmSpec() string {
	return strings.Replace(ffSpecText(1), "[queue]\nkind = \"local\"\nworkers = 1", `[queue]
kind = "slurm"
[queue.slurm]
points_per_task = 4
throttle = 4
time = "5m"
memory_mb = 500
poll_interval = "300ms"
fast_poll = true
lost_after = "10s"`, 1)
}

func TestSlurm_Forcefield_KillRerun_EqualsLocal(t *testing.T) {
	needSlurm(t)
	bin := buildWellscan(t)
	local := t.TempDir()
	writeSpec(t, local, ffSpecText(2))
	runToEnd(t, bin, local)
	want, _ := storeState(t, local)

	dir := slurmScanDir(t, ffSlurmSpec())
	cmd := exec.Command(bin, "run", "-q", dir)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	// Kill the orchestrator once the first results are in (stage 1 runs).
	deadline := time.Now().Add(90 * time.Second)
	for resultFiles(dir) == 0 && time.Now().Before(deadline) {
		time.Sleep(20 * time.Millisecond)
	}
	_ = cmd.Process.Signal(syscall.SIGKILL)
	_ = cmd.Wait()
	t.Logf("killed with %d result files written", resultFiles(dir))
	start := time.Now()
	if out, err := exec.Command(bin, "run", "-q", dir).CombinedOutput(); err != nil {
		t.Fatalf("rerun: %v\n%s", err, out)
	}
	t.Logf("rerun to the end on Slurm: %v", time.Since(start).Round(time.Millisecond))
	got, _ := storeState(t, dir)
	computed := computedLines(t, dir)
	for k := range got {
		if computed[k] != 1 {
			t.Errorf("%s computed %d times on the node, want exactly once", k, computed[k])
		}
	}
	// Same tolerance as the local torture (resumed points may start from
	// other guesses and agree to the SCF convergence).
	assertNoLossNoDup(t, dir, want, 1e-8)
	spec, err := planner.Load(filepath.Join(local, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	an := func(d string) *report.FFReport {
		s, err := forceFieldSamples(d, spec)
		if err != nil {
			t.Fatal(err)
		}
		r, err := report.AnalyzeForceField(spec, s)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	a, b := an(local), an(dir)
	worst := 0.0
	for i, band := range a.Isotopologues[0].Bands {
		worst = math.Max(worst, math.Abs(band.Cm1-b.Isotopologues[0].Bands[i].Cm1))
		// 1e-8 hartree in the energies moves a band by < 1 cm⁻¹ (see the local torture)
		if !scalar.EqualWithinAbs(band.Cm1, b.Isotopologues[0].Bands[i].Cm1, 1) {
			t.Errorf("%s: local %.4f, Slurm %.4f", band.Label, band.Cm1, b.Isotopologues[0].Bands[i].Cm1)
		}
	}
	t.Logf("largest band difference local vs Slurm: %.2e cm⁻¹", worst)
}
