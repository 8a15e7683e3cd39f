package hf_test

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/hf"
	"wellscan/runner/local"
)

// stateChangeSpec is a 2-D UHF scan of water over both O–H bonds (angle
// fixed at 104.5°, from memory of the equilibrium angle). Along each bond
// the singlet ground state changes character: near equilibrium it is the
// closed-shell (spin-pure) determinant, once a bond is stretched far
// enough a broken-symmetry UHF state (O–H → OH + H radical pair) lies
// lower, beyond the Coulson–Fischer point (common practice).
const stateChangeSpec = `title = "water UHF, both bonds: closed shell to broken symmetry"
[molecule]
geometry = """
O  0.000000  0.000000  0.000000
H  0.000000  0.757000  0.586000
H  0.000000 -0.757000  0.586000
"""
[[scan]]
name = "r1"
bond = [1, 2]
%GRID%
[[scan]]
name = "r2"
bond = [1, 3]
%GRID%
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "uhf"
basis = "%BASIS%"
[queue]
kind = "local"
workers = 2
`

// runScanText runs the scan spec text in a fresh directory through the
// round loop with the built-in backend (as wrap returns it) on a local
// queue of the given workers, and returns the stored points. Failed points
// are fine; any other error fails the test.
func runScanText(t testing.TB, text string, workers int, wrap func(*hf.Backend) runner.Backend) []runner.PointRecord {
	t.Helper()
	return runScanTextAt(t, t.TempDir(), text, workers, wrap)
}

// runScanTextAt is runScanText in the scan directory dir, which may be
// relative to the working directory.
func runScanTextAt(t testing.TB, dir, text string, workers int, wrap func(*hf.Backend) runner.Backend) []runner.PointRecord {
	t.Helper()
	return runScanTextQueue(t, dir, text, false, workers, wrap)
}

// plainOrder is a batch-queue stand-in that computes the points on a
// local pool of its own, as a compute node would (runner.ComputePoint):
// the round loop, seeing a batch queue, hands the points out in plain
// coordinate order instead of growing them from the middle of the scan
// (runner/dispatch.go).
type plainOrder struct {
	pool    *local.Queue
	spec    *planner.Spec
	dir     string
	backend runner.Backend
}

func (p plainOrder) Name() string       { return "plain-order" }
func (p plainOrder) Slots() int         { return p.pool.Slots() }
func (p plainOrder) DetachNote() string { return "" }
func (p plainOrder) Submit(ctx context.Context, in <-chan runner.Task, out chan<- runner.Completion, _ runner.BatchOptions) error {
	return p.pool.Run(ctx, func(ctx context.Context, t runner.Task) runner.Completion {
		return runner.ComputePoint(ctx, p.spec, p.dir, p.backend, t)
	}, in, out)
}

