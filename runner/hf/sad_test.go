package hf_test

import (
	"math"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// Tests of the superposition-of-atomic-densities (SAD) guesses and of the
// cold-start guess search in hf.Energy.

// TestEnergy_StretchedDiatomics_ColdStartFindsBrokenSymmetry: from a cold
// start, hf.Energy itself (no test-built guess) must reach the broken-
// symmetry UHF state of stretched N2 and F2 that the test-only atomic-
// fragment guess of robust_test.go finds. UHF is variational, so a lower
// energy than that state would also be right; a higher one means the
// engine stopped on the symmetric (RHF-like) solution, which for N2 lies
// 0.56 Eh and for F2 0.29 Eh higher.
func TestEnergy_StretchedDiatomics_ColdStartFindsBrokenSymmetry(t *testing.T) {
	cases := []struct {
		sym      string
		atomMult int
		// bound: the state the fragment guess reaches in this engine
		// (N2: −108.7671 Eh, runner/hf/robust_test.go log; the brief's
		// target is ≤ −108.76). For F2 the test recomputes the fragment-
		// guess state and requires the cold start to reach it.
		//
		// F2 has a still lower state (−198.72148 Eh, ⟨S²⟩ 1.002, π
		// degeneracy broken) that the core-twist guess reaches, 0.38 mEh
		// below atoms-spin (−198.72111, π degenerate) and 2.4 mEh below
		// the fragment guess (−198.71904); this engine's runs, logged here.
		bound      float64
		kept       hf.GuessKind
		s2Lo, s2Hi float64 // as in robust_test.go: n unpaired per atom → ⟨S²⟩ → n
	}{
		{"N", 4, -108.76, hf.GuessAtomsSpin, 2.8, 3.05},
		{"F", 2, -198.7214, hf.GuessCoreTwist, 0.8, 1.05},
	}
	for _, tc := range cases {
		t.Run(tc.sym+"2", func(t *testing.T) {
			mol := mustMol(t, []planner.Atom{atom(t, tc.sym, 0, 0, 0), atom(t, tc.sym, 0, 0, 2.5*angstrom)}, 0, 1)
			set := testBasis(t, "6-31G")
			res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.UHF})
			if err != nil {
				t.Fatal(err)
			}
			for _, tr := range res.Trials {
				t.Logf("guess %-10v E = %.8f Eh  ⟨S²⟩ = %.4f  converged %v  %d iterations", tr.Guess, tr.Energy, tr.S2, tr.Converged, tr.Iterations)
			}
			frag, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.UHF, Guess: fragmentGuess(t, tc.sym, tc.atomMult, "6-31G")})
			if err != nil {
				t.Fatal(err)
			}
			bound := math.Min(tc.bound, frag.Energy+1e-6) // 1e-6 Eh: far above the SCF tolerance, far below the 0.29 Eh gap
			t.Logf("kept %v: E = %.8f Eh, ⟨S²⟩ = %.4f; fragment guess %.8f Eh", res.Guess, res.Energy, res.S2, frag.Energy)
			if res.Energy > bound {
				t.Errorf("cold start E = %.8f Eh, want ≤ %.8f (the broken-symmetry state)", res.Energy, bound)
			}
			if res.S2 < tc.s2Lo || res.S2 > tc.s2Hi {
				t.Errorf("⟨S²⟩ = %.4f, want %.2f–%.2f", res.S2, tc.s2Lo, tc.s2Hi)
			}
			if res.Guess != tc.kept || res.GuessesTried != 5 {
				t.Errorf("kept guess %v after %d guesses; want %v after 5 (core, gwh, atoms, atoms-spin, core-twist)", res.Guess, res.GuessesTried, tc.kept)
			}
		})
	}
}

