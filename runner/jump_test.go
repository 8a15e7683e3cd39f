package runner_test

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/local"
	"wellscan/runner/model"
)

// guessSpike is a backend that lands the point key on "another state"
// (shift hartree higher) whenever it starts from a neighbour's guess, the
// way a continuation guess can carry an SCF across a crossing; from a cold
// start it computes the model energy.
type guessSpike struct {
	*model.Backend
	key   string
	shift float64
	mu    sync.Mutex
	tasks []runner.Task // every task for key
}

func (g *guessSpike) Compute(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	o, err := g.Backend.Compute(ctx, t)
	if t.Key == g.key {
		g.mu.Lock()
		g.tasks = append(g.tasks, t)
		g.mu.Unlock()
		if t.GuessPath != "" {
			o.Energy += g.shift
		}
	}
	return o, err
}

func runWith(t *testing.T, dir string, text string, wrap func(*model.Backend) runner.Backend) (runner.Summary, []runner.Event, error) {
	t.Helper()
	_, spec := scanDirAt(t, dir, text)
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	mb, err := model.New(spec)
	if err != nil {
		t.Fatal(err)
	}
	var b runner.Backend = mb
	if wrap != nil {
		b = wrap(mb)
	}
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b, Queue: local.New(1), SnapshotEvery: 50 * time.Millisecond}
	sum, err := r.Run(t.Context())
	evs, eerr := st.Events()
	if eerr != nil {
		t.Fatal(eerr)
	}
	return sum, evs, err
}

// scanDirAt writes spec text into dir (created if needed) and loads it.
func scanDirAt(t testing.TB, dir, text string) (string, *planner.Spec) {
	t.Helper()
	if err := os.MkdirAll(dir, 0o700); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "scan.toml")
	if err := os.WriteFile(path, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
	spec, err := planner.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	return dir, spec
}

func eventsFor(evs []runner.Event, key string) (retries, failures []runner.Event) {
	for _, e := range evs {
		if e.Key != key {
			continue
		}
		switch e.Kind {
		case "retry":
			retries = append(retries, e)
		case runner.EventFailed:
			failures = append(failures, e)
		}
	}
	return
}

func TestRunner_Run_EnergyJumpRetriedFromColdStart(t *testing.T) {
	const key = "r=1.10000"
	dir := t.TempDir()
	var g *guessSpike
	sum, evs, err := runWith(t, dir, morseSpec, func(b *model.Backend) runner.Backend {
		g = &guessSpike{Backend: b, key: key, shift: 0.3}
		return g
	})
	if err != nil {
		t.Fatalf("Run: %v (failed %+v)", err, sum.Failed)
	}
	if len(g.tasks) != 2 || g.tasks[0].GuessPath == "" || g.tasks[1].GuessPath != "" {
		t.Fatalf("tasks for %s: %+v; want one from a neighbour's guess, then one cold start", key, g.tasks)
	}
	var rec runner.PointRecord
	for _, r := range points(t, dir) {
		if r.State != runner.Done {
			t.Errorf("%s is %s", r.Key, r.State)
		}
		if r.Key == key {
			rec = r
		}
	}
	want := -112.7 + 0.41*sq(1-exp(-1.22*(1.10/0.529177210544-2.135))) // the model's Morse energy; CODATA 2018 Bohr radius
	if rec.Jumps != 1 || rec.Attempts != 2 || rec.Energy == nil || abs(*rec.Energy-want) > 1e-9 || rec.Extra["guess_distance"] != -1 {
		t.Errorf("record %+v; want done at %.10f hartree after one jump, 2 attempts, a cold start", rec, want)
	}
	retries, failures := eventsFor(evs, key)
	if len(retries) != 1 || len(failures) != 0 || !strings.Contains(retries[0].Message, "energy jump at r=1.10000") ||
		!strings.Contains(retries[0].Message, "fresh guess") {
		t.Errorf("events for %s: retries %+v, failures %+v", key, retries, failures)
	}
	if _, err := os.Stat(filepath.Join(runner.PointDir(dir, key), "result.energy-jump-1.json")); err != nil {
		t.Errorf("the rejected result was not kept aside: %v", err)
	}
}

