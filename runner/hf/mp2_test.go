package hf_test

import (
	"errors"
	"math"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/integral"
)

func waterMol(t *testing.T) planner.Molecule {
	t.Helper()
	return mustMol(t, readGeom(t, filepath.Join("testdata", "bases", "h2o-geom.dat")), 0, 1)
}

func mp2Energy(t *testing.T, mol planner.Molecule, opts hf.Options) *hf.Result {
	t.Helper()
	opts.Method = hf.MP2
	res, err := hf.Energy(t.Context(), mol, opts)
	if err != nil {
		t.Fatal(err)
	}
	if res.MP2 == nil {
		t.Fatal("mp2 result missing")
	}
	return res
}

// TestEnergy_MP2WorkedExample reproduces the MP2 correlation energies of the
// published worked example (closed-shell canonical MP2, all electrons
// correlated).
func TestEnergy_MP2WorkedExample(t *testing.T) {
	cases := []struct {
		name, geom, basis string
		norm              integral.CartNorm
		corr              float64
	}{
		// MP2 correlation energies: the worked example's Project #4 output
		// files, as tabulated in its README ("Key expected results"),
		// CrawfordGroup ProgrammingProjects commit 297fda1.
		{"H2O/STO-3G", "h2o-geom.dat", "STO-3G-v0", integral.NormPerComponent, -0.049149636120},
		{"H2O/DZ", "h2o-geom.dat", "worked-dz.basis", integral.NormPerComponent, -0.152709879075},
		{"H2O/DZP", "h2o-geom.dat", "worked-dzp.basis", integral.NormAxial, -0.222519233815},
		{"CH4/STO-3G", "ch4-geom.dat", "worked-ch4-sto-3g.basis", integral.NormPerComponent, -0.056046676165},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			mol := mustMol(t, readGeom(t, filepath.Join("testdata", "bases", tc.geom)), 0, 1)
			res := mp2Energy(t, mol, hf.Options{Basis: testBasis(t, tc.basis), Norm: tc.norm, FrozenCore: hf.AllElectron})
			m := res.MP2
			// 1e-9 Eh: the tolerance; the reference prints 12 decimals.
			if !scalar.EqualWithinAbs(m.Correlation, tc.corr, 1e-9) {
				t.Errorf("E(2) = %.12f, want %.12f (diff %.2e)", m.Correlation, tc.corr, m.Correlation-tc.corr)
			}
			// Bookkeeping is exact up to rounding (1e-12 Eh).
			if !scalar.EqualWithinAbs(m.SameSpin+m.OppositeSpin, m.Correlation, 1e-12) ||
				!scalar.EqualWithinAbs(res.Energy, res.SCFResult.Energy+m.Correlation, 1e-12) ||
				res.Energy != m.Total || m.ReferenceEnergy != res.SCFResult.Energy {
				t.Errorf("inconsistent totals: %+v, Energy %v, SCF %v", m, res.Energy, res.SCFResult.Energy)
			}
			if m.FrozenCore != 0 || m.Reference != hf.RHF || res.Method != hf.MP2 {
				t.Errorf("frozen %d, reference %s, method %s; want 0, rhf, mp2", m.FrozenCore, m.Reference, res.Method)
			}
		})
	}
}

// TestEnergy_MP2BatchedAndWorkers: a small memory budget (one occupied
// orbital per batch), integral-direct AO integrals and 1 or 3 workers
// must all give the in-core, single-batch energy. Same arithmetic up to
// summation order: 1e-12 Eh.
func TestEnergy_MP2BatchedAndWorkers(t *testing.T) {
	mol := waterMol(t)
	bs := testBasis(t, "worked-dz.basis")
	ref := mp2Energy(t, mol, hf.Options{Basis: bs, FrozenCore: hf.AllElectron, Workers: 1})
	if ref.MP2.Batches != 1 {
		t.Fatalf("default budget: %d batches, want 1", ref.MP2.Batches)
	}
	n := int64(ref.BasisFunctions)
	np := n * (n + 1) / 2
	nv := int64(ref.MP2.VirtualAlpha)
	// scratch of 2 workers (pair block 9·np: the largest block of ket
	// pairs is that of two p shells, + 2n² + o(n+v)) plus one occupied
	// orbital's H and G.
	small := 8*2*(9*np+2*n*n+5*(n+nv)) + 8*nv*(np+5*nv) + 64
	cases := []struct {
		name        string
		opts        hf.Options
		wantBatches int
	}{
		{"batched", hf.Options{Workers: 2, MP2Memory: small}, 5},
		{"direct", hf.Options{Workers: 2, Memory: -1}, 1},
		{"direct batched", hf.Options{Workers: 3, Memory: -1, MP2Memory: 4 << 20}, 0},
		{"3 workers", hf.Options{Workers: 3}, 1},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			tc.opts.Basis, tc.opts.FrozenCore = bs, hf.AllElectron
			got := mp2Energy(t, mol, tc.opts)
			if tc.wantBatches > 0 && got.MP2.Batches != tc.wantBatches {
				t.Errorf("%d batches, want %d", got.MP2.Batches, tc.wantBatches)
			}
			if !scalar.EqualWithinAbs(got.MP2.Correlation, ref.MP2.Correlation, 1e-12) {
				t.Errorf("E(2) = %.14f, want %.14f", got.MP2.Correlation, ref.MP2.Correlation)
			}
			if !scalar.EqualWithinAbs(got.MP2.SameSpin, ref.MP2.SameSpin, 1e-12) {
				t.Errorf("E_ss = %.14f, want %.14f", got.MP2.SameSpin, ref.MP2.SameSpin)
			}
		})
	}
	_, err := hf.Energy(t.Context(), mol, hf.Options{Basis: bs, Method: hf.MP2, MP2Memory: 1000})
	if err == nil {
		t.Error("a 1000-byte budget: no error")
	}
}