// TestEnergy_WorkedWater_EveryGuessSameEnergy: an equilibrium closed shell
// has one SCF solution worth the name, so every guess, RHF or UHF, ends on
// the published worked example's energy (CrawfordGroup ProgrammingProjects
// commit 297fda1, Project #3 README, −74.942079928192 Eh; 1e-9 Eh is the
// issue's tolerance).
func TestEnergy_WorkedWater_EveryGuessSameEnergy(t *testing.T) {
	const want = -74.942079928192 // worked example, Project #3 README
	mol := mustMol(t, readGeom(t, filepath.Join("testdata", "bases", "h2o-geom.dat")), 0, 1)
	set := testBasis(t, "STO-3G-v0")
	for _, m := range []hf.Method{hf.RHF, hf.UHF} {
		guesses := []hf.GuessKind{hf.GuessCore, hf.GuessGWH, hf.GuessAtoms}
		if m == hf.UHF {
			guesses = append(guesses, hf.GuessAtomsSpin, hf.GuessCoreTwist)
		}
		for _, g := range guesses {
			res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: m, ColdGuesses: []hf.GuessKind{g}})
			if err != nil {
				t.Fatalf("%s %v: %v", m, g, err)
			}
			t.Logf("%s %-10v E = %.12f  %d iterations  ⟨S²⟩ %.2e %v", m, g, res.Energy, res.Iterations, res.S2, res.GuessNotes)
			if !scalar.EqualWithinAbs(res.Energy, want, 1e-9) || res.Guess != g {
				t.Errorf("%s %v: E = %.12f (guess %v), want %.12f", m, g, res.Energy, res.Guess, want)
			}
		}
	}
	// The default (no guess named) is the atoms guess for RHF.
	res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set})
	if err != nil {
		t.Fatal(err)
	}
	if res.Guess != hf.GuessAtoms || !scalar.EqualWithinAbs(res.Energy, want, 1e-9) {
		t.Errorf("default RHF: guess %v, E = %.12f; want atoms, %.12f", res.Guess, res.Energy, want)
	}
}

func overlapOf(t *testing.T, mol planner.Molecule, set *basis.Set) *mat.SymDense {
	t.Helper()
	sh, err := set.Shells(mol, basis.ConventionAsSet)
	if err != nil {
		t.Fatal(err)
	}
	return integral.Overlap(sh, integral.NormPerComponent)
}

func traceDS(d, s *mat.SymDense) float64 {
	n := d.SymmetricDim()
	var t float64
	for i := range n {
		for j := range n {
			t += d.At(i, j) * s.At(i, j)
		}
	}
	return t
}

// TestAtomicGuess_TracesAndSpins: the SAD densities hold the molecule's
// electrons, tr(D^α S) = N_α and tr(D^β S) = N_β (definition of the
// Mulliken electron count; common practice), for neutral, charged and
// open-shell molecules, plain and spin-polarised; the spin-polarised N2
// singlet puts +3 on one N and −3 on the other (N ⁴S has three unpaired
// electrons: Hund's rule, common practice); O2 triplet cannot be made of
// two ³P atoms with opposite spins adding to 2 and falls back with a note.
func TestAtomicGuess_TracesAndSpins(t *testing.T) {
	water := readGeom(t, filepath.Join("testdata", "bases", "h2o-geom.dat"))
	cases := []struct {
		name         string
		atoms        []planner.Atom
		charge, mult int
		polarised    bool
		spins        []int // nil: not checked
		note         bool
	}{
		{"water", water, 0, 1, false, []int{0, 0, 0}, false},
		{"water polarised", water, 0, 1, true, []int{2, -1, -1}, false},
		{"OH- plain", []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "H", 0, 0, 1.8)}, -1, 1, false, nil, false},
		{"OH doublet polarised", []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "H", 0, 0, 1.8)}, 0, 2, true, []int{2, -1}, false},
		{"N2 polarised", []planner.Atom{atom(t, "N", 0, 0, 0), atom(t, "N", 0, 0, 4.7)}, 0, 1, true, []int{3, -3}, false},
		{"O2 triplet polarised", []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "O", 0, 0, 2.3)}, 0, 3, true, []int{0, 0}, true},
		{"He2+ polarised", []planner.Atom{atom(t, "He", 0, 0, 0), atom(t, "He", 0, 0, 2)}, 1, 2, true, []int{0, 0}, true},
	}
	for _, bs := range []string{"STO-3G", "6-31G*", "cc-pVDZ"} {
		set := testBasis(t, bs)
		g := hf.NewAtomicGuess(set, basis.ConventionAsSet, integral.NormPerComponent)
		for _, tc := range cases {
			mol := mustMol(t, tc.atoms, tc.charge, tc.mult)
			d, err := g.Density(t.Context(), mol, tc.polarised)
			if err != nil {
				t.Fatalf("%s/%s: %v", bs, tc.name, err)
			}
			s := overlapOf(t, mol, set)
			na, nb := mol.AlphaBeta()
			// 1e-10: rounding of sums over ≤ 60² terms of order 1.
			if ta, tb := traceDS(d.Alpha, s), traceDS(d.Beta, s); !scalar.EqualWithinAbs(ta, float64(na), 1e-10) || !scalar.EqualWithinAbs(tb, float64(nb), 1e-10) {
				t.Errorf("%s/%s: tr(DαS) = %.12f, tr(DβS) = %.12f; want %d, %d", bs, tc.name, ta, tb, na, nb)
			}
			if tc.spins != nil {
				for i, u := range tc.spins {
					if d.AtomSpins[i] != u {
						t.Errorf("%s/%s: atom spins %v, want %v", bs, tc.name, d.AtomSpins, tc.spins)
						break
					}
				}
			}
			if (d.Note != "") != tc.note {
				t.Errorf("%s/%s: note %q, want a note: %v", bs, tc.name, d.Note, tc.note)
			}
		}
	}
}

