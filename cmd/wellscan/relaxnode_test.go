package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/slurm"
)

// TestNodeTask_RelaxedPoints runs the node side of a batch-queue relaxed
// scan: one array task holding two relaxed points, computed by
// `wellscan node-task` as a job script would (the scheduler itself is not
// involved). Each point must be optimised on the node with its torsion
// held, leave its relaxed geometry and checkpoint, and a rerun of the task
// must repeat nothing.
func TestNodeTask_RelaxedPoints(t *testing.T) {
	if testing.Short() {
		t.Skip("two constrained optimisations")
	}
	spec := strings.Replace(tortureRelaxedSpec, "values = [0, 30, 60, 90, 120, 150, 180]", "values = [0, 90]", 1)
	scan := t.TempDir()
	writeSpec(t, scan, spec)
	sp, err := planner.Load(filepath.Join(scan, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	keys := []string{"phi=0.000", "phi=90.000"}
	jobDir := filepath.Join(scan, slurm.JobsDir, "tok-1")
	ss := slurm.ScriptSpec{JobName: "ws-00000000", Token: "tok-1", Tasks: 1, JobDir: jobDir,
		Worker: []string{"/nonexistent/wellscan", slurm.NodeSubcommand}}
	if _, err := slurm.PrepareJob(slurm.Slurm(), ss, &slurm.Manifest{Tasks: [][]string{keys}}); err != nil {
		t.Fatal(err)
	}
	fp := runner.SpecFingerprint(sp)
	meta, err := json.Marshal(map[string]any{"token": "tok-1", "scan_dir": scan, "fingerprint": fp})
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(jobDir, slurm.JobMetaFile), meta, 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, errs := runCLI(t, "", slurm.NodeSubcommand, "--job-dir", jobDir, "--task", "0")
	if code != 0 {
		t.Fatalf("node-task: exit %d: %s", code, errs)
	}
	for _, k := range keys {
		res, ok := runner.ReadResult(scan, k, fp)
		if !ok || res.Status != "done" {
			t.Fatalf("%s: no done result (%+v)", k, res)
		}
		st, err := runner.ReadRelaxState(runner.PointDir(scan, k))
		if err != nil || !st.Done || !st.Converged {
			t.Fatalf("%s: checkpoint %v, done %v", k, err, st != nil && st.Done)
		}
		if _, err := os.Stat(filepath.Join(runner.PointDir(scan, k), runner.RelaxedFile)); err != nil {
			t.Errorf("%s: no relaxed geometry: %v", k, err)
		}
		// The bound on held coordinates: 1e-4°.
		if e := res.Extra["relax_constraint_error"] * 180 / 3.141592653589793; e > 1e-4 {
			t.Errorf("%s: held torsion off by %.2e°", k, e)
		}
	}
	code, _, errs = runCLI(t, "", slurm.NodeSubcommand, "--job-dir", jobDir, "--task", "0")
	if code != 0 || strings.Count(errs, "skipped") != 2 {
		t.Errorf("rerun: exit %d, stderr %q; want both points skipped", code, errs)
	}
}
