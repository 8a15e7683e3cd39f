package runner_test

import (
	"context"
	"crypto/sha256"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/local"
	"wellscan/runner/model"
)

// morseSpec is a small model scan (invented constants, atomic units).
var morseSpec = coMorse{Title: "runner test", From: "1.00", To: "1.30", Step: "0.05", Refine: "target_step = 0.002"}.String()

// scanDir writes spec text into a new scan directory.
func scanDir(t testing.TB, text string) (string, *planner.Spec) {
	t.Helper()
	return scanDirAt(t, t.TempDir(), text)
}

func runScan(t testing.TB, ctx context.Context, dir string, spec *planner.Spec, workers int) (runner.Summary, error) {
	t.Helper()
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	b, err := model.New(spec)
	if err != nil {
		t.Fatal(err)
	}
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b, Queue: local.New(workers), SnapshotEvery: 50 * time.Millisecond}
	return r.Run(ctx)
}

func points(t testing.TB, dir string) []runner.PointRecord {
	t.Helper()
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	p, err := st.Points()
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func TestRunner_Run_MorseConverges(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	sum, err := runScan(t, t.Context(), dir, spec, 2)
	if err != nil {
		t.Fatal(err)
	}
	if sum.Status != planner.RefineConverged {
		t.Fatalf("status %s (%s)", sum.Status, sum.Reason)
	}
	// r_e = 2.135 bohr by construction of the model; ≤ 1e-4 Å asked.
	if len(sum.Extrema) != 1 || math.Abs(sum.Extrema[0].Values[0]-2.135)*planner.BohrInAngstrom > 1e-4 {
		t.Fatalf("extrema %+v, want one minimum at 2.135 bohr", sum.Extrema)
	}
	recs := points(t, dir)
	if sum.Counts[runner.Done] != len(recs) || sum.Computed != len(recs) {
		t.Errorf("done %d, computed %d, records %d", sum.Counts[runner.Done], sum.Computed, len(recs))
	}
	guessed := 0
	for _, r := range recs {
		if _, ok := runner.ReadResult(dir, r.Key, string(mustJSON(spec.Fingerprint()))); !ok {
			t.Errorf("%s: no valid result file", r.Key)
		}
		if r.Extra["guess_distance"] > 0 {
			guessed++
		}
		if r.Attempts != 1 {
			t.Errorf("%s: %d attempts, want 1", r.Key, r.Attempts)
		}
	}
	// Every point after the first one per worker starts from a neighbour.
	if guessed < len(recs)-2 {
		t.Errorf("%d of %d points had a continuation guess", guessed, len(recs))
	}
	snap, err := runner.ReadSnapshot(dir)
	if err != nil {
		t.Fatal(err)
	}
	if snap.State != "finished" || snap.Counts["done"] != len(recs) || len(snap.Points) != len(recs) {
		t.Errorf("snapshot %s with counts %v and %d points", snap.State, snap.Counts, len(snap.Points))
	}
	if fi, err := os.Stat(filepath.Join(dir, runner.DBFile)); err != nil || fi.Mode().Perm() != 0o600 {
		t.Errorf("store mode %v (%v), want 0600", fi.Mode().Perm(), err)
	}
}

func TestRunner_Run_FailedPointsUseAttempts(t *testing.T) {
	dir, spec := scanDir(t, strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\nfail = [\"r=1.05000\"]", 1)+"[queue]\nattempts = 2\n")
	sum, err := runScan(t, t.Context(), dir, spec, 2)
	if !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("Run error %v, want ErrPointsFailed", err)
	}
	if len(sum.Failed) != 1 || sum.Failed[0].Key != "r=1.05000" || sum.Failed[0].Attempts != 2 || sum.Failed[0].Class != "error" {
		t.Fatalf("failed %+v, want r=1.05000 after 2 attempts", sum.Failed)
	}
	if sum.Status != planner.RefineConverged {
		t.Errorf("refinement %s despite one failed point off the minimum: %s", sum.Status, sum.Reason)
	}
}

