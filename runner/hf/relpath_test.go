package hf_test

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"wellscan/runner"
	"wellscan/runner/hf"
)

// TestScan_RelativeDir_UsesContinuation runs the CO stretch through the
// round loop with the scan directory given relative to the working
// directory, as `wellscan run DIR` and `cd DIR; wellscan run .` do, and
// requires that every point after the first started from a neighbour's
// orbitals (Flags.FromNeighbour) and that the stored orbitals paths
// are relative to the scan directory and name files that exist. Before
// the fix the orbitals path was relative to the working directory, got
// the point directory prefixed a second time, and no guess file was ever
// found.
func TestScan_RelativeDir_UsesContinuation(t *testing.T) {
	// Ten points of the benchmark's 1.00–1.58 Å CO stretch (RHF/6-31G*).
	text := strings.Replace(replaceGuess(coScanSpec, "neighbour"), "count = 30", "count = 10", 1)
	for _, rel := range []string{"scan", "."} {
		t.Run("dir="+rel, func(t *testing.T) {
			root := t.TempDir()
			t.Chdir(root)
			if rel != "." {
				if err := os.Mkdir(rel, 0o700); err != nil {
					t.Fatal(err)
				}
			} else {
				t.Chdir(t.TempDir()) // "." is the scan directory itself
			}
			recs := runScanTextAt(t, rel, text, 1, func(b *hf.Backend) runner.Backend { return b })
			cont := 0
			for _, rec := range recs {
				if rec.State != runner.Done {
					t.Fatalf("%s: %s (%s)", rec.Key, rec.State, rec.LastError)
				}
				if rec.Flags.FromNeighbour {
					cont++
				}
				if rec.Orbitals == "" || filepath.IsAbs(rec.Orbitals) || !strings.HasPrefix(rec.Orbitals, runner.PointsDir+"/"+rec.Key+"/") {
					t.Errorf("%s: stored orbitals path %q, want points/%s/… relative to the scan directory", rec.Key, rec.Orbitals, rec.Key)
				}
				if _, err := os.Stat(filepath.Join(rel, filepath.FromSlash(rec.Orbitals))); err != nil {
					t.Errorf("%s: stored orbitals file: %v", rec.Key, err)
				}
				res, ok := runner.ReadResult(rel, rec.Key, readFingerprint(t, rel))
				if !ok || res.Orbitals != hf.OrbitalsFile {
					t.Errorf("%s: result file orbitals = %q (ok %v), want %q relative to the point directory", rec.Key, res.Orbitals, ok, hf.OrbitalsFile)
				}
			}
			// One worker: every point but the first has a done neighbour
			// (the round loop hands points out in order).
			if want := len(recs) - 1; cont < want {
				t.Errorf("continuation used on %d of %d points, want %d (all but the first)", cont, len(recs), want)
			}
		})
	}
}

// readFingerprint is the fingerprint the scan in dir writes into its
// result files.
func readFingerprint(t *testing.T, dir string) string {
	t.Helper()
	st, err := runner.Open(dir, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	m, err := st.Meta()
	if err != nil {
		t.Fatal(err)
	}
	return m.Fingerprint
}
