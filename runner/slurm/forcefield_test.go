package slurm

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"

	"wellscan/planner"
	"wellscan/runner"
)

// pairBackend is a stand-in engine: Morse terms for the O–H pairs and a
// harmonic H–H term (invented constants), a bent triatomic with real
// modes.
type pairBackend struct{}

func (pairBackend) Name() string { return "pairs" }

func (pairBackend) Compute(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	e := 0.0
	for i, a := range t.Mol.Atoms {
		for _, b := range t.Mol.Atoms[i+1:] {
			r := planner.Distance(a.Pos, b.Pos)
			if a.Element.Z == 1 && b.Element.Z == 1 {
				e += 0.5 * 0.04 * (r - 2.86) * (r - 2.86)
				continue
			}
			x := 1 - math.Exp(-1.1*(r-1.81))
			e += 0.15 * x * x
		}
	}
	return runner.Outcome{Energy: e, Converged: true}, nil
}

const ffNodeSpec = `[molecule]
geometry = """
O  0.0  0.0    0.0
H  0.0  0.757 -0.586
H  0.0 -0.757 -0.586
"""
[engine]
kind = "builtin"
method = "rhf"
basis = "sto-3g"
[queue]
kind = "slurm"
[forcefield]
order = "quartic"
`

func TestNodeTask_Run_ForceFieldStage2(t *testing.T) {
	// Stage 1 is done (its result files are in the scan directory, as the
	// orchestrator leaves them); a compute node gets stage-2 keys, rebuilds
	// their displacements from those files and computes exactly the
	// geometries the orchestrator planned.
	scan := t.TempDir()
	if err := os.WriteFile(filepath.Join(scan, "scan.toml"), []byte(ffNodeSpec), 0o644); err != nil {
		t.Fatal(err)
	}
	spec, err := planner.Load(filepath.Join(scan, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	b := pairBackend{}
	var samples []planner.Sample
	for _, p := range spec.InitialPoints() {
		mol, err := spec.Geometry(p)
		if err != nil {
			t.Fatal(err)
		}
		c := runner.ComputePoint(t.Context(), spec, scan, b, runner.Task{Key: p.Key, Values: p.Values, Mol: mol, Dir: runner.PointDir(scan, p.Key), Attempt: 1})
		if c.Result.Status != "done" {
			t.Fatalf("%s: %+v", p.Key, c.Result)
		}
		samples = append(samples, planner.Sample{Key: p.Key, Energy: c.Result.Energy})
	}
	plan := planner.Refine(spec, samples, 1)
	if plan.Status != planner.RefineContinue || len(plan.Points) == 0 {
		t.Fatalf("no stage 2 planned: %s %s", plan.Status, plan.Reason)
	}
	var keys []string
	want := map[string]float64{}
	for _, p := range plan.Points[:5] {
		keys = append(keys, p.Key)
		mol, err := spec.Geometry(p)
		if err != nil {
			t.Fatal(err)
		}
		o, _ := b.Compute(t.Context(), runner.Task{Mol: mol})
		want[p.Key] = o.Energy
	}
	jobDir := filepath.Join(scan, JobsDir, "tok-1")
	ss := ScriptSpec{JobName: "ws-00000000", Token: "tok-1", Tasks: 1, JobDir: jobDir, Worker: []string{"/nonexistent/wellscan", NodeSubcommand}}
	if _, err := PrepareJob(Slurm(), ss, &Manifest{Tasks: [][]string{keys}}); err != nil {
		t.Fatal(err)
	}
	fp := runner.SpecFingerprint(spec)
	meta := `{"token":"tok-1","scan_dir":"` + scan + `","fingerprint":` + jsonString(fp) + `}`
	if err := os.WriteFile(filepath.Join(jobDir, JobMetaFile), []byte(meta), 0o644); err != nil {
		t.Fatal(err)
	}
	nt := NodeTask{JobDir: jobDir, Task: 0, NewBackend: func(*planner.Spec) (runner.Backend, error) { return b, nil }}
	if err := nt.Run(t.Context()); err != nil {
		t.Fatal(err)
	}
	for _, k := range keys {
		res, ok := runner.ReadResult(scan, k, fp)
		if !ok || res.Status != "done" {
			t.Fatalf("%s: no done result (%+v)", k, res)
		}
		// the same geometry as planned, so the same energy, bit for bit
		if res.Energy != want[k] {
			t.Errorf("%s: node energy %.15f, planned geometry gives %.15f", k, res.Energy, want[k])
		}
	}
}
