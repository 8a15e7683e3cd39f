package hf_test

import (
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner/hf"
)

// TestEnergy_ExtrapolatedGuess walks a 10-point CO stretch (1.00–1.18 Å,
// RHF/6-31G*) three ways: continuation from the previous point's orbitals,
// and densities extrapolated linearly (two previous points) and
// quadratically (three). Every way must end on the same SCF energy as the
// cold start (1e-9 Eh: the tolerance; one SCF solution near
// equilibrium), and extrapolation must not cost more iterations in total
// than plain continuation (counts, not timings; the 30-point figures are
// in BenchmarkScan_ContinuationGuess).
func TestEnergy_ExtrapolatedGuess(t *testing.T) {
	set := testBasis(t, "6-31G*")
	geom := func(r float64) planner.Molecule {
		return mustMol(t, []planner.Atom{atom(t, "C", 0, 0, 0), atom(t, "O", 0, 0, r*angstrom)}, 0, 1)
	}
	const n = 10
	cold := make([]float64, n)
	for i := range n {
		res, err := hf.Energy(t.Context(), geom(1.00+0.02*float64(i)), hf.Options{Basis: set, Method: hf.RHF})
		if err != nil {
			t.Fatal(err)
		}
		cold[i] = res.Energy
	}
	total := map[int]int{}
	for _, depth := range []int{0, 1, 2} { // previous points used besides the nearest
		var hist []*hf.Orbitals // nearest first
		for i := range n {
			opts := hf.Options{Basis: set, Method: hf.RHF}
			if len(hist) > 0 {
				opts.Guess = hist[0]
				opts.GuessPrevious = hist[1:min(len(hist), depth+1)]
			}
			res, err := hf.Energy(t.Context(), geom(1.00+0.02*float64(i)), opts)
			if err != nil {
				t.Fatal(err)
			}
			wantGuess := hf.GuessFromOrbitals
			switch {
			case i == 0:
				wantGuess = hf.GuessAtoms
			case depth > 0 && i >= 2:
				wantGuess = hf.GuessExtrapolated
			}
			if res.Guess != wantGuess {
				t.Errorf("depth %d point %d: guess %v, want %v", depth, i, res.Guess, wantGuess)
			}
			if !scalar.EqualWithinAbs(res.Energy, cold[i], 1e-9) {
				t.Errorf("depth %d point %d: E = %.12f, cold start %.12f", depth, i, res.Energy, cold[i])
			}
			total[depth] += res.Iterations
			hist = append([]*hf.Orbitals{res.Orbitals}, hist...)
		}
	}
	t.Logf("SCF iterations over %d points: continuation %d, linear extrapolation %d, quadratic %d", n, total[0], total[1], total[2])
	if total[1] > total[0] || total[2] > total[0] {
		t.Errorf("extrapolation costs more iterations than continuation: %v", total)
	}
}

// TestEnergy_ExtrapolatedGuessBadPositions: coincident positions cannot
// be extrapolated; the engine says so and starts from the nearest
// orbitals instead, on the right energy.
func TestEnergy_ExtrapolatedGuessBadPositions(t *testing.T) {
	set := testBasis(t, "STO-3G")
	mol := mustMol(t, []planner.Atom{atom(t, "C", 0, 0, 0), atom(t, "O", 0, 0, 2.13)}, 0, 1)
	ref, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set})
	if err != nil {
		t.Fatal(err)
	}
	res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Guess: ref.Orbitals,
		GuessPrevious: []*hf.Orbitals{ref.Orbitals}, GuessPositions: []float64{2, 1, 1}})
	if err != nil {
		t.Fatal(err)
	}
	if res.Guess != hf.GuessFromOrbitals || len(res.GuessNotes) != 1 || !scalar.EqualWithinAbs(res.Energy, ref.Energy, 1e-9) {
		t.Errorf("guess %v, notes %q, E = %.12f (want orbitals, one note, %.12f)", res.Guess, res.GuessNotes, res.Energy, ref.Energy)
	}
}