// TestAtomicGuess_Deterministic: the same molecule gives bit-identical
// densities from two independent builders (run several times with
// -count to catch scheduling effects), and hf.Energy the same energy
// and iteration count twice (no map-order dependence). The SCF runs on one
// worker: parallel Fock builds may add in another order and change the
// last bits, which is not the guess's doing.
func TestAtomicGuess_Deterministic(t *testing.T) {
	set := testBasis(t, "6-31G*")
	mol := mustMol(t, []planner.Atom{atom(t, "C", 0, 0, 0), atom(t, "O", 0, 0, 2.13), atom(t, "H", 1.8, 0, -1), atom(t, "H", -1.8, 0, -1)}, 0, 1)
	var prev *hf.SpinDensity
	for range 2 {
		d, err := hf.NewAtomicGuess(set, basis.ConventionAsSet, integral.NormPerComponent).Density(t.Context(), mol, true)
		if err != nil {
			t.Fatal(err)
		}
		if prev != nil && (!mat.Equal(prev.Alpha, d.Alpha) || !mat.Equal(prev.Beta, d.Beta)) {
			t.Error("two builds of the same SAD density differ")
		}
		prev = d
	}
	var e0 float64
	var it0 int
	for i := range 2 {
		res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		if i == 1 && (res.Energy != e0 || res.Iterations != it0) {
			t.Errorf("second run E = %.12f, %d iterations; first %.12f, %d", res.Energy, res.Iterations, e0, it0)
		}
		e0, it0 = res.Energy, res.Iterations
	}
}

// TestEnergy_RHFDefaultGuessNotSlower justifies the RHF default: the atoms
// guess needs no more SCF iterations than the core guess on the worked-
// example water and on CO (measured: water STO-3G-v0 core 10, atoms 9;
// CO 6-31G* core 14, atoms 12). Both runs must end on the same energy
// (1e-9 Eh, the tolerance).
func TestEnergy_RHFDefaultGuessNotSlower(t *testing.T) {
	water := mustMol(t, readGeom(t, filepath.Join("testdata", "bases", "h2o-geom.dat")), 0, 1)
	co := mustMol(t, []planner.Atom{atom(t, "C", 0, 0, 0), atom(t, "O", 0, 0, 1.128*angstrom)}, 0, 1) // r_e ≈ 1.128 Å, from memory
	for _, tc := range []struct {
		name string
		mol  planner.Molecule
		bs   string
	}{{"water", water, "STO-3G-v0"}, {"CO", co, "6-31G*"}} {
		var it [2]int
		var e [2]float64
		for i, g := range []hf.GuessKind{hf.GuessCore, hf.GuessAtoms} {
			res, err := hf.Energy(t.Context(), tc.mol, hf.Options{Basis: testBasis(t, tc.bs), Method: hf.RHF, ColdGuesses: []hf.GuessKind{g}})
			if err != nil {
				t.Fatal(err)
			}
			it[i], e[i] = res.Iterations, res.Energy
		}
		t.Logf("%s %s: core %d iterations, atoms %d", tc.name, tc.bs, it[0], it[1])
		if it[1] > it[0] || !scalar.EqualWithinAbs(e[0], e[1], 1e-9) {
			t.Errorf("%s: atoms %d iterations (E %.12f) vs core %d (E %.12f)", tc.name, it[1], e[1], it[0], e[0])
		}
	}
}

