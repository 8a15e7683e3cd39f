package hf_test

import (
	"context"
	"testing"
	"time"

	"wellscan/planner"
	"wellscan/runner/hf"
)

// BenchmarkGradient times the RHF energy and the analytic gradient (the
// gradient proper, after the same energy) of benzene in 6-31G* (102
// Cartesian functions, our own D6h geometry) on 2 goroutines, and reports
// their ratio as grad/energy: the goal is ≤ 3 for the whole
// energy+gradient call, i.e. grad/energy ≤ 2. Each iteration also runs
// the energy alone and reports the process CPU time of the full
// energy+gradient call over that of the energy as cpu-ratio (the same
// goal, ≤ 3), which other processes on the machine disturb far less than
// wall time.
func BenchmarkGradient(b *testing.B) {
	mol, err := planner.NewMolecule(benzeneAtoms(b), 0, 1)
	if err != nil {
		b.Fatal(err)
	}
	opts := hf.Options{Basis: lookupBasisTB(b, "6-31G*"), Workers: 2}
	ctx := context.Background()
	b.ReportAllocs()
	var energy, grad, cpuE, cpuEG time.Duration
	n := 0
	for b.Loop() {
		c0 := processCPU()
		if _, err := hf.Energy(ctx, mol, opts); err != nil {
			b.Fatal(err)
		}
		c1 := processCPU()
		r, err := hf.Gradient(ctx, mol, opts)
		if err != nil {
			b.Fatal(err)
		}
		c2 := processCPU()
		cpuE += c1 - c0
		cpuEG += c2 - c1
		energy += r.IntegralTime + r.SCFTime
		grad += r.GradientTime
		n++
		b.ReportMetric(float64(r.BasisFunctions), "nbf")
	}
	b.ReportMetric(energy.Seconds()/float64(n), "energy-s")
	b.ReportMetric(grad.Seconds()/float64(n), "grad-s")
	b.ReportMetric(grad.Seconds()/energy.Seconds(), "grad/energy")
	if cpuE > 0 {
		b.ReportMetric(cpuEG.Seconds()/cpuE.Seconds(), "cpu-ratio")
	}
}