// TestEnergy_UMP2ClosedShellEqualsRMP2: a UHF reference that converges to
// the closed-shell solution gives the RHF-MP2 energy, component by
// component (identity of the formulas; 1e-10 Eh is the tolerance,
// covering the two SCFs' convergence).
func TestEnergy_UMP2ClosedShellEqualsRMP2(t *testing.T) {
	for _, fc := range []hf.FrozenCore{hf.AllElectron, hf.FrozenCoreAuto} {
		mol := waterMol(t)
		bs := testBasis(t, "worked-dz.basis")
		r := mp2Energy(t, mol, hf.Options{Basis: bs, FrozenCore: fc})
		u := mp2Energy(t, mol, hf.Options{Basis: bs, FrozenCore: fc, MP2Reference: hf.UHF})
		if u.MP2.Reference != hf.UHF || r.MP2.Reference != hf.RHF {
			t.Fatalf("references %s, %s", r.MP2.Reference, u.MP2.Reference)
		}
		for _, c := range []struct {
			what     string
			got, ref float64
		}{
			{"correlation", u.MP2.Correlation, r.MP2.Correlation},
			{"same spin", u.MP2.SameSpin, r.MP2.SameSpin},
			{"opposite spin", u.MP2.OppositeSpin, r.MP2.OppositeSpin},
			{"total", u.Energy, r.Energy},
		} {
			if !scalar.EqualWithinAbs(c.got, c.ref, 1e-10) {
				t.Errorf("frozen %d: UMP2 %s = %.12f, RMP2 %.12f", fc, c.what, c.got, c.ref)
			}
		}
	}
}

// TestEnergy_MP2OneElectron: with one electron there is no pair to
// correlate, so E(2) is exactly zero (up to rounding of nothing: 0).
func TestEnergy_MP2OneElectron(t *testing.T) {
	for _, tc := range []struct {
		name string
		mol  planner.Molecule
	}{
		{"H", mustMol(t, []planner.Atom{atom(t, "H", 0, 0, 0)}, 0, 2)},
		{"H2+", mustMol(t, []planner.Atom{atom(t, "H", 0, 0, 0), atom(t, "H", 0, 0, 2.0)}, 1, 2)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			res := mp2Energy(t, tc.mol, hf.Options{Basis: testBasis(t, "cc-pVTZ")})
			if res.MP2.Correlation != 0 || res.MP2.Reference != hf.UHF {
				t.Errorf("E(2) = %g (reference %s), want exactly 0 from UMP2", res.MP2.Correlation, res.MP2.Reference)
			}
			if res.Energy != res.SCFResult.Energy {
				t.Errorf("Energy %v ≠ SCF %v", res.Energy, res.SCFResult.Energy)
			}
		})
	}
}

// TestEnergy_MP2H2 checks H2 at 1.4 bohr in cc-pVTZ: MP2 recovers part of
// the correlation energy but stays above the exact non-relativistic
// Born–Oppenheimer energy −1.1744746 Eh (W. Kołos and L. Wolniewicz,
// J. Chem. Phys. 41, 3663 (1964)); it is a singlet pair, so the
// same-spin part vanishes (to rounding, 1e-14 Eh).
func TestEnergy_MP2H2(t *testing.T) {
	h2 := mustMol(t, []planner.Atom{atom(t, "H", 0, 0, 0), atom(t, "H", 0, 0, 1.4)}, 0, 1)
	res := mp2Energy(t, h2, hf.Options{Basis: testBasis(t, "cc-pVTZ")})
	m := res.MP2
	if m.Correlation >= 0 || res.Energy <= -1.1744746 {
		t.Errorf("E(MP2) = %.9f (correlation %.9f), want between exact −1.1744746 and HF %.9f", res.Energy, m.Correlation, res.SCFResult.Energy)
	}
	if math.Abs(m.SameSpin) > 1e-14 {
		t.Errorf("same-spin part %g, want 0 for a two-electron singlet", m.SameSpin)
	}
	if m.FrozenCore != 0 || m.FrozenCoreLabel != "" {
		t.Errorf("H2 freezes %d (%q), want nothing", m.FrozenCore, m.FrozenCoreLabel)
	}
}

