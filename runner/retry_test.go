package runner_test

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"wellscan/runner"
	"wellscan/runner/local"
	"wellscan/runner/model"
)

func withAttempts(spec string, n string) string {
	return spec + "[queue]\nattempts = " + n + "\n"
}

func failingMorse(attempts string) string {
	return withAttempts(strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\nfail = [\"r=1.10000\"]", 1), attempts)
}

func recordOf(t *testing.T, dir, key string) runner.PointRecord {
	t.Helper()
	for _, p := range points(t, dir) {
		if p.Key == key {
			return p
		}
	}
	t.Fatalf("no point %s", key)
	return runner.PointRecord{}
}

// TestRunner_RaisedAttempts_RetriesFailed is issue 15 item 14: a point
// that failed in a way another try may cure is tried again when the user
// raises [queue] attempts.
func TestRunner_RaisedAttempts_RetriesFailed(t *testing.T) {
	dir, spec := scanDir(t, failingMorse("1"))
	if _, err := runScan(t, t.Context(), dir, spec, 1); !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("run = %v, want ErrPointsFailed", err)
	}
	if r := recordOf(t, dir, "r=1.10000"); r.State != runner.Failed || r.Attempts != 1 {
		t.Fatalf("after attempts = 1: %s with %d attempts", r.State, r.Attempts)
	}
	_, spec = scanDirAt(t, dir, failingMorse("3"))
	if _, err := runScan(t, t.Context(), dir, spec, 1); !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("run = %v, want ErrPointsFailed (the model always fails this point)", err)
	}
	if r := recordOf(t, dir, "r=1.10000"); r.State != runner.Failed || r.Attempts != 3 {
		t.Errorf("after attempts = 3: %s with %d attempts, want failed after 3", r.State, r.Attempts)
	}
}

// TestRetryAndDrop: a failed point is dropped (the run then succeeds and
// refinement does not bring it back), retried by key (planned with fresh
// attempts), and selections that match nothing say so.
func TestRetryAndDrop(t *testing.T) {
	dir, spec := scanDir(t, failingMorse("2"))
	if _, err := runScan(t, t.Context(), dir, spec, 1); !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("run = %v, want ErrPointsFailed", err)
	}
	now := time.Now()
	if _, err := runner.RetryPoints(dir, spec, runner.Selection{Classes: []runner.FailureClass{runner.ClassProgramMissing}}, now); !errors.Is(err, runner.ErrNothingSelected) || !strings.Contains(err.Error(), "r=1.10000 (error)") {
		t.Errorf("RetryPoints(no such class) = %v, want ErrNothingSelected listing r=1.10000 (error)", err)
	}
	if _, err := runner.DropPoints(dir, spec, []string{"r=9.99999"}, "", now); !errors.Is(err, runner.ErrNothingSelected) {
		t.Errorf("DropPoints(unknown key) = %v, want ErrNothingSelected", err)
	}
	if got, err := runner.DropPoints(dir, spec, []string{"r=1.10000"}, "the model refuses it", now); err != nil || len(got) != 1 {
		t.Fatalf("DropPoints = %v, %v", got, err)
	}
	sum, err := runScan(t, t.Context(), dir, spec, 1)
	if err != nil {
		t.Fatalf("run after the drop = %v, want success", err)
	}
	if sum.Counts[runner.Dropped] != 1 || sum.Counts[runner.Failed] != 0 {
		t.Errorf("counts %v, want 1 dropped and 0 failed", sum.Counts)
	}
	if r := recordOf(t, dir, "r=1.10000"); r.State != runner.Dropped || !strings.Contains(r.LastError, "the model refuses it") {
		t.Errorf("dropped record: %s %q", r.State, r.LastError)
	}
	got, err := runner.RetryPoints(dir, spec, runner.Selection{Keys: []string{"r=1.10000"}}, now)
	if err != nil || len(got) != 1 {
		t.Fatalf("RetryPoints(key) = %v, %v", got, err)
	}
	if r := recordOf(t, dir, "r=1.10000"); r.State != runner.Planned || r.Attempts != 0 {
		t.Errorf("retried record: %s with %d attempts, want planned with 0", r.State, r.Attempts)
	}
	if _, err := runScan(t, t.Context(), dir, spec, 1); !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("run after the retry = %v, want the point to fail again", err)
	}
	if r := recordOf(t, dir, "r=1.10000"); r.Attempts != 2 {
		t.Errorf("after the retry: %d attempts, want 2 (fresh attempts)", r.Attempts)
	}
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	evs, _ := st.Events()
	st.Close()
	var kinds []string
	for _, e := range evs {
		if e.Key == "r=1.10000" && (e.Kind == "dropped" || strings.Contains(e.Message, "by request")) {
			kinds = append(kinds, string(e.Kind))
		}
	}
	if strings.Join(kinds, ",") != "dropped,retry" {
		t.Errorf("events recorded for the point: %v, want dropped then retry", kinds)
	}
}

