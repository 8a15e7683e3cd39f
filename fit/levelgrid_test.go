package fit

import (
	"math"
	"testing"
)

// longTable is a potential tabulated the way published accurate curves
// are: 0.2 bohr steps on the inner wall, 0.1 bohr around the well, then
// 0.5, 1, 2 and 5 bohr steps out to 100 bohr (102 points).
func longTable() []float64 {
	var r []float64
	add := func(a, b, h float64) {
		for k := 0; ; k++ {
			x := a + float64(k)*h
			if x > b-h/2 {
				return
			}
			r = append(r, math.Round(x*1e6)/1e6)
		}
	}
	add(0.2, 1.0, 0.2)
	add(1.0, 7.0, 0.1)
	add(7.0, 10, 0.5)
	add(10, 20, 1)
	add(20, 40, 2)
	add(40, 100.0001, 5)
	return append(r, 100)
}

// Roughly H2- and HF-like Morse wells (parameters invented for the test,
// masses AME2020 as in curve_test.go).
var (
	h2Morse = morse{de: 0.1745, a: 1.0282, re: 1.4011, mu: reducedMass(massH, massH)}
	hfMorse = morse{de: 0.2250, a: 1.1742, re: 1.7329, mu: reducedMass(massH, 18.99840316207)}
)

func TestCurve_LongUnevenTable_MorseLevelsExactAndCutIndependent(t *testing.T) {
	for _, tc := range []struct {
		name string
		m    morse
	}{{"H2-like", h2Morse}, {"HF-like", hfMorse}} {
		t.Run(tc.name, func(t *testing.T) {
			m := tc.m
			full := longTable()
			if len(full) < 95 || len(full) > 115 {
				t.Fatalf("table has %d points, want about 110", len(full))
			}
			nWant := 0
			for m.level(nWant) < 0.9*m.de*HartreeInCm1 {
				nWant++
			}
			var ref []float64
			for _, cut := range []float64{10, 20, 50, 100} {
				var r []float64
				for _, x := range full {
					if x <= cut {
						r = append(r, x)
					}
				}
				res, err := Curve(t.Context(), r, sampleAt(m.v, r), Options{Isotopologues: []MassSet{{Masses: []float64{2 * m.mu, 2 * m.mu}}}})
				if err != nil {
					t.Fatal(err)
				}
				mn := res.Minima[0]
				if len(mn.Levels) < nWant {
					t.Fatalf("cut %g bohr: %d levels, want at least the %d below 90 %% of D_e; warnings %q", cut, len(mn.Levels), nWant, mn.Warnings)
				}
				for v := range nWant {
					// Morse, Phys. Rev. 34, 57 (1929): exact term values; 0.01
					// cm⁻¹ is the requirement.
					near(t, "cut "+itoa(int(cut))+" G("+itoa(v)+")", mn.Levels[v], m.level(v), 0.01, 0)
					if mn.LevelsUncertainty[v] > 1 {
						t.Errorf("cut %g: G(%d) uncertainty %.3g cm⁻¹ > 1 cm⁻¹ on exact data", cut, v, mn.LevelsUncertainty[v])
					}
				}
				if ref == nil {
					ref = mn.Levels[:nWant]
					continue
				}
				for v := range nWant {
					// The same potential cut at another distance: same levels
					// (independent of the table's span) to 0.01 cm⁻¹.
					near(t, "cut "+itoa(int(cut))+" vs cut 10 G("+itoa(v)+")", mn.Levels[v], ref[v], 0.01, 0)
				}
			}
		})
	}
}
