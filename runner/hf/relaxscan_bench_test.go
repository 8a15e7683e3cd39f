package hf_test

import (
	"math"
	"strconv"
	"testing"
	"time"

	"wellscan/runner"
	"wellscan/runner/hf"
)

// ethaneStaggered is our own staggered ethane start (Å): C–C 1.53,
// C–H 1.09, tetrahedral angles.
func ethaneStaggered(tb testing.TB) [][3]float64 {
	s := 1.09 / math.Sqrt(3)
	c := 0.765
	return [][3]float64{
		{0, 0, c}, {0, 0, -c},
		{s * math.Sqrt2, 0, c + s}, {-s / math.Sqrt2, s * math.Sqrt(1.5), c + s}, {-s / math.Sqrt2, -s * math.Sqrt(1.5), c + s},
		{-s * math.Sqrt2, 0, -c - s}, {s / math.Sqrt2, s * math.Sqrt(1.5), -c - s}, {s / math.Sqrt2, -s * math.Sqrt(1.5), -c - s},
	}
}

// BenchmarkRelaxedScan_NeighbourStart runs a relaxed ethane torsion scan
// at RHF/6-31G* (0–180° by 15°, one worker so that every point after the
// first has a finished neighbour) with and without the neighbour's relaxed
// geometry and Hessian as the start, and reports the mean gradients per
// point after the first (goal: ≥ 30 % fewer with the neighbour).
func BenchmarkRelaxedScan_NeighbourStart(b *testing.B) {
	mol := angstromMolTB(b, []string{"C", "C", "H", "H", "H", "H", "H", "H"}, ethaneStaggered(b))
	geom, _ := optimisedGeometry(b, mol)
	text := torsionSpec(geom, "[3, 1, 2, 6]", "[0, 15, 30, 45, 60, 75, 90, 105, 120, 135, 150, 165, 180]", true)
	for _, tc := range []struct {
		name string
		wrap func(*hf.Backend) runner.Backend
	}{
		{"neighbour", func(bk *hf.Backend) runner.Backend { return bk }},
		{"cold", func(bk *hf.Backend) runner.Backend { return bk.WithoutNeighbourGeometry() }},
	} {
		b.Run(tc.name, func(b *testing.B) {
			for b.Loop() {
				recs := runScanText(b, text, 1, tc.wrap)
				var grads, n float64
				for _, r := range recs {
					if r.Flags.FromNeighbour || tc.name == "cold" && r.Key != "phi=0.000" {
						grads += r.Extra["relax_gradients"]
						n++
					}
				}
				b.ReportMetric(grads/max(n, 1), "gradients/point")
			}
		})
	}
}

// BenchmarkRelaxedScan_Ethane24 is the benchmark: a relaxed
// 24-point ethane torsion scan (0–345° by 15°) at RHF/6-31G* on 2
// workers; it reports the wall time per scan and the gradients in all.
func BenchmarkRelaxedScan_Ethane24(b *testing.B) {
	mol := angstromMolTB(b, []string{"C", "C", "H", "H", "H", "H", "H", "H"}, ethaneStaggered(b))
	geom, _ := optimisedGeometry(b, mol)
	vals := "["
	for k := range 24 {
		if k > 0 {
			vals += ", "
		}
		vals += strconv.Itoa(15 * k)
	}
	vals += "]"
	text := torsionSpec(geom, "[3, 1, 2, 6]", vals, true)
	for b.Loop() {
		start := time.Now()
		recs := runScanText(b, text, 2, func(bk *hf.Backend) runner.Backend { return bk })
		var grads float64
		for _, r := range recs {
			grads += r.Extra["relax_gradients"]
		}
		b.ReportMetric(time.Since(start).Seconds(), "wall-s")
		b.ReportMetric(grads, "gradients")
		b.ReportMetric(float64(len(recs)), "points")
	}
}