func TestRunner_Run_EnergyJumpStaysFailed(t *testing.T) {
	const key = "r=1.10000"
	text := strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\nspikes = { \"r=1.10000\" = 0.3 }", 1) + "[queue]\nattempts = 1\n"
	dir := t.TempDir()
	sum, evs, err := runWith(t, dir, text, nil)
	if !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("Run error %v, want ErrPointsFailed", err)
	}
	if len(sum.Failed) != 1 || sum.Failed[0].Key != key {
		t.Fatalf("failed %+v, want only %s", sum.Failed, key)
	}
	f := sum.Failed[0]
	// Energies: the Morse value at 1.10 Å plus the 0.3 hartree spike, and
	// the neighbours' Morse values at 1.05 and 1.15 Å (model constants).
	for _, w := range []string{
		"energy jump at r=1.10000 (r=1.10000 Å)",
		"E = -112.3979272775 hartree", // the model Morse value at 1.10 Å, -112.6979272775 (curve golden), plus 0.3
		"above both neighbours",
		"r=1.05000 with E = -112.6", "r=1.15000 with E = -112.69",
		"[checks] max_jump_hartree = 0.05 hartree",
		"it jumped again when recomputed from a fresh guess, so it stays failed",
	} {
		if !strings.Contains(f.LastError, w) {
			t.Errorf("error %q lacks %q", f.LastError, w)
		}
	}
	if f.Class != runner.ClassEnergyJump || f.Jumps != 2 || f.Attempts != 2 || f.Energy != nil {
		t.Errorf("failed record %+v: want class %s, 2 jumps, 2 attempts (the retry ignores attempts = 1), no energy", f, runner.ClassEnergyJump)
	}
	recs := points(t, dir)
	for _, r := range recs {
		if r.Key != key && r.State != runner.Done {
			t.Errorf("%s is %s; every other point must stay done", r.Key, r.State)
		}
	}
	retries, failures := eventsFor(evs, key)
	if len(retries) != 1 || len(failures) != 1 {
		t.Fatalf("events for %s: %d retries, %d failures; want 1 and 1", key, len(retries), len(failures))
	}
	pd := runner.PointDir(dir, key)
	for _, n := range []string{"result.energy-jump-1.json", "result.energy-jump-2.json"} {
		if _, err := os.Stat(filepath.Join(pd, n)); err != nil {
			t.Errorf("%s: %v", n, err)
		}
	}
	if _, err := os.Stat(filepath.Join(pd, runner.ResultFile)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("%s still there (%v): a resume would take the rejected energy back", runner.ResultFile, err)
	}
	snap, err := runner.ReadSnapshot(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(snap.LastErrors) == 0 || snap.LastErrors[0].Key != key || snap.LastErrors[0].Class != runner.ClassEnergyJump {
		t.Errorf("status.json last errors %+v, want %s first", snap.LastErrors, key)
	}

	// A resumed run changes nothing: same failed point, same message, no
	// new events about it, nothing computed.
	sum2, evs2, err := runWith(t, dir, text, nil)
	if !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("resume: %v", err)
	}
	if len(sum2.Failed) != 1 || sum2.Failed[0].LastError != f.LastError || sum2.Failed[0].Jumps != 2 || sum2.Computed != 0 {
		t.Errorf("resume: failed %+v, computed %d", sum2.Failed, sum2.Computed)
	}
	r2, f2 := eventsFor(evs2, key)
	if len(r2) != 1 || len(f2) != 1 {
		t.Errorf("resume added events for %s: %d retries, %d failures", key, len(r2), len(f2))
	}
	after := points(t, dir)
	if len(after) != len(recs) {
		t.Errorf("resume: %d points, was %d", len(after), len(recs))
	}
	for i := range after {
		if after[i].State != recs[i].State || after[i].Attempts != recs[i].Attempts || after[i].LastError != recs[i].LastError {
			t.Errorf("resume changed %s: %+v, was %+v", after[i].Key, after[i], recs[i])
		}
	}
}

func TestRunner_Run_EnergyJumpCheckOff(t *testing.T) {
	text := strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\nspikes = { \"r=1.10000\" = 0.3 }", 1) + "[checks]\nmax_jump_hartree = 0\n"
	sum, _, err := runWith(t, t.TempDir(), text, nil)
	if err != nil || len(sum.Failed) != 0 {
		t.Fatalf("check off: %v, failed %+v", err, sum.Failed)
	}
}
