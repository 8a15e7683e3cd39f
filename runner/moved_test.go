package runner_test

import (
	"errors"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync/atomic"
	"testing"

	"wellscan/runner"
	"wellscan/runner/local"
	"wellscan/runner/model"
)

// TestRunner_ScanMovedMidRun is issue 15 item 14: the scan directory is
// renamed while points run (model engine, 20 ms per point, two workers).
// The run stops with ErrScanMoved naming the new place; no point is
// failed and no attempt is used for the move; the store, the status file
// and the lock record went with the directory; nothing is made again at
// the old path; a run in the new place computes the rest, and the
// energies equal an uninterrupted run's bit for bit.
func TestRunner_ScanMovedMidRun(t *testing.T) {
	text := strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\ndelay = \"20ms\"", 1)
	parent := t.TempDir()
	dir, spec := scanDirAt(t, filepath.Join(parent, "scan"), text)
	moved := filepath.Join(parent, "scan-moved")
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	b, err := model.New(spec)
	if err != nil {
		t.Fatal(err)
	}
	var done atomic.Int32
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b, Queue: local.New(2),
		OnEvent: func(e runner.Event) {
			if e.Kind == runner.EventDone && done.Add(1) == 3 {
				if err := os.Rename(dir, moved); err != nil {
					t.Error(err)
				}
			}
		}}
	sum, err := r.Run(t.Context())
	if cerr := st.Close(); cerr != nil {
		t.Errorf("closing the moved store: %v", cerr)
	}
	if !errors.Is(err, runner.ErrScanMoved) {
		t.Fatalf("run = %v, want ErrScanMoved", err)
	}
	var me *runner.ScanMovedError
	if !errors.As(err, &me) || me.Dir != dir {
		t.Fatalf("error %v: want a *ScanMovedError for %s", err, dir)
	}
	if runtime.GOOS == "linux" {
		// Linux names an open directory (/proc/self/fd): the new place is
		// known and the message says what to run.
		if me.Now != moved || !strings.Contains(err.Error(), "wellscan run "+moved) {
			t.Errorf("error %q: want the new place %s and the command to run there", err, moved)
		}
	}
	if len(sum.Failed) != 0 {
		t.Errorf("%d points failed for the move: %s", len(sum.Failed), sum.Failed[0].LastError)
	}
	// Nothing was made again at the old path, nothing else beside it.
	ents, _ := os.ReadDir(parent)
	var names []string
	for _, e := range ents {
		names = append(names, e.Name())
	}
	if !slices.Equal(names, []string{"scan-moved"}) {
		t.Errorf("the parent directory holds %v, want only scan-moved", names)
	}
	if _, err := os.Lstat(filepath.Join(moved, runner.LockFile)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("%s left in the new place (Close removes it through the open directory): %v", runner.LockFile, err)
	}
	snap, err := runner.ReadSnapshot(moved)
	if err != nil || snap.State != "interrupted" {
		t.Errorf("status.json in the new place: state %q, %v; want interrupted", snap.State, err)
	}
	nDone, nLeft := 0, 0
	for _, p := range points(t, moved) {
		switch p.State {
		case runner.Done:
			nDone++
		case runner.Planned:
			nLeft++
			if p.Attempts != 0 {
				t.Errorf("point %s has %d attempts used; the move must not count", p.Key, p.Attempts)
			}
		default:
			t.Errorf("point %s is %s after the move, want done or planned", p.Key, p.State)
		}
	}
	if nDone < 3 || nLeft == 0 {
		t.Fatalf("%d done and %d planned: the move did not happen mid-run", nDone, nLeft)
	}

	// The rest, in the new place.
	_, spec2 := scanDirAt(t, moved, text)
	sum2, err := runScan(t, t.Context(), moved, spec2, 2)
	if err != nil {
		t.Fatalf("run in the new place = %v", err)
	}
	if sum2.Earlier != nDone {
		t.Errorf("the run in the new place found %d points done earlier, want %d", sum2.Earlier, nDone)
	}
	ref, refSpec := scanDir(t, text)
	if _, err := runScan(t, t.Context(), ref, refSpec, 2); err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{}
	for _, p := range points(t, ref) {
		want[p.Key] = *p.Energy
	}
	got := points(t, moved)
	if len(got) != len(want) {
		t.Errorf("%d points in the moved scan, an uninterrupted run has %d", len(got), len(want))
	}
	for _, p := range got {
		// Exact: the model is deterministic (an uninterrupted run of the
		// same spec is the reference).
		if p.State != runner.Done || p.Energy == nil || *p.Energy != want[p.Key] {
			t.Errorf("point %s: %s %v, uninterrupted run has %v", p.Key, p.State, p.Energy, want[p.Key])
		}
	}
}

// TestRunner_ScanDeletedMidRun: the scan directory is deleted while
// points run. The run stops with ErrScanMoved, says it cannot tell where
// the scan is, fails no point in vain, and makes nothing again at the
// old path.
func TestRunner_ScanDeletedMidRun(t *testing.T) {
	text := strings.Replace(morseSpec, "offset = -112.7", "offset = -112.7\ndelay = \"20ms\"", 1)
	parent := t.TempDir()
	dir, spec := scanDirAt(t, filepath.Join(parent, "scan"), text)
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
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b, Queue: local.New(2),
		OnEvent: func(e runner.Event) {
			if e.Kind == runner.EventDone && done.Add(1) == 3 {
				// Workers keep writing while it goes: retry until it is gone.
				var err error
				for range 20 {
					if err = os.RemoveAll(dir); err == nil {
						break
					}
				}
				if err != nil {
					t.Error(err)
				}
			}
		}}
	sum, err := r.Run(t.Context())
	var me *runner.ScanMovedError
	if !errors.As(err, &me) || me.Now != "" || !strings.Contains(err.Error(), "wellscan run NEWDIR") {
		t.Fatalf("run = %v, want a *ScanMovedError that cannot name a new place", err)
	}
	if len(sum.Failed) != 0 {
		t.Errorf("%d points failed for the deletion: %s", len(sum.Failed), sum.Failed[0].LastError)
	}
	if ents, _ := os.ReadDir(parent); len(ents) != 0 {
		t.Errorf("the parent directory holds %d entries after the deletion, want none (nothing made again)", len(ents))
	}
}
