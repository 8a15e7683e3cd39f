package hf_test

import (
	"testing"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// BenchmarkCCSDT times one whole CCSD(T) point (integrals, SCF,
// transformation, CCSD, (T)), frozen core, on all CPUs, and reports the
// CCSD iterations, the seconds of each step and the estimated peak memory
// of the coupled-cluster arrays. Run it with -benchtime=1x; the CO
// cc-pVQZ case takes minutes:
//
//	go test -run XXX -bench CCSDT -benchtime=1x ./runner/hf/
//
// CO is at 1.128 Å (near its experimental r_e, Huber & Herzberg 1979).
func BenchmarkCCSDT(b *testing.B) {
	cases := []struct {
		name  string
		atoms []planner.Atom
		basis string
	}{
		{"water-cc-pVTZ", benchWater(b), "cc-pVTZ"},
		{"CO-cc-pVTZ", []planner.Atom{
			planner.NewAtom(mustElement(b, "C"), [3]float64{0, 0, 0}),
			planner.NewAtom(mustElement(b, "O"), [3]float64{0, 0, 1.128 / planner.BohrInAngstrom})}, "cc-pVTZ"},
		{"CO-cc-pVQZ", []planner.Atom{
			planner.NewAtom(mustElement(b, "C"), [3]float64{0, 0, 0}),
			planner.NewAtom(mustElement(b, "O"), [3]float64{0, 0, 1.128 / planner.BohrInAngstrom})}, "cc-pVQZ"},
	}
	for _, tc := range cases {
		b.Run(tc.name, func(b *testing.B) {
			set, err := basis.Lookup(tc.basis)
			if err != nil {
				b.Fatal(err)
			}
			mol, err := planner.NewMolecule(tc.atoms, 0, 1)
			if err != nil {
				b.Fatal(err)
			}
			var res *hf.Result
			for b.Loop() {
				res, err = hf.Energy(b.Context(), mol, hf.Options{Method: hf.CCSDT, Basis: set})
				if err != nil {
					b.Fatal(err)
				}
			}
			c := res.CC
			b.ReportMetric(float64(c.Iterations), "ccsd-iterations")
			b.ReportMetric(res.IntegralTime.Seconds()+res.SCFTime.Seconds(), "scf-s")
			b.ReportMetric(c.TransformTime.Seconds(), "transform-s")
			b.ReportMetric(c.CCSDTime.Seconds(), "ccsd-s")
			b.ReportMetric(c.TriplesTime.Seconds(), "triples-s")
			b.ReportMetric(float64(c.MemoryBytes)/(1<<20), "cc-MB")
			b.Logf("%s: %d functions, o=%d v=%d, E(CCSD(T)) = %.10f Eh (CCSD corr %.10f, (T) %.10f)", tc.name, res.BasisFunctions, c.Occupied, c.Virtual, res.Energy, c.Correlation, c.Triples)
		})
	}
}