// missingProgram is a backend whose every point fails as a program that
// does not exist would.
type missingProgram struct{ calls atomic.Int32 }

func (*missingProgram) Name() string { return "command" }
func (m *missingProgram) Compute(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	m.calls.Add(1)
	return runner.Outcome{Class: "program-missing", Error: `program "qmprog": executable file not found in $PATH`, Permanent: true}, nil
}

// TestRunner_SameFailure_StopsRound_ThenSettingsChange is issue 19 item 1
// and issue 15 item 14: the first points all fail with a missing program;
// the round stops with one message after three, the rest stay planned;
// then the engine settings change (allowed: no point has finished) and
// the failed points are computed.
func TestRunner_SameFailure_StopsRound_ThenSettingsChange(t *testing.T) {
	dir, spec := scanDir(t, morseSpec)
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	b := &missingProgram{}
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b, Queue: local.New(1)}
	_, err = r.Run(t.Context())
	st.Close()
	if !errors.Is(err, runner.ErrSameFailure) || !strings.Contains(err.Error(), "program-missing") || !strings.Contains(err.Error(), "qmprog") {
		t.Fatalf("run = %v, want ErrSameFailure naming the class and the error", err)
	}
	if n := b.calls.Load(); n != 3 {
		t.Errorf("the backend ran %d points, want 3", n)
	}
	states := map[runner.State]int{}
	for _, p := range points(t, dir) {
		states[p.State]++
	}
	if states[runner.Failed] != 3 || states[runner.Planned] != 4 {
		t.Errorf("states %v, want 3 failed and 4 planned", states)
	}
	// The fix changes [engine]: refused once points are done, accepted now.
	_, spec = scanDirAt(t, dir, strings.Replace(morseSpec, "offset = -112.7", "offset = -112.6", 1))
	if _, err := runScan(t, t.Context(), dir, spec, 1); err != nil {
		t.Fatalf("run with the fixed settings = %v", err)
	}
	for _, p := range points(t, dir) {
		if p.State != runner.Done {
			t.Errorf("point %s is %s after the fix", p.Key, p.State)
		}
	}
	// Now points are done: another engine change is refused.
	_, spec = scanDirAt(t, dir, strings.Replace(morseSpec, "offset = -112.7", "offset = -112.5", 1))
	if _, err := runner.OpenScan(dir, spec, runner.OpenOptions{}); !errors.Is(err, runner.ErrSpecChanged) {
		t.Errorf("OpenScan after points finished = %v, want ErrSpecChanged", err)
	}
}

// TestRunner_PointsDeletedMidRun is issue 15 item 14: points/ removed
// under a running scan (state files of finished neighbours gone) must not
// turn the remaining points into failures.
func TestRunner_PointsDeletedMidRun(t *testing.T) {
	text := strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\ndelay = \"20ms\"", 1)
	dir, spec := scanDir(t, text)
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	b, err := model.New(spec)
	if err != nil {
		t.Fatal(err)
	}
	var done atomic.Int32
	deleted := make(chan struct{})
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b, Queue: local.New(2),
		OnEvent: func(e runner.Event) {
			if e.Kind == runner.EventDone && done.Add(1) == 3 {
				// Workers keep writing while it goes: retry until it is gone.
				var err error
				for range 20 {
					if err = os.RemoveAll(filepath.Join(dir, runner.PointsDir)); err == nil {
						break
					}
				}
				if err != nil {
					t.Error(err)
				}
				close(deleted)
			}
		}}
	sum, err := r.Run(t.Context())
	if err != nil {
		t.Fatalf("run = %v", err)
	}
	select {
	case <-deleted:
	default:
		t.Fatal("points/ was never deleted; the test did not exercise anything")
	}
	if len(sum.Failed) != 0 {
		t.Errorf("%d points failed after points/ was deleted: %v", len(sum.Failed), sum.Failed[0].LastError)
	}
}
