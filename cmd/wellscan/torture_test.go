package main

import (
	"bytes"
	"errors"
	"io/fs"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"syscall"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/parsers"
	"wellscan/runner"
)

// Crash torture: the orchestrator is killed with SIGKILL at random
// moments, restarted each time, and the store must end as an
// uninterrupted run's would. The kill times come from a seeded RNG; the
// seed is logged and can be fixed with WELLSCAN_TORTURE_SEED. Under -short
// the kill counts drop (8 and 2); WELLSCAN_TORTURE=long repeats each
// torture on five fresh scans (100 and 25 kills in all).

// tortureModelSpec: a model scan whose points take 70 ms each on one
// worker, about 2 s uninterrupted (invented Morse constants, atomic units).
var tortureModelSpec = coMorse{Title: "torture model", From: "0.80", To: "1.60", Step: "0.04", Refine: "target_step = 0.002", Delay: "70ms", Queue: "[queue]\nworkers = 1"}.String()

// tortureRHFSpec: a real RHF/6-31G* scan of CO, 22 grid points plus
// refinement, 0.5–1.5 s uninterrupted on one worker.
const tortureRHFSpec = `title = "torture RHF"
[molecule]
units = "angstrom"
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.95
to = 1.37
step = 0.02
[engine]
kind = "builtin"
method = "rhf"
basis = "6-31G*"
[queue]
workers = 1
`

// tortureSeed returns the RNG seed: WELLSCAN_TORTURE_SEED or the clock.
func tortureSeed(t *testing.T) uint64 {
	t.Helper()
	if s := os.Getenv("WELLSCAN_TORTURE_SEED"); s != "" {
		v, err := strconv.ParseUint(s, 10, 64)
		if err != nil {
			t.Fatalf("WELLSCAN_TORTURE_SEED=%q: %v", s, err)
		}
		return v
	}
	return uint64(time.Now().UnixNano())
}

// killCount is the kill count per scan: n, or short under -short.
func killCount(n, short int) int {
	if testing.Short() {
		return short
	}
	return n
}

// tortureReps is how many fresh scans each torture runs: 5 under
// WELLSCAN_TORTURE=long, else 1.
func tortureReps() int {
	if os.Getenv("WELLSCAN_TORTURE") == "long" {
		return 5
	}
	return 1
}

