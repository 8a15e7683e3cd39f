package hf_test

import (
	"math"

	"context"
	"testing"
	"wellscan/fit"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// BenchmarkScan_ContinuationGuess runs a 30-point CO stretch (1.00–1.58 Å,
// RHF/6-31G*) point after point: from the core guess every time
// (cold-core), from the default cold guess (cold: atoms), from the
// previous point's orbitals (continuation), or from the density
// extrapolated linearly from the two previous points (extrapolated) or
// quadratically from three (extrapolated-quadratic; the first points use
// what history there is), and reports SCF iterations per point
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
	for _, mode := range []string{"cold-core", "cold", "continuation", "extrapolated", "extrapolated-quadratic"} {
		b.Run(mode, func(b *testing.B) {
			b.ReportAllocs()
			var iters, points int
			for b.Loop() {
				var prev, prev2, prev3 *hf.Orbitals
				for i := range 30 {
					opts := hf.Options{Basis: set, Method: hf.RHF}
					switch mode {
					case "cold-core":
						opts.ColdGuesses = []hf.GuessKind{hf.GuessCore}
					case "continuation":
						opts.Guess = prev
					case "extrapolated":
						opts.Guess, opts.GuessPrevious = prev, []*hf.Orbitals{prev2}
					case "extrapolated-quadratic":
						opts.Guess, opts.GuessPrevious = prev, []*hf.Orbitals{prev2, prev3}
					}
					res, err := hf.Energy(context.Background(), geom(1.00+0.02*float64(i)), opts)
					if err != nil {
						b.Fatal(err)
					}
					prev, prev2, prev3 = res.Orbitals, prev, prev2
					iters += res.Iterations
					points++
				}
			}
			b.ReportMetric(float64(iters)/float64(points), "iterations/point")
		})
	}
}

// BenchmarkScan_UniformPointsCO finds how many points a uniform grid over
// 1.00–1.30 Å (the demo's range) needs before the local fit of `wellscan
// fit` gives r_e within 1e-4 Å and ω_e within 0.5 cm⁻¹ of a dense
// reference (121 points over 1.05–1.20 Å), for n and the next two counts.
// With -short the range is 0.95–1.80 Å instead.
// Compare with the points the adaptive demo scan needs (reported by
// `wellscan demo`: 12 at the time of writing).
func BenchmarkScan_UniformPointsCO(b *testing.B) {
	set, err := basis.Lookup("6-31G*")
	if err != nil {
		b.Fatal(err)
	}
	c, _ := planner.ElementBySymbol("C")
	o, _ := planner.ElementBySymbol("O")
	cache := map[float64]float64{}
	var prev *hf.Orbitals
	energy := func(r float64) float64 {
		r = math.Round(r*1e9) / 1e9
		if e, ok := cache[r]; ok {
			return e
		}
		m, _ := planner.NewMolecule([]planner.Atom{planner.NewAtom(c, [3]float64{}),
			planner.NewAtom(o, [3]float64{0, 0, r * planner.AngstromInBohr})}, 0, 1)
		res, err := hf.Energy(context.Background(), m, hf.Options{Basis: set, Method: hf.RHF, Guess: prev})
		if err != nil {
			b.Fatal(err)
		}
		prev = res.Orbitals
		cache[r] = res.Energy
		return res.Energy
	}
	analyse := func(lo, hi float64, n int) (re, omega float64, ok bool) {
		r, e := make([]float64, n), make([]float64, n)
		for i := range n {
			x := lo + (hi-lo)*float64(i)/float64(n-1)
			r[i], e[i] = x*planner.AngstromInBohr, energy(x)
		}
		res, err := fit.Curve(context.Background(), r, e, fit.Options{NoLevels: true, NoGlobal: true,
			Isotopologues: []fit.MassSet{{Name: "12C16O", Masses: []float64{12, 15.99491461957}}}})
		if err != nil || len(res.Minima) != 1 {
			return 0, 0, false
		}
		return res.Minima[0].REAngstrom, res.Minima[0].OmegaE, true
	}
	reRef, omRef, _ := analyse(1.05, 1.20, 121)
	lo, hi := 1.00, 1.30
	if testing.Short() {
		lo, hi = 0.95, 1.80 // `-short` asks for the wider range, toward dissociation
	}
	var need int
	for b.Loop() {
		good := func(n int) bool {
			re, om, ok := analyse(lo, hi, n)
			return ok && math.Abs(re-reRef) <= 1e-4 && math.Abs(om-omRef) <= 0.5
		}
		need = -1
		for n := 5; n <= 80; n++ {
			if good(n) && good(n+1) && good(n+2) {
				need = n
				break
			}
		}
	}
	b.ReportMetric(float64(need), "uniform-points")
	b.ReportMetric(reRef, "r_e-ref-Å")
	b.ReportMetric(omRef, "ω_e-ref-cm⁻¹")
}
