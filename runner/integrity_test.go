package runner_test

import (
	"bytes"
	"context"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"wellscan/runner"
	"wellscan/runner/local"
	"wellscan/runner/model"
)

// finishedMorse runs the Morse model scan to its end in a new directory
// and returns the directory and the done energies by key.
func finishedMorse(t *testing.T) (string, map[string]float64) {
	t.Helper()
	dir, spec := scanDir(t, morseSpec)
	if _, err := runScan(t, t.Context(), dir, spec, 2); err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{}
	for _, p := range points(t, dir) {
		if p.State == runner.Done {
			want[p.Key] = *p.Energy
		}
	}
	if len(want) < 8 {
		t.Fatalf("the Morse scan finished with %d done points", len(want))
	}
	return dir, want
}

// TestOpen_DamagedStore is issue 15 item 12: an empty, truncated or
// overwritten store gives an error naming the file and the recovery
// commands, never a panic or a memory fault, and is left as it was.
func TestOpen_DamagedStore(t *testing.T) {
	tests := []struct {
		name    string
		damage  func(b []byte) []byte
		damaged bool // Open must fail with ErrDamaged (else: no panic)
	}{
		{"empty", func(b []byte) []byte { return nil }, true},
		{"truncated to 100 bytes", func(b []byte) []byte { return b[:100] }, true},
		{"truncated to half", func(b []byte) []byte { return b[:len(b)/2] }, false},
		{"meta pages zeroed", func(b []byte) []byte { clear(b[:8192]); return b }, true},
		{"every page after the metas overwritten", func(b []byte) []byte {
			for i := 8192; i < len(b); i++ {
				b[i] = byte(i * 7)
			}
			return b
		}, false},
		{"garbage", func(b []byte) []byte { return bytes.Repeat([]byte("not a store "), 2000) }, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			dir, _ := finishedMorse(t)
			path := filepath.Join(dir, runner.DBFile)
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			bad := tc.damage(b)
			if err := os.WriteFile(path, bad, 0o600); err != nil {
				t.Fatal(err)
			}
			for _, ro := range []bool{true, false} {
				st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: ro, Timeout: 200 * time.Millisecond})
				if err == nil {
					// Damage the open did not see must surface on reading,
					// as an error, not a panic.
					_, err = st.Points()
					if _, rerr := st.Rounds(); err == nil {
						err = rerr
					}
					st.Close()
				}
				if tc.damaged && !errors.Is(err, runner.ErrDamaged) {
					t.Fatalf("Open(read-only %v) = %v, want ErrDamaged", ro, err)
				}
				if err != nil && errors.Is(err, runner.ErrDamaged) {
					for _, want := range []string{path, "wellscan store restore " + dir, "wellscan store rebuild " + dir} {
						if !strings.Contains(err.Error(), want) {
							t.Errorf("error %q does not name %q", err, want)
						}
					}
				}
			}
			if got, _ := os.ReadFile(path); !bytes.Equal(got, bad) {
				t.Errorf("opening changed the damaged file")
			}
		})
	}
}

// TestRebuildStore_FromResultFiles is issue 15 item 12's recovery: a
// truncated store is rebuilt from the result files with every done
// energy, and the next run computes nothing again.
func TestRebuildStore_FromResultFiles(t *testing.T) {
	dir, want := finishedMorse(t)
	path := filepath.Join(dir, runner.DBFile)
	if err := os.Truncate(path, 100); err != nil {
		t.Fatal(err)
	}
	_, spec := scanDirAt(t, dir, morseSpec)
	if _, err := runner.RebuildStore(dir, spec, false, time.Now()); err == nil {
		// A second rebuild must refuse: the store is readable now.
		t.Log("first rebuild ok")
	} else {
		t.Fatal(err)
	}
	if _, err := runner.RebuildStore(dir, spec, false, time.Now()); !errors.Is(err, runner.ErrStoreReadable) {
		t.Errorf("second RebuildStore = %v, want ErrStoreReadable", err)
	}
	got := map[string]float64{}
	for _, p := range points(t, dir) {
		if p.State == runner.Done {
			got[p.Key] = *p.Energy
		}
	}
	for k, e := range want {
		// Exact: the energy is copied from the result file's JSON.
		if got[k] != e {
			t.Errorf("point %s: rebuilt energy %v, want %v", k, got[k], e)
		}
	}
	kept, _ := filepath.Glob(filepath.Join(dir, runner.DBFile+".damaged-*"))
	if len(kept) != 1 {
		t.Errorf("damaged store kept as %v, want one file", kept)
	}
	mtimes := map[string]time.Time{}
	for k := range want {
		st, err := os.Stat(filepath.Join(dir, runner.PointsDir, k, runner.ResultFile))
		if err != nil {
			t.Fatal(err)
		}
		mtimes[k] = st.ModTime()
	}
	// Rounds start afresh, so refinement may add a point or two; no point
	// that was done is computed again.
	if _, err := runScan(t, t.Context(), dir, spec, 2); err != nil {
		t.Fatal(err)
	}
	for k, m := range mtimes {
		st, err := os.Stat(filepath.Join(dir, runner.PointsDir, k, runner.ResultFile))
		if err != nil || !st.ModTime().Equal(m) {
			t.Errorf("point %s was computed again after the rebuild", k)
		}
	}
}

