package hf

import (
	"math"
	"testing"

	"wellscan/planner"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// TestAtomicDensity_AllElements runs the spherically averaged atomic
// calculation for every element H–Kr that the basis covers, with the
// set's own d convention and with Cartesian d (whose s-type combination
// x²+y²+z² must be classed as s), and checks that it converges and that
// tr(P S) = Z (the neutral atom's electron count, by construction) and
// tr(P^α S) − tr(P^β S) = the Hund's-rule unpaired count.
func TestAtomicDensity_AllElements(t *testing.T) {
	bases := []string{"3-21G"}
	if !testing.Short() {
		bases = append(bases, "STO-3G", "6-31G*")
	}
	for _, bs := range bases {
		set, err := basis.Lookup(bs)
		if err != nil {
			t.Fatal(err)
		}
		for z := 1; z <= 36; z++ {
			el, err := planner.ElementByZ(z)
			if err != nil {
				t.Fatal(err)
			}
			mol := planner.Molecule{Atoms: []planner.Atom{planner.NewAtom(el, [3]float64{})}, Multiplicity: 1}
			if _, err := set.NumFunctions(mol, basis.ConventionAsSet); err != nil {
				continue // the set lacks the element
			}
			for _, conv := range []basis.Convention{basis.ConventionAsSet, basis.ConventionCartesian} {
				b, err := atomicDensity(t.Context(), set, conv, integral.NormPerComponent, el)
				if err != nil {
					t.Errorf("%s %s %v: %v", bs, el.Symbol, conv, err)
					continue
				}
				sh, _ := set.Shells(mol, conv)
				s := integral.Overlap(sh, integral.NormPerComponent)
				_, u, _ := groundConfig(z)
				// 1e-10: rounding of sums of order-1 terms.
				if tr := symTrace(b.total, s); math.Abs(tr-float64(z)) > 1e-10 {
					t.Errorf("%s %s %v: tr(PS) = %.12f, want %d", bs, el.Symbol, conv, tr, z)
				}
				if d := symTrace(b.alpha, s) - symTrace(b.beta, s); math.Abs(d-float64(u)) > 1e-10 {
					t.Errorf("%s %s %v: tr(PαS) − tr(PβS) = %.12f, want %d", bs, el.Symbol, conv, d, u)
				}
				if !b.converged {
					t.Errorf("%s %s %v: atomic SCF not converged in 100 iterations (E %.8f)", bs, el.Symbol, conv, b.energy)
				}
			}
		}
	}
}

// TestGroundConfig checks a few ground configurations (Madelung order;
// common practice) and Hund's-rule unpaired counts: N 1s²2s²2p³ (3), O (2),
// Ne (0), Fe [Ar]4s²3d⁶ (4), Kr (0).
func TestGroundConfig(t *testing.T) {
	cases := []struct {
		z, unpaired int
		s, p, d     []float64
	}{
		{7, 3, []float64{2, 2}, []float64{3}, nil},
		{8, 2, []float64{2, 2}, []float64{4}, nil},
		{10, 0, []float64{2, 2}, []float64{6}, nil},
		{26, 4, []float64{2, 2, 2, 2}, []float64{6, 6}, []float64{6}},
		{36, 0, []float64{2, 2, 2, 2}, []float64{6, 6, 6}, []float64{10}},
	}
	eq := func(a, b []float64) bool {
		if len(a) != len(b) {
			return false
		}
		for i := range a {
			if a[i] != b[i] {
				return false
			}
		}
		return true
	}
	for _, tc := range cases {
		occ, u, err := groundConfig(tc.z)
		if err != nil || u != tc.unpaired || !eq(occ[0], tc.s) || !eq(occ[1], tc.p) || !eq(occ[2], tc.d) {
			t.Errorf("Z = %d: occ %v, unpaired %d, err %v", tc.z, occ, u, err)
		}
	}
	if _, _, err := groundConfig(0); err == nil {
		t.Error("Z = 0: no error")
	}
}