// checkBolt opens the store read-only with bbolt directly and runs its
// consistency check over every page.
func checkBolt(t *testing.T, dir string) {
	t.Helper()
	db, err := bolt.Open(filepath.Join(dir, runner.DBFile), 0o600, &bolt.Options{ReadOnly: true, Timeout: 5 * time.Second})
	if err != nil {
		t.Fatalf("bbolt open %s: %v", dir, err)
	}
	defer db.Close()
	err = db.View(func(tx *bolt.Tx) error {
		for cerr := range tx.Check() {
			t.Errorf("bbolt check %s: %v", dir, cerr)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// killLoop starts `wellscan run` in dir and SIGKILLs it after a random
// delay in [lo, hi), until kills runs have been killed mid-run. A run that
// finishes before its kill ends the loop early. It returns the number of
// runs actually killed.
func killLoop(t *testing.T, bin, dir string, rng *rand.Rand, kills int, lo, hi time.Duration) int {
	t.Helper()
	killed := 0
	for killed < kills {
		after := lo + time.Duration(rng.Int64N(int64(hi-lo)))
		cmd := exec.Command(bin, "run", "-q", dir)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		time.Sleep(after)
		_ = cmd.Process.Signal(syscall.SIGKILL)
		_ = cmd.Wait()
		ws, _ := cmd.ProcessState.Sys().(syscall.WaitStatus)
		if !ws.Signaled() {
			if code := cmd.ProcessState.ExitCode(); code != 0 {
				t.Fatalf("run %d ended with exit %d before its kill", killed+1, code)
			}
			t.Logf("run after %d kills finished before the next kill (%v)", killed, after)
			break
		}
		killed++
		if _, err := os.Stat(filepath.Join(dir, runner.DBFile)); errors.Is(err, fs.ErrNotExist) {
			// Killed before the store was created (a loaded machine starts
			// slowly): nothing was written, nothing to check.
			t.Logf("kill %d after %v: before the store existed", killed, after.Round(time.Millisecond))
			continue
		}
		checkBolt(t, dir)
		got, done := storeState(t, dir)
		nDone := 0
		for _, p := range got {
			if p.State == runner.Done {
				nDone++
			}
		}
		t.Logf("kill %d after %v: %d of %d points done", killed, after.Round(time.Millisecond), nDone, len(got))
		for k, n := range done {
			if n > 1 {
				t.Fatalf("kill %d: %s reached done %d times", killed, k, n)
			}
			if got[k].State != runner.Done {
				t.Fatalf("kill %d: %s has a done event but is %s", killed, k, got[k].State)
			}
		}
	}
	return killed
}

// assertNoLossNoDup checks that dir's store has exactly the keys of want,
// all done, each with exactly one done event, and energies within tol.
func assertNoLossNoDup(t *testing.T, dir string, want map[string]pointState, tol float64) {
	t.Helper()
	got, done := storeState(t, dir)
	var keys []string
	for k := range want {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		g, ok := got[k]
		if !ok {
			t.Errorf("point %s lost (present in the uninterrupted run)", k)
			continue
		}
		if g.State != runner.Done {
			t.Errorf("point %s is %s, want done", k, g.State)
		}
		if done[k] != 1 {
			t.Errorf("point %s reached done %d times, want exactly once", k, done[k])
		}
		if !scalar.EqualWithinAbsOrRel(g.Energy, want[k].Energy, tol, 0) {
			t.Errorf("E(%s) = %.12f, uninterrupted run has %.12f", k, g.Energy, want[k].Energy)
		}
	}
	for k := range got {
		if _, ok := want[k]; !ok {
			t.Errorf("point %s not in the uninterrupted run", k)
		}
	}
}

func TestRun_CrashTorture_Model(t *testing.T) {
	if testing.Short() && os.Getenv("WELLSCAN_TORTURE") == "" {
		t.Skip("builds the binary and kills scans as child processes")
	}
	seed := tortureSeed(t)
	t.Logf("seed %d (rerun with WELLSCAN_TORTURE_SEED=%d)", seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0x7e11))
	bin := buildWellscan(t)

	ref := t.TempDir()
	writeSpec(t, ref, tortureModelSpec)
	runToEnd(t, bin, ref)
	want, _ := storeState(t, ref)

	for rep := range tortureReps() {
		t.Logf("scan %d", rep+1)
		dir := t.TempDir()
		writeSpec(t, dir, tortureModelSpec)
		n := killCount(20, 8)
		// 10–200 ms: from before the store is open (a run needs ~50 ms to
		// start) to two points in; 20 runs get about two thirds of the scan
		// done, so later kills land in refinement rounds.
		killed := killLoop(t, bin, dir, rng, n, 10*time.Millisecond, 200*time.Millisecond)
		t.Logf("survived %d SIGKILLs", killed)
		if killed < n {
			t.Fatalf("only %d of %d kills landed before the scan finished; the test did not exercise resume", killed, n)
		}
		runToEnd(t, bin, dir)
		checkBolt(t, dir)
		// The model is deterministic: energies equal bit for bit (tolerance 0).
		assertNoLossNoDup(t, dir, want, 0)
		sameStore(t, func() map[string]pointState { g, _ := storeState(t, dir); return g }(), want)
	}
}

func TestRun_CrashTorture_RHF(t *testing.T) {
	if testing.Short() && os.Getenv("WELLSCAN_TORTURE") == "" {
		t.Skip("builds the binary and kills scans as child processes")
	}
	seed := tortureSeed(t)
	t.Logf("seed %d (rerun with WELLSCAN_TORTURE_SEED=%d)", seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0x4bf))
	bin := buildWellscan(t)

	ref := t.TempDir()
	writeSpec(t, ref, tortureRHFSpec)
	start := time.Now()
	runToEnd(t, bin, ref)
	wall := time.Since(start)
	want, _ := storeState(t, ref)
	if len(want) < 15 {
		t.Fatalf("reference RHF scan has %d points, want ≥ 15", len(want))
	}

	for rep := range tortureReps() {
		t.Logf("scan %d", rep+1)
		dir := t.TempDir()
		writeSpec(t, dir, tortureRHFSpec)
		n := killCount(5, 2)
		// The SCF time depends on the machine's load, so the kill window is
		// scaled to the uninterrupted run's time per point: a run needs ~50 ms
		// to start, and one killed uniformly in [30 ms, 50 ms + 3 points) gets
		// about 1.5 points done, so 5 runs cover a third of the scan.
		hi := 50*time.Millisecond + 3*wall/time.Duration(len(want))
		t.Logf("uninterrupted run %v; kills in [30ms, %v)", wall.Round(time.Millisecond), hi.Round(time.Millisecond))
		killed := killLoop(t, bin, dir, rng, n, 30*time.Millisecond, hi)
		t.Logf("survived %d SIGKILLs", killed)
		if killed < n {
			t.Fatalf("only %d of %d kills landed before the scan finished", killed, n)
		}
		runToEnd(t, bin, dir)
		checkBolt(t, dir)
		// A resumed point may start from a different continuation guess than
		// in the uninterrupted run; both converge to the same SCF solution to
		// within the convergence threshold (1e-8 hartree, common practice for
		// energies from a density converged to ~1e-6).
		assertNoLossNoDup(t, dir, want, 1e-8)
	}
}

// TestRun_PowerCut_TruncatedResultIgnored simulates a power cut while a
// result file was being written: a half-written temporary file and a
// truncated result.json in points/<key>/ must be ignored and the point
// computed again.
func TestRun_PowerCut_TruncatedResultIgnored(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs scans as child processes")
	}
	bin := buildWellscan(t)
	ref := t.TempDir()
	writeSpec(t, ref, tortureModelSpec)
	runToEnd(t, bin, ref)
	want, _ := storeState(t, ref)

	dir := t.TempDir()
	writeSpec(t, dir, tortureModelSpec)
	// No store yet: every grid point will be planned on the first run,
	// and two of them already have damaged files on disk.
	var planned []string
	for k := range want {
		planned = append(planned, k)
	}
	sort.Strings(planned)
	truncKey, tmpKey := planned[0], planned[1]
	full, err := os.ReadFile(filepath.Join(runner.PointDir(ref, truncKey), runner.ResultFile))
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{truncKey, tmpKey} {
		if err := os.MkdirAll(runner.PointDir(dir, k), 0o700); err != nil {
			t.Fatal(err)
		}
	}
	// result.json cut in the middle of a write that was not atomic.
	if err := os.WriteFile(filepath.Join(runner.PointDir(dir, truncKey), runner.ResultFile), full[:len(full)/2], 0o600); err != nil {
		t.Fatal(err)
	}
	// The temporary file of an atomic write, cut before its rename.
	fullTmp, err := os.ReadFile(filepath.Join(runner.PointDir(ref, tmpKey), runner.ResultFile))
	if err != nil {
		t.Fatal(err)
	}
	tmpName := runner.ResultFile + ".tmp.deadhost.99999"
	if err := os.WriteFile(filepath.Join(runner.PointDir(dir, tmpKey), tmpName), fullTmp[:len(fullTmp)*2/3], 0o600); err != nil {
		t.Fatal(err)
	}
	runToEnd(t, bin, dir)
	checkBolt(t, dir)
	assertNoLossNoDup(t, dir, want, 0)
	for _, k := range []string{truncKey, tmpKey} {
		res, ok := runner.ReadResult(dir, k, readFingerprint(t, dir))
		if !ok || res.Status != "done" || math.IsNaN(res.Energy) {
			t.Errorf("point %s: result file not rewritten by the recomputation (ok=%v %+v)", k, ok, res)
		}
	}
}

func readFingerprint(t *testing.T, dir string) string {
	t.Helper()
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: 5 * time.Second})
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

