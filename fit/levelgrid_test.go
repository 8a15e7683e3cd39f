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

// unevenGrid returns points from a to b: step fine on [c0, c1), coarse
// outside it, then steps growing by 20 % each beyond far.
func unevenGrid(a, c0, c1, far, b, fine, coarse float64) []float64 {
	var r []float64
	x, grow := a, coarse
	for x < b-fine/2 {
		r = append(r, x)
		switch {
		case x >= c0-1e-9 && x < c1-1e-9:
			x += fine
		case x >= far:
			grow *= 1.2
			x += grow
		default:
			x += coarse
		}
	}
	return append(r, b)
}

func TestCurve_Kratzer_ExactLevels(t *testing.T) {
	// Kratzer's molecular potential V(r) = −2D(a/r − a²/(2r²)) (A. Kratzer,
	// Z. Phys. 3, 289 (1920); worked in S. Flügge, Practical Quantum
	// Mechanics, Springer 1974, among problems 67–70 — from memory). With
	// s(s+1) = 2μDa²/ħ² the radial equation is the Coulomb problem with
	// charge 2Da and "angular momentum" s, so (any quantum-mechanics text's
	// hydrogen spectrum) E_n = −2μD²a²/(ħ²(n + s + 1)²), minimum −D at r = a.
	// D, a and μ are invented for the test.
	const d, a, mu = 0.1, 2.0, 1.0
	m := mu * AmuInElectronMass
	s := -0.5 + math.Sqrt(0.25+2*m*d*a*a)
	exact := func(n int) float64 { // cm⁻¹ above the minimum
		k := float64(n) + s + 1
		return (-2*m*d*d*a*a/(k*k) + d) * HartreeInCm1
	}
	v := func(r float64) float64 { return -2 * d * (a/r - a*a/(2*r*r)) }
	r := unevenGrid(0.9, 0.9, 6, 12, 120, 0.04, 0.25)
	res, err := Curve(t.Context(), r, sampleAt(v, r), Options{Isotopologues: []MassSet{{Name: "kratzer", Masses: []float64{2 * mu, 2 * mu}}}})
	if err != nil {
		t.Fatal(err)
	}
	mn := res.Minima[0]
	n := 0
	for exact(n) < 0.5*d*HartreeInCm1 {
		n++
	}
	if len(mn.Levels) < n {
		t.Fatalf("%d levels, want at least the %d below half the depth; warnings %q", len(mn.Levels), n, mn.Warnings)
	}
	for k := range n {
		// 0.01 cm⁻¹: the accuracy for levels on a well-sampled
		// analytic curve; the stated uncertainty must cover the error.
		near(t, "Kratzer G("+itoa(k)+")", mn.Levels[k], exact(k), 0.01, 0)
		if err := math.Abs(mn.Levels[k] - exact(k)); err > mn.LevelsUncertainty[k] && err > 1e-3 {
			t.Errorf("Kratzer G(%d): error %.3g cm⁻¹ > stated uncertainty %.3g", k, err, mn.LevelsUncertainty[k])
		}
	}
}

func TestCurve_PoschlTeller_ExactLevels(t *testing.T) {
	// The modified Pöschl–Teller well V = −V0/cosh²(α(r − r0)) (G. Pöschl,
	// E. Teller, Z. Phys. 83, 143 (1933); Flügge 1974, problem 39 — from
	// memory): with λ(λ−1) = 2μV0/(ħ²α²), E_n = −(ħ²α²/2μ)(λ − 1 − n)².
	// V0, α, r0 and μ are invented for the test.
	const v0, alpha, r0, mu = 0.05, 1.0, 10.0, 1.0
	m := mu * AmuInElectronMass
	lam := 0.5 + math.Sqrt(0.25+2*m*v0/(alpha*alpha))
	exact := func(n int) float64 {
		k := lam - 1 - float64(n)
		return (-alpha*alpha/(2*m)*k*k + v0) * HartreeInCm1
	}
	v := func(r float64) float64 { c := math.Cosh(alpha * (r - r0)); return -v0 / (c * c) }
	r := unevenGrid(1, 4, 16, 16, 24, 0.05, 0.25)
	res, err := Curve(t.Context(), r, sampleAt(v, r), Options{Kind: Angle, Isotopologues: []MassSet{{Name: "pt", EffectiveMass: mu}}})
	if err != nil {
		t.Fatal(err)
	}
	mn := res.Minima[0]
	n := 0
	for exact(n) < 0.9*v0*HartreeInCm1 {
		n++
	}
	if len(mn.Levels) < n {
		t.Fatalf("%d levels, want at least the %d below 90 %% of the depth; warnings %q", len(mn.Levels), n, mn.Warnings)
	}
	for k := range n {
		near(t, "Pöschl–Teller G("+itoa(k)+")", mn.Levels[k], exact(k), 0.01, 0) // the 0.01 cm⁻¹
		if err := math.Abs(mn.Levels[k] - exact(k)); err > mn.LevelsUncertainty[k] && err > 1e-3 {
			t.Errorf("Pöschl–Teller G(%d): error %.3g cm⁻¹ > stated uncertainty %.3g", k, err, mn.LevelsUncertainty[k])
		}
	}
}

// On a sparse grid and without a global fit (the spline alone carries the
// shape), the levels are off by the interpolation error: the stated
// uncertainty must cover it, level by level.
func TestCurve_SparseSpline_LevelUncertaintyCoversError(t *testing.T) {
	for _, step := range []float64{0.1, 0.2} {
		m := coLike
		r := unevenGrid(1.5, 1.7, 3.2, 3.2, 6, step, 2*step)
		res, err := Curve(t.Context(), r, sampleAt(m.v, r), Options{Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}, NoGlobal: true})
		if err != nil {
			t.Fatal(err)
		}
		mn := res.Minima[0]
		if len(mn.Levels) < 3 {
			t.Fatalf("step %g: %d levels; warnings %q", step, len(mn.Levels), mn.Warnings)
		}
		worst := 0.0
		for v := range mn.Levels {
			e := math.Abs(mn.Levels[v] - m.level(v)) // exact Morse term values (Morse 1929)
			worst = math.Max(worst, e/mn.LevelsUncertainty[v])
			if e > mn.LevelsUncertainty[v] {
				t.Errorf("step %g bohr: G(%d) = %.4f, exact %.4f: error %.3g cm⁻¹ > stated uncertainty %.3g", step, v, mn.Levels[v], m.level(v), e, mn.LevelsUncertainty[v])
			}
		}
		t.Logf("step %g bohr: %d levels, largest error/uncertainty %.2f", step, len(mn.Levels), worst)
	}
}