func TestRunner_Run_ResumeIngestsResultFiles(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	if _, err := runScan(t, t.Context(), dir, spec, 1); err != nil {
		t.Fatal(err)
	}
	want := points(t, dir)
	// Pretend the orchestrator died right after the workers wrote their
	// result files: a second scan directory gets the same result files but
	// a store where those points are still running.
	dir2, spec2 := scanDir(t, morseSpec)
	if err := os.CopyFS(filepath.Join(dir2, runner.PointsDir), os.DirFS(filepath.Join(dir, runner.PointsDir))); err != nil {
		t.Fatal(err)
	}
	st, err := runner.OpenScan(dir2, spec2, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var recs []runner.PointRecord
	for _, r := range want {
		r.State, r.Energy, r.Attempts = runner.Running, nil, 1
		recs = append(recs, r)
	}
	if err := st.Commit(recs, nil, nil); err != nil {
		t.Fatal(err)
	}
	st.Close()
	sum, err := runScan(t, t.Context(), dir2, spec2, 1)
	if err != nil {
		t.Fatal(err)
	}
	if sum.Computed != 0 || sum.Reused != len(want) {
		t.Errorf("computed %d, reused %d; want 0 and %d", sum.Computed, sum.Reused, len(want))
	}
	got := points(t, dir2)
	if len(got) != len(want) {
		t.Fatalf("%d points, want %d", len(got), len(want))
	}
	for i := range got {
		if got[i].Key != want[i].Key || got[i].State != runner.Done || *got[i].Energy != *want[i].Energy {
			t.Errorf("point %s: %s %v, want done %v", got[i].Key, got[i].State, got[i].Energy, *want[i].Energy)
		}
	}
}

func mustJSON(f planner.Fingerprint) []byte {
	b, _ := jsonMarshal(f)
	return b
}

func fileHash(t testing.TB, path string) [32]byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return sha256.Sum256(b)
}

func TestOpenScan_SpecChange(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	if _, err := runScan(t, t.Context(), dir, spec, 2); err != nil {
		t.Fatal(err)
	}
	db := filepath.Join(dir, runner.DBFile)
	tests := []struct {
		name, old, new string
		refused        bool
		want           string
	}{
		{"engine change refused", "depth = 0.41", "depth = 0.40", true, "engine settings changed"},
		{"geometry change refused", "O 0 0 1.13", "O 0 0 1.10", true, "molecule (atoms, geometry, charge or multiplicity) changed"},
		{"grid change accepted", "to = 1.30", "to = 1.40", false, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			before := fileHash(t, db)
			s, err := planner.Decode([]byte(strings.Replace(morseSpec, tc.old, tc.new, 1)), filepath.Join(dir, "scan.toml"))
			if err != nil {
				t.Fatal(err)
			}
			st, err := runner.OpenScan(dir, s, runner.OpenOptions{})
			if !tc.refused {
				if err != nil {
					t.Fatalf("OpenScan: %v", err)
				}
				st.Close()
				return
			}
			if !errors.Is(err, runner.ErrSpecChanged) || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("OpenScan error %v, want ErrSpecChanged mentioning %q", err, tc.want)
			}
			if fileHash(t, db) != before {
				t.Errorf("refused open changed the store file")
			}
		})
	}
}

func TestOpen_LockedNamesHolder(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	_, err = runner.Open(dir, runner.OpenOptions{Timeout: 100 * time.Millisecond})
	host, _ := os.Hostname()
	var le *runner.LockedError
	if !errors.As(err, &le) || !errors.Is(err, runner.ErrLocked) {
		t.Fatalf("second Open error %v, want *LockedError", err)
	}
	if want := "this scan is being run by PID " + itoa(os.Getpid()) + " on " + host + " since "; !strings.Contains(err.Error(), want) {
		t.Errorf("error %q, want it to contain %q", err, want)
	}
}

func TestRunner_Run_CancelLeavesStoreConsistent(t *testing.T) {
	dir, spec := scanDir(t, strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\ndelay = \"30ms\"", 1))
	ctx, cancel := context.WithCancel(t.Context())
	time.AfterFunc(100*time.Millisecond, cancel)
	_, err := runScan(t, ctx, dir, spec, 2)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("Run error %v, want context.Canceled", err)
	}
	done := 0
	for _, r := range points(t, dir) {
		switch r.State {
		case runner.Running, runner.Submitted:
			t.Errorf("%s left %s after cancel", r.Key, r.State)
		case runner.Done:
			done++
		}
		if r.State == runner.Planned && r.Attempts != 0 {
			t.Errorf("%s: interrupted attempt counted (%d)", r.Key, r.Attempts)
		}
	}
	if snap, err := runner.ReadSnapshot(dir); err != nil || snap.State != "interrupted" {
		t.Errorf("snapshot state %q (%v), want interrupted", snap.State, err)
	}
	sum, err := runScan(t, t.Context(), dir, spec, 2)
	if err != nil || sum.Status != planner.RefineConverged {
		t.Fatalf("resume: %v, %s", err, sum.Status)
	}
	if sum.Computed+done != sum.Counts[runner.Done] {
		t.Errorf("resume computed %d after %d done, total done %d: a done point was recomputed", sum.Computed, done, sum.Counts[runner.Done])
	}
}