// tortureRelaxedSpec: a relaxed H2O2 torsion scan at RHF/STO-3G, 7
// points, each a constrained optimisation of a few gradients.
const tortureRelaxedSpec = `title = "torture relaxed"
[molecule]
units = "angstrom"
geometry = """
O 0 0.70 0
O 0 -0.70 0
H 0.90 0.85 0.30
H -0.35 -0.85 0.85
"""
[[scan]]
name = "phi"
torsion = [3, 1, 2, 4]
values = [0, 30, 60, 90, 120, 150, 180]
relax = true
[relax]
tighter = 30
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "rhf"
basis = "sto-3g"
[queue]
workers = 1
`

// relaxedGeometries reads every point's relaxed.xyz (Å) from dir.
func relaxedGeometries(t *testing.T, dir string, keys []string) map[string][][3]float64 {
	t.Helper()
	out := map[string][][3]float64{}
	for _, k := range keys {
		b, err := os.ReadFile(filepath.Join(runner.PointDir(dir, k), runner.RelaxedFile))
		if err != nil {
			t.Fatal(err)
		}
		fr, err := parsers.ReadXYZ(bytes.NewReader(b), k)
		if err != nil {
			t.Fatal(err)
		}
		out[k] = fr[0].Coords
	}
	return out
}

