package planner

import (
	"math"
	"strings"
	"testing"
)

// morseOmega is the analytic harmonic wavenumber of the Morse model with
// the ¹²C¹⁶O reduced mass: ω_e = a √(2 D_e / μ) (Morse 1929).
func morseOmega() float64 {
	mc, mo := elements[5].Mass, elements[7].Mass
	mu := mc * mo / (mc + mo) * AmuInElectronMass
	return morseA * math.Sqrt(2*morseDe/mu) * HartreeInCm1
}

// uniformPointsNeeded is the smallest count n of a uniform grid over
// [lo, hi] Å for which the same local fit that refinement uses gives r_e
// within 1e-4 Å and ω within 0.5 cm⁻¹ — for n and the next two counts,
// so a lucky grid offset does not decide.
func uniformPointsNeeded(s *Spec, lo, hi float64) int {
	ok := func(n int) bool {
		xs, es := make([]float64, n), make([]float64, n)
		for i := range n {
			xs[i] = (lo + (hi-lo)*float64(i)/float64(n-1)) * AngstromInBohr
			es[i] = morse(xs[i])
		}
		ex := extrema1D(xs, es, false)
		if len(ex) != 1 || ex[0].edge != 0 {
			return false
		}
		mu, err := s.EffectiveMass(Point{Key: "fit", Values: []float64{ex[0].x}}, 0)
		if err != nil {
			return false
		}
		return math.Abs(ex[0].x-morseRe)*BohrInAngstrom <= 1e-4 && math.Abs(Harmonic(ex[0].k, mu)-morseOmega()) <= 0.5
	}
	for n := 5; n < 5000; n++ {
		if ok(n) && ok(n+1) && ok(n+2) {
			return n
		}
	}
	return -1
}

// BenchmarkRefine_MorseAdaptiveVsUniform reports the points the adaptive
// scan needs to locate r_e to 1e-4 Å and ω_e to 0.5 cm⁻¹ on the Morse
// model, against a uniform grid over the same range (goal: ≤ 1/3).
func BenchmarkRefine_MorseAdaptiveVsUniform(b *testing.B) {
	grids := []struct {
		name, grid string
		lo, hi     float64 // Å, the range the uniform grid covers
	}{
		{"near-minimum/step=0.05", "from = 0.95\nto = 1.45\nstep = 0.05", 0.95, 1.45},
		{"near-minimum/step=0.1", "from = 0.95\nto = 1.45\nstep = 0.1", 0.95, 1.45},
		{"to-dissociation/step=0.1,growth=1.2", "from = 0.90\nto = 2.50\nstep = 0.1\ngrowth = 1.2", 0.90, 2.50},
	}
	for _, g := range grids {
		b.Run(g.name, func(b *testing.B) {
			text := strings.Replace(readExample(b, "morse-model"), "from = 0.95\nto = 1.45\nstep = 0.05", g.grid, 1)
			s, err := Decode([]byte(text), "bench.toml")
			if err != nil {
				b.Fatal(err)
			}
			t := &testing.T{}
			var adaptive int
			b.ReportAllocs()
			for b.Loop() {
				plan, _, done := simulate(t, s, morse)
				e := plan.Extrema[0]
				if math.Abs(e.Values[0]-morseRe)*BohrInAngstrom > 1e-4 || math.Abs(e.Frequency-morseOmega()) > 0.5 {
					b.Fatalf("adaptive scan missed: r_e %.6g bohr, ω %.4g", e.Values[0], e.Frequency)
				}
				adaptive = len(done)
			}
			uniform := uniformPointsNeeded(s, g.lo, g.hi)
			b.ReportMetric(float64(adaptive), "adaptive-points")
			b.ReportMetric(float64(uniform), "uniform-points")
			b.ReportMetric(float64(adaptive)/float64(uniform), "ratio")
		})
	}
}