// runScanTextQueue is runScanTextAt on a local pool of workers, or, with
// plain, on a plainOrder queue of as many workers.
func runScanTextQueue(t testing.TB, dir, text string, plain bool, workers int, wrap func(*hf.Backend) runner.Backend) []runner.PointRecord {
	t.Helper()
	path := filepath.Join(dir, "scan.toml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	spec, err := planner.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	b, err := hf.NewBackend(spec)
	if err != nil {
		t.Fatal(err)
	}
	var q runner.Queue = local.New(workers)
	if plain {
		q = plainOrder{pool: local.New(workers), spec: spec, dir: dir, backend: wrap(b)}
	}
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: wrap(b), Queue: q}
	if _, err := r.Run(t.Context()); err != nil && !errors.Is(err, runner.ErrPointsFailed) {
		t.Fatalf("scan: %v", err)
	}
	recs, err := st.Points()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

type scanRun struct {
	recs             []runner.PointRecord
	iterations       int // every SCF iteration spent, over all points
	checks, replaced int
}

func runStateChangeScan(t testing.TB, grid, bs string, check hf.ColdCheck) scanRun {
	t.Helper()
	text := strings.NewReplacer("%GRID%", grid, "%BASIS%", bs).Replace(stateChangeSpec)
	// Plain order from one corner of the grid: continuation then carries
	// the closed-shell state into the broken-symmetry region, which is what
	// the cold check is for (growing from the middle of the grid starts in
	// that region and hides the problem in this scan).
	recs := runScanTextQueue(t, t.TempDir(), text, true, 2, func(b *hf.Backend) runner.Backend { return b.WithColdCheck(check) })
	sort.Slice(recs, func(i, j int) bool {
		if recs[i].Values[0] != recs[j].Values[0] {
			return recs[i].Values[0] < recs[j].Values[0]
		}
		return recs[i].Values[1] < recs[j].Values[1]
	})
	out := scanRun{recs: recs}
	for _, p := range recs {
		if p.State == runner.Failed {
			t.Logf("cold check %d: %s failed (%s): %s", check, p.Key, p.Class, p.LastError)
		}
		out.iterations += int(p.Extra["scf_iterations_all_runs"])
		if p.Extra["cold_check_guesses"] > 0 {
			out.checks++
		}
		if p.Flags.GuessReplaced {
			out.replaced++
		}
	}
	return out
}

// coldLowest runs every cold guess at the point's geometry (a fresh
// hf.Energy with no orbitals) and returns the lowest converged UHF energy.
func coldLowest(t *testing.T, mol planner.Molecule, bs string) *hf.Result {
	t.Helper()
	res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: testBasis(t, bs), Method: hf.UHF,
		ColdGuesses: []hf.GuessKind{hf.GuessCore, hf.GuessGWH, hf.GuessAtoms, hf.GuessAtomsSpin, hf.GuessCoreTwist}})
	if err != nil {
		t.Fatal(err)
	}
	return res
}

