package hf_test

import (
	"fmt"
	"math"
	"os"
	"strconv"
	"testing"
	"time"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// alkane is our own all-anti CnH2n+2 (not an experimental structure): C–C
// 1.54 Å, C–H 1.09 Å, tetrahedral angles (common practice), the carbon
// zigzag in the xy plane; in bohr.
func alkane(tb testing.TB, n int) planner.Molecule {
	tb.Helper()
	c, h := mustElement(tb, "C"), mustElement(tb, "H")
	const half = 54.7356 * math.Pi / 180 // half the tetrahedral angle
	cc, ch := 1.54/planner.BohrInAngstrom, 1.09/planner.BohrInAngstrom
	dx, dy := cc*math.Sin(half), cc*math.Cos(half)
	var atoms []planner.Atom
	for i := range n {
		up := 1.0
		if i%2 == 0 {
			up = -1
		}
		pos := [3]float64{float64(i) * dx, 0, 0}
		if up > 0 {
			pos[1] = dy
		}
		atoms = append(atoms, planner.NewAtom(c, pos))
		// Two hydrogens out of the plane, away from the chain's bend.
		for _, z := range []float64{-1, 1} {
			atoms = append(atoms, planner.NewAtom(h, [3]float64{pos[0], pos[1] + up*ch*math.Cos(half), pos[2] + z*ch*math.Sin(half)}))
		}
		if i == 0 || i == n-1 {
			sx := -1.0
			if i == n-1 {
				sx = 1
			}
			if n == 1 {
				atoms = append(atoms, planner.NewAtom(h, [3]float64{-ch * math.Sin(half), pos[1] - up*ch*math.Cos(half), 0}))
				sx = 1
			}
			atoms = append(atoms, planner.NewAtom(h, [3]float64{pos[0] + sx*ch*math.Sin(half), pos[1] - up*ch*math.Cos(half), 0}))
		}
	}
	mol, err := planner.NewMolecule(atoms, 0, 1)
	if err != nil {
		tb.Fatal(err)
	}
	return mol
}

// BenchmarkAlkaneSeries runs RHF on CnH2n+2 in 6-31G* and cc-pVDZ on one
// goroutine under an integral budget of WELLSCAN_BENCH_BUDGET_MIB MiB
// (default 64, which puts the in-core limit near N = 90 functions so the
// series crosses it within minutes; the default budget of a run is half
// the available memory), and reports per molecule the basis functions N,
// the share of integrals kept in core (1 in core, 0 direct), SCF
// iterations, seconds per point and milliseconds per Fock build (SCF time
// over iterations). Issue 16: no step larger than 1.5× the in-core trend
// (a power law fitted to the in-core molecules) across the boundary.
//
//	go test -run '^$' -bench AlkaneSeries -benchtime=1x ./runner/hf/
//	WELLSCAN_BENCH_ALKANES=2-9 for another range of n
func BenchmarkAlkaneSeries(b *testing.B) {
	budget := int64(64)
	if v, err := strconv.Atoi(os.Getenv("WELLSCAN_BENCH_BUDGET_MIB")); err == nil && v != 0 {
		budget = int64(v)
	}
	lo, hi := 2, 8
	if v := os.Getenv("WELLSCAN_BENCH_ALKANES"); v != "" {
		if _, err := fmt.Sscanf(v, "%d-%d", &lo, &hi); err != nil {
			b.Fatalf("WELLSCAN_BENCH_ALKANES=%q: want FROM-TO", v)
		}
	}
	for _, bs := range []string{"6-31G*", "cc-pVDZ"} {
		set, err := basis.Lookup(bs)
		if err != nil {
			b.Fatal(err)
		}
		for n := lo; n <= hi; n++ {
			mol := alkane(b, n)
			b.Run(fmt.Sprintf("%s/C%d", bs, n), func(b *testing.B) {
				var res *hf.Result
				var wall time.Duration
				for b.Loop() {
					start := time.Now()
					res, err = hf.Energy(b.Context(), mol, hf.Options{Method: hf.RHF, Basis: set, Workers: 1, Memory: budget << 20})
					wall += time.Since(start)
					if err != nil {
						b.Fatal(err)
					}
				}
				share := 0.0
				switch res.IntegralMode {
				case "in-core":
					share = 1
				case "semi-direct":
					nb := int64(res.BasisFunctions)
					share = float64(res.IntegralBytes) / float64(nb*(nb+1)/2*(nb*(nb+1)/2+1)/2*8)
				}
				b.ReportMetric(float64(res.BasisFunctions), "N")
				b.ReportMetric(share, "in-core-share")
				b.ReportMetric(float64(res.Iterations), "iterations")
				b.ReportMetric(wall.Seconds()/float64(b.N), "s/point")
				b.ReportMetric(float64(res.SCFTime.Milliseconds())/float64(max(1, res.Iterations)), "ms/fock")
			})
		}
	}
}