// TestEnergy_ColdGuessErrors: an atoms guess asked of RunSCF without a
// density is refused with a clear error; a single atoms-spin guess that
// cannot apply says it used the plain one.
func TestEnergy_ColdGuessErrors(t *testing.T) {
	s := mat.NewSymDense(1, []float64{1})
	_, err := hf.RunSCF(t.Context(), hf.SCFInput{S: s, Hcore: s, JK: nil, NAlpha: 1, NBeta: 1, Restricted: true,
		Options: hf.SCFOptions{Guess: hf.GuessAtoms}})
	if err == nil {
		t.Error("RunSCF with no JK and no density: no error")
	}
	mol := mustMol(t, []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "O", 0, 0, 2.3)}, 0, 3)
	res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: testBasis(t, "STO-3G"), ColdGuesses: []hf.GuessKind{hf.GuessAtomsSpin}})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.GuessNotes) != 1 {
		t.Errorf("O2 triplet atoms-spin: notes %q, want one saying the plain guess was used", res.GuessNotes)
	}
	if _, err := hf.ParseGuess("huckel"); err == nil {
		t.Error(`ParseGuess("huckel"): no error`)
	}
}

// BenchmarkColdGuessIterations reports SCF iterations to convergence (a
// count, not a timing) for the core, GWH and atoms guesses on water
// cc-pVDZ, CO 6-31G* and benzene 6-31G* (RHF). Benzene: planar D6h with
// C–C 1.39 Å and C–H 1.08 Å (from memory).
func BenchmarkColdGuessIterations(b *testing.B) {
	el := func(s string) planner.Element {
		e, err := planner.ElementBySymbol(s)
		if err != nil {
			b.Fatal(err)
		}
		return e
	}
	at := func(s string, x, y, z float64) planner.Atom { return planner.NewAtom(el(s), [3]float64{x, y, z}) }
	mk := func(atoms []planner.Atom) planner.Molecule {
		m, err := planner.NewMolecule(atoms, 0, 1)
		if err != nil {
			b.Fatal(err)
		}
		return m
	}
	// Water: the worked example's geometry (bohr), CrawfordGroup Project #3.
	water := mk([]planner.Atom{at("O", 0, -0.143225816552, 0), at("H", 1.638036840407, 1.136548822547, 0), at("H", -1.638036840407, 1.136548822547, 0)})
	co := mk([]planner.Atom{at("C", 0, 0, 0), at("O", 0, 0, 1.128*angstrom)})
	var bz []planner.Atom
	for i := range 6 {
		a := float64(i) * math.Pi / 3
		c, s := math.Cos(a), math.Sin(a)
		bz = append(bz, at("C", 1.39*angstrom*c, 1.39*angstrom*s, 0), at("H", 2.47*angstrom*c, 2.47*angstrom*s, 0))
	}
	cases := []struct {
		name string
		mol  planner.Molecule
		bs   string
	}{{"water-cc-pVDZ", water, "cc-pVDZ"}, {"CO-6-31G*", co, "6-31G*"}, {"benzene-6-31G*", mk(bz), "6-31G*"}}
	for _, tc := range cases {
		set, err := basis.Lookup(tc.bs)
		if err != nil {
			b.Fatal(err)
		}
		for _, g := range []hf.GuessKind{hf.GuessCore, hf.GuessGWH, hf.GuessAtoms} {
			b.Run(tc.name+"/"+g.String(), func(b *testing.B) {
				var it int
				for b.Loop() {
					res, err := hf.Energy(b.Context(), tc.mol, hf.Options{Basis: set, Method: hf.RHF, ColdGuesses: []hf.GuessKind{g}})
					if err != nil {
						b.Fatal(err)
					}
					it = res.Iterations
				}
				b.ReportMetric(float64(it), "iterations")
			})
		}
	}
}

