package hf_test

import (
	"context"
	"fmt"
	"math"
	"os"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// timedJK wraps an integral-direct builder and records the wall time of
// every J/K build and the largest |D| element it was given (with
// difference builds, the largest change of the density since the last
// build).
type timedJK struct {
	d     *integral.Direct
	times []time.Duration
	dmax  []float64
}

func (t *timedJK) IncrementalJK() bool { return t.d.IncrementalJK() }

func (t *timedJK) JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	var m float64
	for _, d := range dens {
		n := d.SymmetricDim()
		for a := range n {
			for b := 0; b <= a; b++ {
				m = max(m, math.Abs(d.At(a, b)))
			}
		}
	}
	start := time.Now()
	err := t.d.JK(ctx, dens, j, k)
	t.times = append(t.times, time.Since(start))
	t.dmax = append(t.dmax, m)
	return err
}

// BenchmarkDirectFockIterations runs integral-direct RHF on one
// goroutine for an alkane (WELLSCAN_BENCH_DIRECT_N, default 4) in 6-31G*
// and cc-pVDZ and reports the cost of the J/K build at each SCF
// iteration: how the difference-density builds (Fock matrices updated
// from the change of the density, whose screening skips more quartets
// as the SCF converges) compare with a full build. Metrics: first (full)
// build, the mean over the SCF, and the last build, in ms; the per-
// iteration table (ms and largest |ΔD|) goes to the benchmark log (-v).
//
//	go test -run '^$' -bench DirectFockIterations -benchtime 1x -v ./runner/hf/
func BenchmarkDirectFockIterations(b *testing.B) {
	n := 4
	if v := os.Getenv("WELLSCAN_BENCH_DIRECT_N"); v != "" {
		if _, err := fmt.Sscanf(v, "%d", &n); err != nil {
			b.Fatalf("WELLSCAN_BENCH_DIRECT_N=%q: want a number of carbons", v)
		}
	}
	mol := alkane(b, n)
	for _, bs := range []string{"6-31G*", "cc-pVDZ"} {
		set, err := basis.Lookup(bs)
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("%s/C%d", bs, n), func(b *testing.B) {
			shells, err := set.Shells(mol, hf.Options{}.Convention)
			if err != nil {
				b.Fatal(err)
			}
			norm := hf.Options{}.Norm
			s := integral.Overlap(shells, norm)
			h := mat.NewSymDense(s.SymmetricDim(), nil)
			var charges []integral.PointCharge
			for _, a := range mol.Atoms {
				charges = append(charges, integral.PointCharge{Z: float64(a.Element.Z), Pos: a.Pos})
			}
			h.AddSym(integral.Kinetic(shells, norm), integral.Nuclear(shells, norm, charges))
			ne := 0
			for _, a := range mol.Atoms {
				ne += a.Element.Z
			}
			var jk *timedJK
			for b.Loop() {
				d, err := integral.NewDirect(shells, norm, 1, 1e-12)
				if err != nil {
					b.Fatal(err)
				}
				jk = &timedJK{d: d}
				res, err := hf.RunSCF(b.Context(), hf.SCFInput{S: s, Hcore: h, JK: jk, ENuc: mol.NuclearRepulsion(),
					NAlpha: ne / 2, NBeta: ne / 2, Restricted: true})
				if err != nil {
					b.Fatal(err)
				}
				b.Logf("%s C%d: %d SCF iterations, E = %.10f Eh", bs, n, res.Iterations, res.Energy)
			}
			var sum time.Duration
			for i, t := range jk.times {
				sum += t
				b.Logf("build %2d: %8.1f ms  max|D or ΔD| %.2e", i+1, float64(t.Microseconds())/1e3, jk.dmax[i])
			}
			nb := len(jk.times)
			b.ReportMetric(float64(jk.times[0].Microseconds())/1e3, "first-ms")
			b.ReportMetric(float64(sum.Microseconds())/1e3/float64(nb), "mean-ms")
			b.ReportMetric(float64(jk.times[nb-1].Microseconds())/1e3, "last-ms")
			b.ReportMetric(float64(nb), "builds")
		})
	}
}
