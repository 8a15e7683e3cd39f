package hf_test

import (
	"fmt"
	"math"
	"testing"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// benchWater is the worked example's water geometry (testdata/bases/h2o-geom.dat, bohr).
func benchWater(tb testing.TB) []planner.Atom {
	o, h := mustElement(tb, "O"), mustElement(tb, "H")
	return []planner.Atom{
		planner.NewAtom(o, [3]float64{0, -0.143225816552, 0}),
		planner.NewAtom(h, [3]float64{1.638036840407, 1.136548822547, 0}),
		planner.NewAtom(h, [3]float64{-1.638036840407, 1.136548822547, 0}),
	}
}

// benzeneAtoms is our own regular-hexagon benzene (not an experimental
// structure): C–C 1.39 Å, C–H 1.09 Å, planar D6h, in bohr.
func benzeneAtoms(tb testing.TB) []planner.Atom {
	tb.Helper()
	c, h := mustElement(tb, "C"), mustElement(tb, "H")
	var atoms []planner.Atom
	for k := range 6 {
		phi := float64(k) * math.Pi / 3
		rc, rh := 1.39/planner.BohrInAngstrom, (1.39+1.09)/planner.BohrInAngstrom
		atoms = append(atoms,
			planner.NewAtom(c, [3]float64{rc * math.Cos(phi), rc * math.Sin(phi), 0}),
			planner.NewAtom(h, [3]float64{rh * math.Cos(phi), rh * math.Sin(phi), 0}))
	}
	return atoms
}

func mustElement(tb testing.TB, sym string) planner.Element {
	tb.Helper()
	e, err := planner.ElementBySymbol(sym)
	if err != nil {
		tb.Fatal(err)
	}
	return e
}

// BenchmarkMP2 times RunMP2 (transformation + pair sums; the SCF and the
// in-core AO integrals are prepared once) with 1 and 2 goroutines, and
// reports the transformation part as transform-ms. All electrons are
// correlated (the larger case).
func BenchmarkMP2(b *testing.B) {
	water := benchWater(b)
	cases := []struct {
		name  string
		atoms []planner.Atom
		basis string
	}{
		{"water-cc-pVTZ", water, "cc-pVTZ"},
		{"benzene-6-31Gs", benzeneAtoms(b), "6-31G*"},
	}
	for _, tc := range cases {
		mol, err := planner.NewMolecule(tc.atoms, 0, 1)
		if err != nil {
			b.Fatal(err)
		}
		bs, err := basis.Lookup(tc.basis)
		if err != nil {
			b.Fatal(err)
		}
		ref, err := hf.Energy(b.Context(), mol, hf.Options{Basis: bs})
		if err != nil {
			b.Fatal(err)
		}
		shells, err := bs.Shells(mol, 0)
		if err != nil {
			b.Fatal(err)
		}
		eri, err := integral.ComputeERI(b.Context(), shells, integral.NormPerComponent, 0)
		if err != nil {
			b.Fatal(err)
		}
		for _, w := range []int{1, 2} {
			b.Run(fmt.Sprintf("%s/n=%d/workers=%d", tc.name, ref.BasisFunctions, w), func(b *testing.B) {
				b.ReportAllocs()
				var tt float64
				for b.Loop() {
					m, err := hf.RunMP2(b.Context(), ref.SCFResult, eri, hf.MP2Options{Workers: w})
					if err != nil {
						b.Fatal(err)
					}
					tt += m.TransformTime.Seconds()
				}
				b.ReportMetric(1e3*tt/float64(b.N), "transform-ms")
			})
		}
	}
}