// TestEnergy_CheckGuesses: a warm start on the closed-shell solution of
// stretched N2 (UHF/6-31G, from the core-guess state) stays there, since
// equal α and β orbitals never break symmetry; with CheckGuesses atoms-spin
// the broken-symmetry state (≤ −108.76 Eh, the state of the fragment
// guess; see above) replaces it. A warm start already on that state is
// kept (the check must not swap equal states).
func TestEnergy_CheckGuesses(t *testing.T) {
	mol := mustMol(t, []planner.Atom{atom(t, "N", 0, 0, 0), atom(t, "N", 0, 0, 2.5*angstrom)}, 0, 1)
	set := testBasis(t, "6-31G")
	closed, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.UHF, ColdGuesses: []hf.GuessKind{hf.GuessCore}})
	if err != nil {
		t.Fatal(err)
	}
	warm, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.UHF, Guess: closed.Orbitals})
	if err != nil {
		t.Fatal(err)
	}
	checked, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.UHF, Guess: closed.Orbitals, CheckGuesses: []hf.GuessKind{hf.GuessAtomsSpin}})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("warm %.8f (%v), checked %.8f (%v, %d runs)", warm.Energy, warm.Guess, checked.Energy, checked.Guess, checked.GuessesTried)
	if warm.Energy < -108.3 || warm.Guess != hf.GuessFromOrbitals {
		t.Errorf("warm start alone: E = %.8f (%v); want the closed-shell state near −108.21", warm.Energy, warm.Guess)
	}
	if checked.Energy > -108.76 || checked.Guess != hf.GuessAtomsSpin || checked.GuessesTried != 2 || len(checked.Trials) != 2 {
		t.Errorf("with the check: E = %.8f (%v, %d runs); want ≤ −108.76 from atoms-spin after 2", checked.Energy, checked.Guess, checked.GuessesTried)
	}
	again, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.UHF, Guess: checked.Orbitals, CheckGuesses: []hf.GuessKind{hf.GuessAtomsSpin}})
	if err != nil {
		t.Fatal(err)
	}
	if again.Guess != hf.GuessFromOrbitals || !scalar.EqualWithinAbs(again.Energy, checked.Energy, 1e-8) {
		t.Errorf("warm start on the lowest state: kept %v, E = %.8f; want the orbitals' run at %.8f", again.Guess, again.Energy, checked.Energy)
	}
}

// TestEnergy_AtomsGuessFallsBackToCore: a user basis with a single s
// function on O cannot hold O's 1s²2s²2p⁴, so no atomic density exists;
// the default RHF start then uses the core guess and says so, while an
// explicit --guess atoms fails with the reason. The H2O energy itself is
// not checked (an invented one-function basis, demo only).
func TestEnergy_AtomsGuessFallsBackToCore(t *testing.T) {
	set, err := basis.Parse(strings.NewReader(tinyBasis), "tiny.basis")
	if err != nil {
		t.Skipf("cannot write the tiny basis in the library format: %v", err)
	}
	mol := mustMol(t, readGeom(t, filepath.Join("testdata", "bases", "h2o-geom.dat")), 0, 1)
	res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.RHF})
	if res == nil {
		t.Fatalf("default guess: %v", err)
	}
	if res.Guess != hf.GuessCore || len(res.GuessNotes) != 2 {
		t.Errorf("default guess: kept %v, notes %q; want core with two notes", res.Guess, res.GuessNotes)
	}
	if _, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.RHF, ColdGuesses: []hf.GuessKind{hf.GuessAtoms}}); err == nil || !strings.Contains(err.Error(), "too few l = 0") {
		t.Errorf("explicit atoms guess: err = %v, want the basis-too-small reason", err)
	}
}

// tinyBasis: O with one s and one p shell, H with one s (exponents of the
// worked STO-3G set, testdata/bases/worked-sto-3g.basis; demo only).
const tinyBasis = `wellscan-basis 1
title tiny
about one s and one p on O: too small for O's ground configuration (test only)
harmonics cartesian

element O
shell s
  5.0331513  -0.09996723
  1.1695961  0.39951283
  0.3803890  0.70011547
shell p
  5.0331513  0.15591627
  1.1695961  0.60768372
  0.3803890  0.39195739

element H
shell s
  3.42525091  0.15432897
  0.62391373  0.53532814
  0.16885540  0.44463454
`
