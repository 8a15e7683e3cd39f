package integral

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
)

// Benchmark systems: water/cc-pVDZ (24 spherical functions, geometry of
// the worked example), benzene/6-31G* (102 Cartesian functions, our
// own standard-bond-length geometry, see benzeneAtoms) and butane/6-31G*
// (80 functions, many one-function hydrogen groups, see alkaneAtoms).
func benchSystems(b *testing.B) []struct {
	name   string
	shells []Shell
} {
	b.Helper()
	water := readGeom(b, "../testdata/worked-water/STO-3G/geom.dat")
	return []struct {
		name   string
		shells []Shell
	}{
		{"water-cc-pVDZ", basisShells(b, "cc-pvdz-HCO.json", water, true)},
		{"benzene-6-31Gs", basisShells(b, "6-31gs-HCO.json", benzeneAtoms(), false)},
		{"butane-6-31Gs", basisShells(b, "6-31gs-HCO.json", alkaneAtoms(4), false)},
	}
}

// alkaneAtoms is our own all-anti CnH2n+2 (not an experimental
// structure; the same construction as the hf package's alkane series):
// C–C 1.54 Å, C–H 1.09 Å, tetrahedral angles (common practice), the
// carbon zigzag in the xy plane; in bohr.
func alkaneAtoms(n int) []atom {
	const bohrPerAngstrom = 1 / 0.529177210903
	const half = 54.7356 * math.Pi / 180 // half the tetrahedral angle
	cc, ch := 1.54*bohrPerAngstrom, 1.09*bohrPerAngstrom
	dx, dy := cc*math.Sin(half), cc*math.Cos(half)
	var out []atom
	for i := range n {
		up := 1.0
		if i%2 == 0 {
			up = -1
		}
		pos := [3]float64{float64(i) * dx, 0, 0}
		if up > 0 {
			pos[1] = dy
		}
		out = append(out, atom{6, pos})
		for _, z := range []float64{-1, 1} {
			out = append(out, atom{1, [3]float64{pos[0], pos[1] + up*ch*math.Cos(half), pos[2] + z*ch*math.Sin(half)}})
		}
		if i == 0 || i == n-1 {
			sx := -1.0
			if i == n-1 {
				sx = 1
			}
			out = append(out, atom{1, [3]float64{pos[0] + sx*ch*math.Sin(half), pos[1] - up*ch*math.Cos(half), 0}})
		}
	}
	return out
}

func BenchmarkComputeERI(b *testing.B) {
	for _, sys := range benchSystems(b) {
		for _, workers := range []int{1, 2} {
			b.Run(fmt.Sprintf("%s/workers=%d", sys.name, workers), func(b *testing.B) {
				b.ReportAllocs()
				cpu := cpuTime()
				for b.Loop() {
					if _, err := ComputeERI(context.Background(), sys.shells, NormPerComponent, workers); err != nil {
						b.Fatal(err)
					}
				}
				reportCPU(b, cpu)
			})
		}
	}
}

// cpuTime is the user + system CPU time of the process so far. On a
// shared machine CPU time per operation is steadier than wall time.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// reportCPU reports the CPU milliseconds per operation since start.
func reportCPU(b *testing.B, start time.Duration) {
	b.ReportMetric(float64(cpuTime()-start)/1e6/float64(b.N), "cpu-ms/op")
}

func benchDensity(n int) []*mat.SymDense {
	rng := rand.New(rand.NewPCG(1, 1))
	return []*mat.SymDense{randomDensity(rng, n)}
}

func BenchmarkJK(b *testing.B) {
	for _, sys := range benchSystems(b) {
		n := NumFunctions(sys.shells)
		dens := benchDensity(n)
		j := []*mat.SymDense{mat.NewSymDense(n, nil)}
		k := []*mat.SymDense{mat.NewSymDense(n, nil)}
		for _, workers := range []int{1, 2} {
			eri, err := ComputeERI(context.Background(), sys.shells, NormPerComponent, workers)
			if err != nil {
				b.Fatal(err)
			}
			b.Run(fmt.Sprintf("%s/incore/workers=%d", sys.name, workers), func(b *testing.B) {
				b.ReportAllocs()
				cpu := cpuTime()
				for b.Loop() {
					if err := eri.JK(context.Background(), dens, j, k); err != nil {
						b.Fatal(err)
					}
				}
				reportCPU(b, cpu)
			})
			packed, err := ComputePacked(context.Background(), sys.shells, NormPerComponent, workers)
			if err != nil {
				b.Fatal(err)
			}
			b.Run(fmt.Sprintf("%s/packed/workers=%d", sys.name, workers), func(b *testing.B) {
				b.ReportAllocs()
				cpu := cpuTime()
				for b.Loop() {
					if err := packed.JK(context.Background(), dens, j, k); err != nil {
						b.Fatal(err)
					}
				}
				reportCPU(b, cpu)
			})
			dir, err := NewDirect(sys.shells, NormPerComponent, workers, 1e-12)
			if err != nil {
				b.Fatal(err)
			}
			b.Run(fmt.Sprintf("%s/direct/workers=%d", sys.name, workers), func(b *testing.B) {
				b.ReportAllocs()
				cpu := cpuTime()
				for b.Loop() {
					if err := dir.JK(context.Background(), dens, j, k); err != nil {
						b.Fatal(err)
					}
				}
				reportCPU(b, cpu)
			})
		}
	}
}

func BenchmarkBoys(b *testing.B) {
	f := make([]float64, boysMaxM+1)
	for _, m := range []int{0, 2, 8} {
		b.Run(fmt.Sprintf("m=%d", m), func(b *testing.B) {
			b.ReportAllocs()
			t := 0.0
			for b.Loop() {
				boys(t, m, f)
				t += 0.37
				if t > 60 {
					t = 0
				}
			}
		})
	}
}

// BenchmarkTwoElectronGradient times the two-electron gradient of
// benzene in 6-31G* (102 functions, a random dense density) next to the
// in-core integrals of the same basis, one goroutine each, and reports
// their ratio as grad/eri.
func BenchmarkTwoElectronGradient(b *testing.B) {
	atoms := benzeneAtoms()
	shells := basisShells(b, "6-31gs-HCO.json", atoms, false)
	n := NumFunctions(shells)
	d := randomSym(rand.New(rand.NewPCG(1, 2)), n, 0.2)
	ctx := context.Background()
	var eri, grad time.Duration
	b.ReportAllocs()
	for b.Loop() {
		s := time.Now()
		if _, err := ComputeERI(ctx, shells, NormPerComponent, 1); err != nil {
			b.Fatal(err)
		}
		eri += time.Since(s)
		s = time.Now()
		if _, err := TwoElectronGradient(ctx, shells, NormPerComponent, 1, d, d, len(atoms), 0); err != nil {
			b.Fatal(err)
		}
		grad += time.Since(s)
	}
	b.ReportMetric(grad.Seconds()/eri.Seconds(), "grad/eri")
}
