package hf_test

import (
	"fmt"
	"os"
	"strconv"
	"testing"
	"time"

	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

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
