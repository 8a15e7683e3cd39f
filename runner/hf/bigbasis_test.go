package hf_test

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner/hf"
)

// TestEnergy_QZGFunctions exercises the g functions of cc-pVQZ: the RHF
// energy of Ne lies above the numerical Hartree–Fock limit −128.547098 Eh
// (C. Froese Fischer, The Hartree–Fock Method for Atoms (Wiley, 1977),
// from memory) and equals the published RHF/cc-pVQZ value, and the N2
// energy does not change under a rotation that mixes all
// Cartesian components of every g shell (1e-9 Eh: rounding of a
// 110-function calculation).
func TestEnergy_QZGFunctions(t *testing.T) {
	if testing.Short() {
		t.Skip("cc-pVQZ integrals take a few seconds")
	}
	bs := testBasis(t, "cc-pVQZ")
	ne := mustMol(t, []planner.Atom{atom(t, "Ne", 0, 0, 0)}, 0, 1)
	r, err := hf.Energy(t.Context(), ne, hf.Options{Basis: bs})
	if err != nil {
		t.Fatal(err)
	}
	if r.BasisFunctions != 55 { // nbf_spherical of Ne in the JSON extract
		t.Errorf("Ne: %d functions, want 55", r.BasisFunctions)
	}
	const limit = -128.547098 // numerical HF limit of Ne, Froese Fischer 1977 (from memory)
	if r.Energy < limit {
		t.Errorf("E(Ne, RHF/cc-pVQZ) = %.6f below the HF limit %.6f", r.Energy, limit)
	}
	// −128.543470 Eh: A. Halkier, T. Helgaker, P. Jørgensen, W. Klopper and J. Olsen,
	// Chem. Phys. Lett. 302, 437 (1999), Ne RHF/cc-pVQZ (from memory); 2e-6 Eh: its 6 decimals.
	if !scalar.EqualWithinAbs(r.Energy, -128.543470, 2e-6) {
		t.Errorf("E(Ne, RHF/cc-pVQZ) = %.6f, want −128.543470", r.Energy)
	}
	d := 1.0977 * angstrom
	axis := [3]float64{0.3, -0.5, 0.81}
	nrm := math.Sqrt(axis[0]*axis[0] + axis[1]*axis[1] + axis[2]*axis[2])
	n2 := mustMol(t, []planner.Atom{atom(t, "N", 0, 0, 0), atom(t, "N", 0, 0, d)}, 0, 1)
	n2r := mustMol(t, []planner.Atom{atom(t, "N", 0.1, 0.2, -0.3), atom(t, "N", 0.1+d*axis[0]/nrm, 0.2+d*axis[1]/nrm, -0.3+d*axis[2]/nrm)}, 0, 1)
	a, err := hf.Energy(t.Context(), n2, hf.Options{Basis: bs})
	if err != nil {
		t.Fatal(err)
	}
	b, err := hf.Energy(t.Context(), n2r, hf.Options{Basis: bs})
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(a.Energy, b.Energy, 1e-9) {
		t.Errorf("N2/cc-pVQZ: E = %.12f along z, %.12f rotated", a.Energy, b.Energy)
	}
	t.Logf("Ne %.8f, N2 %.10f / %.10f (%d functions, integrals %v)", r.Energy, a.Energy, b.Energy, a.BasisFunctions, a.IntegralTime)
}