func pointMol(t *testing.T, bs string, p runner.PointRecord) planner.Molecule {
	t.Helper()
	text := strings.NewReplacer("%GRID%", "values = [1.0]", "%BASIS%", bs).Replace(stateChangeSpec)
	spec, err := planner.Decode([]byte(text), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	mol, err := spec.Geometry(planner.Point{Key: p.Key, Values: p.Values})
	if err != nil {
		t.Fatal(err)
	}
	return mol
}

// TestScan2D_StateChange_KeepsLowestState runs the 2-D water scan through
// the real runner with the built-in backend and its continuation guess.
// Every point must be converged on the lowest state that cold starts with
// every guess find (checked at every point here: the scan is small), or
// be marked failed with a reason; FindDiscontinuities must flag the place
// where ⟨S²⟩ jumps from the closed-shell to the broken-symmetry region.
// With the cold check switched off the continuation guess must stay on
// the closed-shell state at stretched points (what the check is for).
func TestScan2D_StateChange_KeepsLowestState(t *testing.T) {
	grid, bs := "from = 0.9\nto = 2.7\nstep = 0.45", "STO-3G" // 5 × 5 points, Å
	if os.Getenv("WELLSCAN_SLOW") != "" {
		grid, bs = "from = 0.8\nto = 2.8\nstep = 0.2", "3-21G" // 11 × 11 points
	}
	def := runStateChangeScan(t, grid, bs, hf.ColdCheckBrokenSymmetry)
	never := runStateChangeScan(t, grid, bs, hf.ColdCheckNever)
	always := runStateChangeScan(t, grid, bs, hf.ColdCheckAlways)
	t.Logf("SCF iterations over %d points: continuation only %d, atoms-spin check %d (%d checks, %d replaced), always %d (%d replaced)",
		len(def.recs), never.iterations, def.iterations, def.checks, def.replaced, always.iterations, always.replaced)

	brokenSeen, upperSeen := 0, 0
	for i, p := range def.recs {
		if p.State != runner.Done {
			if p.State != runner.Failed || p.LastError == "" {
				t.Errorf("%s: state %s without a reason (%q)", p.Key, p.State, p.LastError)
			}
			continue
		}
		if !p.Converged || p.Energy == nil || p.SSquared == nil {
			t.Errorf("%s: done but converged %v, energy %v, ⟨S²⟩ %v", p.Key, p.Converged, p.Energy, p.SSquared)
			continue
		}
		cold := coldLowest(t, pointMol(t, bs, p), bs)
		// 1e-6 Eh: the backend's replacement margin (a hundred times the
		// SCF energy tolerance); UHF is variational, lower is better.
		if *p.Energy > cold.Energy+1e-6 {
			t.Errorf("%s: scan E = %.8f Eh (⟨S²⟩ %.3f), cold guesses reach %.8f (⟨S²⟩ %.3f, %v)",
				p.Key, *p.Energy, *p.SSquared, cold.Energy, cold.S2, cold.Guess)
		}
		if *p.SSquared > 0.1 {
			brokenSeen++
		}
		if q := never.recs[i]; q.Energy != nil && *q.Energy > cold.Energy+1e-3 {
			upperSeen++
		}
		t.Logf("%-24s E = %.8f ⟨S²⟩ = %.3f  iterations %2.0f  cold %.8f (%v)  continuation-only %.8f",
			p.Key, *p.Energy, *p.SSquared, p.Extra["scf_iterations_all_runs"], cold.Energy, cold.Guess, deref(never.recs[i].Energy))
	}
	if brokenSeen == 0 || brokenSeen == len(def.recs) {
		t.Fatalf("%d of %d points broken-symmetry: the grid does not cross the state change", brokenSeen, len(def.recs))
	}
	if upperSeen == 0 {
		t.Errorf("with the cold check off no point stayed ≥ 1 mEh above the cold state: the test does not exercise the check")
	}
	sus := runner.FindDiscontinuities(def.recs, runner.DiscontinuityOptions{})
	flagged := map[string]string{}
	for _, s := range sus {
		flagged[s.Key] = fmt.Sprint(s)
	}
	// Every neighbour pair on a scan line whose ⟨S²⟩ differs by more
	// than the default 0.1 must have one of its two points flagged.
	pairs := 0
	byKey := map[[2]float64]runner.PointRecord{}
	for _, p := range def.recs {
		byKey[[2]float64{p.Values[0], p.Values[1]}] = p
	}
	for _, p := range def.recs {
		for _, q := range def.recs {
			sameLine := (p.Values[0] == q.Values[0]) != (p.Values[1] == q.Values[1])
			if !sameLine || p.Key >= q.Key || p.SSquared == nil || q.SSquared == nil || math.Abs(*p.SSquared-*q.SSquared) <= 0.1 {
				continue
			}
			if !adjacent(def.recs, p, q) {
				continue
			}
			pairs++
			if _, ok := flagged[p.Key]; !ok {
				if _, ok := flagged[q.Key]; !ok {
					t.Errorf("⟨S²⟩ jumps %.3f → %.3f between %s and %s, neither flagged", *p.SSquared, *q.SSquared, p.Key, q.Key)
				}
			}
		}
	}
	if pairs == 0 {
		t.Error("no ⟨S²⟩ jump between neighbours: nothing for FindDiscontinuities to flag")
	}
	t.Logf("%d ⟨S²⟩ jumps between neighbours, %d points flagged: %v", pairs, len(flagged), flagged)
}

// adjacent reports whether p and q are neighbours on their scan line (no
// other point lies between them).
func adjacent(recs []runner.PointRecord, p, q runner.PointRecord) bool {
	d := 0
	if p.Values[0] == q.Values[0] {
		d = 1
	}
	lo, hi := math.Min(p.Values[d], q.Values[d]), math.Max(p.Values[d], q.Values[d])
	for _, r := range recs {
		if r.Values[1-d] == p.Values[1-d] && r.Values[d] > lo && r.Values[d] < hi {
			return false
		}
	}
	return true
}

func deref(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

// BenchmarkScan2D_ColdCheck times the 5 × 5 water UHF/STO-3G scan of
// TestScan2D_StateChange_KeepsLowestState with each cold-check policy and
// reports the SCF iterations spent over the whole scan.
func BenchmarkScan2D_ColdCheck(b *testing.B) {
	for _, c := range []struct {
		name  string
		check hf.ColdCheck
	}{{"never", hf.ColdCheckNever}, {"atoms-spin", hf.ColdCheckBrokenSymmetry}, {"always", hf.ColdCheckAlways}} {
		b.Run(c.name, func(b *testing.B) {
			var it int
			for b.Loop() {
				it = runStateChangeScan(b, "from = 0.9\nto = 2.7\nstep = 0.45", "STO-3G", c.check).iterations
			}
			b.ReportMetric(float64(it), "iterations/scan")
		})
	}
}