// gradientsLogged counts the lines of every point's gradient log.
func gradientsLogged(t *testing.T, dir string, keys []string) int {
	t.Helper()
	n := 0
	for _, k := range keys {
		b, err := os.ReadFile(filepath.Join(runner.PointDir(dir, k), runner.RelaxGradientLogFile))
		if err != nil {
			t.Fatal(err)
		}
		n += bytes.Count(b, []byte("\n"))
	}
	return n
}

// TestRun_CrashTorture_Relaxed kills a relaxed scan's orchestrator during
// optimisations: every point must end with the uninterrupted run's energy
// and geometry, and no gradient may be computed twice beyond the one in
// flight at each kill (the point checkpoints after every gradient).
func TestRun_CrashTorture_Relaxed(t *testing.T) {
	if testing.Short() && os.Getenv("WELLSCAN_TORTURE") == "" {
		t.Skip("builds the binary and kills scans as child processes")
	}
	seed := tortureSeed(t)
	t.Logf("seed %d (rerun with WELLSCAN_TORTURE_SEED=%d)", seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0x5e1a))
	bin := buildWellscan(t)

	ref := t.TempDir()
	writeSpec(t, ref, tortureRelaxedSpec)
	start := time.Now()
	runToEnd(t, bin, ref)
	wall := time.Since(start)
	want, _ := storeState(t, ref)
	var keys []string
	for k := range want {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	refGeom := relaxedGeometries(t, ref, keys)
	refGrads := gradientsLogged(t, ref, keys)

	for rep := range tortureReps() {
		dir := t.TempDir()
		writeSpec(t, dir, tortureRelaxedSpec)
		n := killCount(6, 3)
		hi := 50*time.Millisecond + 2*wall/time.Duration(len(want))
		t.Logf("uninterrupted run %v, %d gradients; kills in [40ms, %v)", wall.Round(time.Millisecond), refGrads, hi.Round(time.Millisecond))
		killed := killLoop(t, bin, dir, rng, n, 40*time.Millisecond, hi)
		t.Logf("scan %d survived %d SIGKILLs", rep+1, killed)
		if killed < n {
			t.Fatalf("only %d of %d kills landed before the scan finished", killed, n)
		}
		runToEnd(t, bin, dir)
		checkBolt(t, dir)
		// A resumed or differently started optimisation converges to the
		// same constrained minimum within its thresholds (tightened 30×):
		// energies within 1e-8 Eh.
		assertNoLossNoDup(t, dir, want, 1e-8)
		got := relaxedGeometries(t, dir, keys)
		for _, k := range keys {
			for i := range got[k] {
				for j := range i {
					d := func(g [][3]float64) float64 {
						return math.Sqrt((g[i][0]-g[j][0])*(g[i][0]-g[j][0]) + (g[i][1]-g[j][1])*(g[i][1]-g[j][1]) + (g[i][2]-g[j][2])*(g[i][2]-g[j][2]))
					}
					// 1e-3 Å: the geometric resolution of a 30× tightened
					// optimisation near a flat torsional minimum.
					if diff := math.Abs(d(got[k]) - d(refGeom[k])); diff > 1e-3 {
						t.Errorf("point %s: distance %d–%d differs by %.2e Å from the uninterrupted run", k, i+1, j+1, diff)
					}
				}
			}
		}
		// Gradients computed in all runs versus those the final states
		// account for: at most one lost per kill (the one in flight).
		logged := gradientsLogged(t, dir, keys)
		kept := 0
		for _, k := range keys {
			st, err := runner.ReadRelaxState(runner.PointDir(dir, k))
			if err != nil {
				t.Fatal(err)
			}
			kept += st.Gradients
		}
		t.Logf("gradients: %d computed, %d in the final checkpoints, %d kills", logged, kept, killed)
		if logged > kept+killed {
			t.Errorf("%d gradients computed but only %d kept: more than one lost per kill (%d kills)", logged, kept, killed)
		}
	}
}