// Result files of points computed in process are a copy of the store
// (written without fsync); a resume rebuilds a missing or damaged one
// from the record and computes nothing.
func TestRunner_Run_RebuildsLostResultFiles(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	if _, err := runScan(t, t.Context(), dir, spec, 2); err != nil {
		t.Fatal(err)
	}
	fp := runner.SpecFingerprint(spec)
	want := map[string]runner.Result{}
	for _, k := range []string{"r=1.05000", "r=1.20000"} {
		res, ok := runner.ReadResult(dir, k, fp)
		if !ok {
			t.Fatalf("%s: no result file after the run", k)
		}
		want[k] = res
	}
	// A machine crash can leave a file missing or empty.
	if err := os.Remove(filepath.Join(runner.PointDir(dir, "r=1.05000"), runner.ResultFile)); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(runner.PointDir(dir, "r=1.20000"), runner.ResultFile), nil, 0o600); err != nil {
		t.Fatal(err)
	}
	sum, err := runScan(t, t.Context(), dir, spec, 2)
	if err != nil {
		t.Fatal(err)
	}
	if sum.Computed != 0 {
		t.Errorf("resume computed %d points, want 0", sum.Computed)
	}
	for k, w := range want {
		got, ok := runner.ReadResult(dir, k, fp)
		if !ok || got.Status != "done" || got.Energy != w.Energy || got.Attempt != w.Attempt || got.Orbitals != w.Orbitals ||
			got.Extra["guess_distance"] != w.Extra["guess_distance"] {
			t.Errorf("%s: rebuilt result %+v (ok %v), want the energy, attempt and orbitals of %+v", k, got, ok, w)
		}
	}
}

// TestOpenScan_EngineChangeBeforeAnyPointFinished: while no point is
// done, the engine settings may change (a wrong setting that failed every
// point is fixed); the failed points run again with fresh attempts. Once
// a point is done the same change is refused (TestOpenScan_SpecChange).
func TestOpenScan_EngineChangeBeforeAnyPointFinished(t *testing.T) {
	all := `fail = ["r=1.00000", "r=1.05000", "r=1.10000", "r=1.15000", "r=1.20000", "r=1.25000", "r=1.30000"]` + "\n"
	broken := strings.Replace(morseSpec, "offset = -112.7\n", "offset = -112.7\n"+all, 1)
	dir, spec := scanDir(t, broken)
	sum, err := runScan(t, t.Context(), dir, spec, 2)
	if !errors.Is(err, runner.ErrPointsFailed) || sum.Counts[runner.Failed] != 7 {
		t.Fatalf("broken engine: %v, counts %v; want every one of the 7 points failed", err, sum.Counts)
	}
	fixed, err := planner.Decode([]byte(morseSpec), filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	sum, err = runScan(t, t.Context(), dir, fixed, 2)
	if err != nil || sum.Counts[runner.Failed] != 0 || sum.Counts[runner.Done] < 7 {
		t.Fatalf("fixed engine: %v, counts %v; want every point done", err, sum.Counts)
	}
}

// TestRun_Resume_CountsEarlierPoints: a rerun of a finished scan
// computes nothing and says how many points earlier runs finished.
func TestRun_Resume_CountsEarlierPoints(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	first, err := runScan(t, t.Context(), dir, spec, 2)
	if err != nil {
		t.Fatal(err)
	}
	again, err := runScan(t, t.Context(), dir, spec, 2)
	if err != nil || again.Computed != 0 || again.Earlier != first.Counts[runner.Done] || first.Earlier != 0 {
		t.Errorf("rerun: %v, computed %d, earlier %d (first run: earlier %d, done %d); want 0 computed and every done point counted as earlier",
			err, again.Computed, again.Earlier, first.Earlier, first.Counts[runner.Done])
	}
}

// nameOnlyQueue has a name and slots but neither runs nor submits tasks.
type nameOnlyQueue struct{}

func (nameOnlyQueue) Name() string { return "half" }
func (nameOnlyQueue) Slots() int   { return 1 }

// A queue that is neither a Pool nor a Batch is refused before the store
// is touched: no point is planned.
func TestRunner_Run_QueueNeitherPoolNorBatch(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	b, err := model.New(spec)
	if err != nil {
		t.Fatal(err)
	}
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b, Queue: nameOnlyQueue{}}
	if _, err := r.Run(t.Context()); err == nil || !strings.Contains(err.Error(), "neither a runner.Pool nor a runner.Batch") {
		t.Fatalf("Run with a queue of neither kind = %v, want the refusal", err)
	}
	if recs, err := st.Points(); err != nil || len(recs) != 0 {
		t.Errorf("store holds %d points (%v) after the refusal, want none", len(recs), err)
	}
}
