package slurm

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/model"
)

// nodeJob writes a scan with fakeSpec and a job directory whose task 0
// lists keys, as the queue would.
func nodeJob(t *testing.T, keys ...string) (scan, jobDir string, spec *planner.Spec) {
	t.Helper()
	scan = t.TempDir()
	if err := os.WriteFile(filepath.Join(scan, "scan.toml"), []byte(fakeSpec), 0o644); err != nil {
		t.Fatal(err)
	}
	spec, err := planner.Load(filepath.Join(scan, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	jobDir = filepath.Join(scan, JobsDir, "tok-1")
	ss := ScriptSpec{JobName: "ws-00000000", Token: "tok-1", Tasks: 1, JobDir: jobDir,
		Worker: []string{"/nonexistent/wellscan", NodeSubcommand}}
	if _, err := PrepareJob(Slurm(), ss, &Manifest{Tasks: [][]string{keys}}); err != nil {
		t.Fatal(err)
	}
	meta := `{"token":"tok-1","scan_dir":"` + scan + `","fingerprint":` + jsonString(runner.SpecFingerprint(spec)) + `,"attempts":{"` + keys[0] + `":2}}`
	if err := os.WriteFile(filepath.Join(jobDir, JobMetaFile), []byte(meta), 0o644); err != nil {
		t.Fatal(err)
	}
	return scan, jobDir, spec
}

func jsonString(s string) string {
	return `"` + strings.NewReplacer(`\`, `\\`, `"`, `\"`).Replace(s) + `"`
}

func modelBackend(s *planner.Spec) (runner.Backend, error) { return model.New(s) }

func TestNodeTask_Run_ComputesThenSkips(t *testing.T) {
	keys := []string{"r=0.80000", "r=0.85000"}
	scan, jobDir, spec := nodeJob(t, keys...)
	var seen []string
	nt := NodeTask{JobDir: jobDir, Task: 0, NewBackend: modelBackend,
		OnPoint: func(key, what string, status runner.ResultStatus) {
			seen = append(seen, what+" "+key+" "+string(status))
		}}
	if err := nt.Run(t.Context()); err != nil {
		t.Fatal(err)
	}
	fp := runner.SpecFingerprint(spec)
	for i, k := range keys {
		res, ok := runner.ReadResult(scan, k, fp)
		if !ok || res.Status != "done" {
			t.Fatalf("%s: no done result (%+v)", k, res)
		}
		// The attempt comes from job.json (2 for the first key, 1 by default).
		if want := []int{2, 1}[i]; res.Attempt != want {
			t.Errorf("%s: attempt %d, want %d", k, res.Attempt, want)
		}
		// The same energy as the round loop's own worker computes.
		pt, _ := spec.ParseKey(k)
		mol, _ := spec.Geometry(pt)
		b, _ := model.New(spec)
		local := t.TempDir()
		c := runner.ComputePoint(t.Context(), spec, local, b, runner.Task{Key: k, Values: pt.Values, Mol: mol, Dir: runner.PointDir(local, k), Attempt: 1})
		if c.Result.Energy != res.Energy {
			t.Errorf("%s: node energy %.12f, in-process %.12f", k, res.Energy, c.Result.Energy)
		}
	}
	// A requeued task repeats nothing.
	if err := nt.Run(t.Context()); err != nil {
		t.Fatal(err)
	}
	want := []string{"computed r=0.80000 done", "computed r=0.85000 done", "skipped r=0.80000 done", "skipped r=0.85000 done"}
	if strings.Join(seen, "; ") != strings.Join(want, "; ") {
		t.Errorf("points: %q, want %q", seen, want)
	}
}

func TestNodeTask_Run_RefusesChangedSpec(t *testing.T) {
	scan, jobDir, _ := nodeJob(t, "r=0.80000")
	b, _ := os.ReadFile(filepath.Join(scan, "scan.toml"))
	changed := strings.Replace(string(b), "depth = 0.22", "depth = 0.23", 1)
	if err := os.WriteFile(filepath.Join(scan, "scan.toml"), []byte(changed), 0o644); err != nil {
		t.Fatal(err)
	}
	err := NodeTask{JobDir: jobDir, Task: 0, NewBackend: modelBackend}.Run(t.Context())
	if err == nil || !strings.Contains(err.Error(), "changed") {
		t.Errorf("Run = %v, want an error saying the spec changed", err)
	}
}

func TestNodeTask_Run_BadTaskIndex(t *testing.T) {
	_, jobDir, _ := nodeJob(t, "r=0.80000")
	err := NodeTask{JobDir: jobDir, Task: 5, NewBackend: modelBackend}.Run(t.Context())
	if err == nil || !strings.Contains(err.Error(), "outside the manifest") {
		t.Errorf("Run = %v, want an error naming the manifest range", err)
	}
}

func TestNeighbours_Nearest_TiesByKey(t *testing.T) {
	// Values exact in binary, so the ties are exact.
	nb := neighbours{
		{key: "r=1.0", values: []float64{1.0}, path: "a"},
		{key: "r=1.5", values: []float64{1.5}, path: "b"},
		{key: "r=0.5", values: []float64{0.5}, path: "c"},
	}
	tests := []struct {
		x    float64
		key  string
		want string
	}{
		{1.125, "r=1.125", "a"},
		{1.25, "r=1.25", "a"}, // equidistant from 1.0 and 1.5: the smaller key
		{0.0, "r=0.0", "c"},
		{1.0, "r=1.0", "c"}, // a point is not its own neighbour; 0.5 and 1.5 tie
	}
	for _, tc := range tests {
		if got := nb.nearest([]float64{tc.x}, tc.key); got != tc.want {
			t.Errorf("nearest(%g) = %q, want %q", tc.x, got, tc.want)
		}
	}
	if got := (neighbours{}).nearest([]float64{1}, "r=1"); got != "" {
		t.Errorf("nearest with no neighbours = %q, want \"\"", got)
	}
}

// guessRecorder wraps a backend and records the guess each task was given.
type guessRecorder struct {
	runner.Backend
	guess map[string]string
	cold  map[string]bool
}

func (g *guessRecorder) Compute(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	g.guess[t.Key], g.cold[t.Key] = t.GuessPath, t.Cold
	return g.Backend.Compute(ctx, t)
}

// A point job.json lists as cold (recomputed after an energy jump) gets no
// continuation guess on the node, although a done neighbour is there.
func TestNodeTask_Run_ColdPointsGetNoGuess(t *testing.T) {
	for _, cold := range []bool{false, true} {
		keys := []string{"r=0.80000", "r=0.85000"}
		_, jobDir, _ := nodeJob(t, keys...)
		if cold {
			path := filepath.Join(jobDir, JobMetaFile)
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			b = []byte(strings.Replace(string(b), `"attempts":`, `"cold":["r=0.85000"],"attempts":`, 1))
			if err := os.WriteFile(path, b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		rec := &guessRecorder{guess: map[string]string{}, cold: map[string]bool{}}
		nt := NodeTask{JobDir: jobDir, Task: 0, NewBackend: func(s *planner.Spec) (runner.Backend, error) {
			b, err := model.New(s)
			rec.Backend = b
			return rec, err
		}}
		if err := nt.Run(t.Context()); err != nil {
			t.Fatal(err)
		}
		g := rec.guess["r=0.85000"]
		switch {
		case cold && (g != "" || !rec.cold["r=0.85000"]):
			t.Errorf("cold point started from %q (cold flag %v), want no guess", g, rec.cold["r=0.85000"])
		case !cold && g == "":
			t.Errorf("control: the second point got no neighbour guess, so this test proves nothing")
		}
	}
}