// TestRestoreBackup_AfterTruncation: the backup written after the last
// round replaces a truncated store; the damaged file is kept.
func TestRestoreBackup_AfterTruncation(t *testing.T) {
	dir, want := finishedMorse(t)
	if err := os.Truncate(filepath.Join(dir, runner.DBFile), 5000); err != nil {
		t.Fatal(err)
	}
	kept, err := runner.RestoreBackup(dir, false, time.Now())
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(kept, runner.DBFile+".damaged-") {
		t.Errorf("kept = %q", kept)
	}
	n := 0
	for _, p := range points(t, dir) {
		if p.State == runner.Done {
			n++
			if want[p.Key] != *p.Energy {
				t.Errorf("point %s: restored %v, want %v", p.Key, *p.Energy, want[p.Key])
			}
		}
	}
	if n != len(want) {
		t.Errorf("restored %d done points, want %d", n, len(want))
	}
}

// TestOpen_CreateOnFullDisk is issue 15 item 12: the disk fills up while
// the store is created. A 64 KiB tmpfs is filled so that bbolt's first
// pages do not fit; Open fails with the cause, leaves no wellscan.db and
// no temporary file, and succeeds once space is freed.
func TestOpen_CreateOnFullDisk(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("needs root to mount a tmpfs")
	}
	mnt := t.TempDir()
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "size=64k", "tmpfs", mnt).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a tmpfs here: %v %s", err, out)
	}
	t.Cleanup(func() { _ = exec.Command("umount", mnt).Run() })
	// Fill all but a few KiB: bbolt's new file needs four 4 KiB pages.
	filler := filepath.Join(mnt, "filler")
	f, err := os.Create(filler)
	if err != nil {
		t.Fatal(err)
	}
	_, werr := f.Write(make([]byte, 60<<10))
	f.Close()
	if werr == nil {
		// tmpfs rounds to pages; a write that fits is fine, as long as
		// too little is left.
		t.Log("filler written")
	}
	_, err = runner.Open(mnt, runner.OpenOptions{})
	if err == nil {
		t.Fatal("Open on a full disk succeeded")
	}
	if !strings.Contains(err.Error(), "no space left") || !strings.Contains(err.Error(), "nothing was left behind") {
		t.Errorf("Open error = %v, want the cause and that nothing was left", err)
	}
	entries, _ := os.ReadDir(mnt)
	for _, e := range entries {
		if e.Name() != "filler" {
			t.Errorf("%s left behind after the failed creation", e.Name())
		}
	}
	if err := os.Remove(filler); err != nil {
		t.Fatal(err)
	}
	st, err := runner.Open(mnt, runner.OpenOptions{})
	if err != nil {
		t.Fatalf("Open after freeing space: %v", err)
	}
	st.Close()
}

// TestStore_ChecksumMismatch is issue 15 item 6: one digit of a stored
// energy changed inside wellscan.db. The next run notices the record's
// checksum, keeps the intact copy in result.json (or, without one,
// computes the point again), says which, and ends with the true energies.
func TestStore_ChecksumMismatch(t *testing.T) {
	for _, withResult := range []bool{true, false} {
		name := map[bool]string{true: "result file kept", false: "recomputed"}[withResult]
		t.Run(name, func(t *testing.T) {
			dir, want := finishedMorse(t)
			path := filepath.Join(dir, runner.DBFile)
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			// The first stored energy: "energy_hartree":-112.xxxxx
			re := regexp.MustCompile(`"key":"(r=[0-9.]+)"[^{}]*?"energy_hartree":-112\.([0-9])`)
			m := re.FindSubmatchIndex(b)
			if m == nil {
				t.Fatal("no stored energy found in the store file")
			}
			key := string(b[m[2]:m[3]])
			d := m[4]
			b[d] = '0' + (b[d]-'0'+5)%10 // a different digit, same length
			if err := os.WriteFile(path, b, 0o600); err != nil {
				t.Fatal(err)
			}
			if !withResult {
				if err := os.Remove(filepath.Join(dir, runner.PointsDir, key, runner.ResultFile)); err != nil {
					t.Fatal(err)
				}
			}
			for _, p := range points(t, dir) {
				if p.Key == key && p.Damaged == "" {
					t.Fatalf("the changed record of %s passed its checksum", key)
				}
			}
			_, spec := scanDirAt(t, dir, morseSpec)
			st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
			if err != nil {
				t.Fatal(err)
			}
			b2, err := model.New(spec)
			if err != nil {
				t.Fatal(err)
			}
			var msgs []string
			r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: b2, Queue: local.New(2),
				OnEvent: func(e runner.Event) {
					if e.Kind == "repair" {
						msgs = append(msgs, e.Message)
					}
				}}
			sum, err := r.Run(context.Background())
			st.Close()
			if err != nil {
				t.Fatal(err)
			}
			wantMsg := "kept the copy in"
			if !withResult {
				wantMsg = "computed again"
			}
			if len(msgs) != 1 || !strings.Contains(msgs[0], key) || !strings.Contains(msgs[0], wantMsg) {
				t.Errorf("repair events %q, want one naming %s and %q", msgs, key, wantMsg)
			}
			if withResult && sum.Computed != 0 {
				t.Errorf("computed %d points, want 0 (the result file is intact)", sum.Computed)
			}
			for _, p := range points(t, dir) {
				if e, ok := want[p.Key]; ok && (p.Energy == nil || *p.Energy != e) {
					// Exact: the model is deterministic and the result
					// file holds the same float64.
					t.Errorf("point %s after the repair: %v, want %v", p.Key, p.Energy, e)
				}
			}
		})
	}
}