// TestEnergy_MP2FrozenCore: freezing O 1s removes (negative) core and
// core–valence correlation, so the energy rises (common practice), and
// the default is the frozen core.
func TestEnergy_MP2FrozenCore(t *testing.T) {
	mol := waterMol(t)
	bs := testBasis(t, "worked-dzp.basis")
	all := mp2Energy(t, mol, hf.Options{Basis: bs, Norm: integral.NormAxial, FrozenCore: hf.AllElectron})
	def := mp2Energy(t, mol, hf.Options{Basis: bs, Norm: integral.NormAxial})
	one := mp2Energy(t, mol, hf.Options{Basis: bs, Norm: integral.NormAxial, FrozenCore: hf.FrozenCoreCount(1)})
	if def.MP2.FrozenCore != 1 || def.MP2.FrozenCoreLabel != "O 1s" {
		t.Errorf("default frozen core %d (%q), want 1 (O 1s)", def.MP2.FrozenCore, def.MP2.FrozenCoreLabel)
	}
	if !(def.MP2.Correlation > all.MP2.Correlation) {
		t.Errorf("frozen-core E(2) %.9f not above all-electron %.9f", def.MP2.Correlation, all.MP2.Correlation)
	}
	// Same calculation; the SCF's parallel Fock builds sum in varying order, 1e-10 Eh.
	if !scalar.EqualWithinAbs(one.MP2.Correlation, def.MP2.Correlation, 1e-10) {
		t.Errorf("FrozenCoreCount(1) %.14f ≠ default %.14f", one.MP2.Correlation, def.MP2.Correlation)
	}
	if def.MP2.OccupiedAlpha != 4 || all.MP2.OccupiedAlpha != 5 {
		t.Errorf("correlated occupied %d/%d, want 4/5", def.MP2.OccupiedAlpha, all.MP2.OccupiedAlpha)
	}
}

func TestFrozenCoreOrbitals_Elements(t *testing.T) {
	cases := []struct {
		syms  []string
		n     int
		label string
	}{
		// Noble-gas cores (common practice): He 1 orbital, Ne 5, Ar 9.
		{[]string{"H", "He"}, 0, ""},
		{[]string{"O", "H", "H"}, 1, "O 1s"},
		{[]string{"C", "C", "H"}, 2, "C 1s ×2"},
		{[]string{"Na", "Cl"}, 10, "Na [Ne], Cl [Ne]"},
		{[]string{"K", "Br"}, 18, "K [Ar], Br [Ar]"},
	}
	for _, tc := range cases {
		var atoms []planner.Atom
		for i, s := range tc.syms {
			atoms = append(atoms, atom(t, s, 0, 0, 3*float64(i)))
		}
		m, err := planner.NewMolecule(atoms, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		n, l := hf.FrozenCoreOrbitals(m)
		if n != tc.n || l != tc.label {
			t.Errorf("FrozenCoreOrbitals(%v) = %d, %q, want %d, %q", tc.syms, n, l, tc.n, tc.label)
		}
	}
}

func TestEnergy_MP2Errors(t *testing.T) {
	mol := waterMol(t)
	bs := testBasis(t, "STO-3G-v0")
	if _, err := hf.Energy(t.Context(), mol, hf.Options{Basis: bs, Method: hf.MP2, FrozenCore: hf.FrozenCoreCount(6)}); err == nil {
		t.Error("6 frozen orbitals of 5 occupied: no error")
	}
	if _, err := hf.Energy(t.Context(), mol, hf.Options{Basis: bs, Method: hf.MP2, MP2Reference: "rohf"}); err == nil {
		t.Error("reference rohf: no error")
	}
	if _, err := hf.Energy(t.Context(), mol, hf.Options{Basis: bs, Method: "ccsdt"}); err == nil {
		t.Error("method ccsdt: no error")
	}
	if m, err := hf.ParseMethod(" MP2 "); err != nil || m != hf.MP2 {
		t.Errorf("ParseMethod(MP2) = %q, %v", m, err)
	}
	// An unconverged SCF is no MP2 reference: the HF result comes back
	// with ErrNotConverged and no MP2 part.
	res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: bs, Method: hf.MP2, SCF: hf.SCFOptions{MaxIterations: 2}})
	if !errors.Is(err, hf.ErrNotConverged) || res == nil || res.MP2 != nil {
		t.Errorf("2 iterations: err %v, result %v", err, res)
	}
	if _, err := hf.RunMP2(t.Context(), nil, nil, hf.MP2Options{}); !errors.Is(err, hf.ErrMP2Reference) {
		t.Errorf("nil SCF: %v, want ErrMP2Reference", err)
	}
}
