package hf_test

import (
	"context"
	"testing"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// BenchmarkScan_ContinuationGuess runs a 30-point CO stretch (1.00–1.58 Å,
// RHF/6-31G*) point after point, either from the core guess every time or
// from the previous point's orbitals, and reports SCF iterations per point
// (the goal: continuation ≤ 0.7 × cold).
func BenchmarkScan_ContinuationGuess(b *testing.B) {
	set, err := basis.Lookup("6-31G*")
	if err != nil {
		b.Fatal(err)
	}
	c, _ := planner.ElementBySymbol("C")
	o, _ := planner.ElementBySymbol("O")
	geom := func(r float64) planner.Molecule {
		m, err := planner.NewMolecule([]planner.Atom{planner.NewAtom(c, [3]float64{}),
			planner.NewAtom(o, [3]float64{0, 0, r * planner.AngstromInBohr})}, 0, 1)
		if err != nil {
			b.Fatal(err)
		}
		return m
	}
	for _, mode := range []string{"cold", "continuation"} {
		b.Run(mode, func(b *testing.B) {
			b.ReportAllocs()
			var iters, points int
			for b.Loop() {
				var prev *hf.Orbitals
				for i := range 30 {
					opts := hf.Options{Basis: set, Method: hf.RHF}
					if mode == "continuation" {
						opts.Guess = prev
					}
					res, err := hf.Energy(context.Background(), geom(1.00+0.02*float64(i)), opts)
					if err != nil {
						b.Fatal(err)
					}
					prev = res.Orbitals
					iters += res.Iterations
					points++
				}
			}
			b.ReportMetric(float64(iters)/float64(points), "iterations/point")
		})
	}
}
