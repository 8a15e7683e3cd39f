package forcefield

import (
	"math"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

func TestRotationalConstants_WorkedAcetaldehyde(t *testing.T) {
	g := readNumbers(t, filepath.Join("testdata", "worked-geom", "acetaldehyde.dat"))
	mass := map[int]float64{1: 1.007825, 6: 12, 8: 15.994915} // the example's hint
	var pos [][3]float64
	var m []float64
	for a := range int(g[0]) {
		m = append(m, mass[int(g[1+4*a])])
		pos = append(pos, [3]float64{g[2+4*a], g[3+4*a], g[4+4*a]})
	}
	mom, _ := principal(pos, m)
	want := [3]float64{31.964078, 178.649562, 199.371127} // acetaldehyde_out.txt, amu·bohr²
	for k := range 3 {
		if !scalar.EqualWithinAbs(mom[k], want[k], 1e-6) { // printed to 6 decimals
			t.Errorf("I%d = %.6f, want %.6f", k, mom[k], want[k])
		}
	}
	h := &Harmonic{RotCm1: RotationalConstantsCm1(pos, m)}
	mhz := h.RotMHz()
	wantMHz := [3]float64{56461.542, 10102.130, 9052.169} // acetaldehyde_out.txt, MHz
	for k := range 3 {
		// 0.02 MHz: the example used older constants (relative ≈ 3e-7).
		if !scalar.EqualWithinAbs(mhz[k], wantMHz[k], 0.02) {
			t.Errorf("rotational constant %d = %.3f MHz, want %.3f", k, mhz[k], wantMHz[k])
		}
	}
}

func TestIntensities_ChargedDiatomic(t *testing.T) {
	// Point charges ±δ on a diatomic: ∂μ/∂Q = δ/√μ, so A = 974.88 δ²/μ km/mol
	// with μ in amu (double-harmonic textbook result, WDC 1955 §7-8; the
	// factor N_A e²/(12 ε0 c² m_u) ≈ 974.88 km/mol, from memory).
	if !scalar.EqualWithinAbs(IntensityKmPerMol, 974.88, 0.01) {
		t.Errorf("IntensityKmPerMol = %.4f, want ≈ 974.88", IntensityKmPerMol)
	}
	re, k := 2.4, 0.3
	masses := []float64{mH, 34.96885268}
	pos := [][3]float64{{0, 0, 0}, {0, 0, re}}
	v := func(x []float64) float64 { d := dist(x, 0, 1) - re; return 0.5 * k * d * d }
	h, err := Analyze(pos, masses, fdHessian(v, flat(pos), 1e-4))
	if err != nil {
		t.Fatal(err)
	}
	delta := 0.2
	dmu := make([][3]float64, 6)
	for kk := range 3 {
		dmu[kk][kk] = delta
		dmu[3+kk][kk] = -delta
	}
	a, err := h.Intensities(dmu)
	if err != nil {
		t.Fatal(err)
	}
	mu := masses[0] * masses[1] / (masses[0] + masses[1])
	want := IntensityKmPerMol * delta * delta / mu
	if !scalar.EqualWithinRel(a[0], want, 1e-12) { // same formula, rounding only
		t.Errorf("A = %.6f km/mol, want %.6f", a[0], want)
	}
	if _, err := h.Intensities(dmu[:3]); err == nil {
		t.Error("short derivative list accepted")
	}
}

func TestAnalyze_BadInput(t *testing.T) {
	pos := [][3]float64{{0, 0, 0}, {0, 0, 2}}
	for _, tc := range []struct {
		name   string
		masses []float64
		hess   []float64
	}{
		{"size", []float64{1, 1}, make([]float64, 35)},
		{"mass", []float64{1, 0}, make([]float64, 36)},
		{"nan", []float64{1, 1}, append([]float64{math.NaN()}, make([]float64, 35)...)},
	} {
		if _, err := Analyze(pos, tc.masses, tc.hess); err == nil {
			t.Errorf("%s: no error", tc.name)
		}
	}
	if _, err := Analyze(pos[:1], []float64{1}, make([]float64, 9)); err == nil {
		t.Error("single atom: no error")
	}
}

func TestAnalyze_ImaginaryMode(t *testing.T) {
	// A diatomic at a maximum of its potential: one imaginary mode, flagged,
	// left out of the ZPE.
	re := 2.0
	pos := [][3]float64{{0, 0, 0}, {0, 0, re}}
	v := func(x []float64) float64 { d := dist(x, 0, 1) - re; return -0.1 * d * d }
	h, err := Analyze(pos, []float64{1, 1}, fdHessian(v, flat(pos), 1e-4))
	if err != nil {
		t.Fatal(err)
	}
	if !h.Imaginary[0] || h.WavenumbersCm1[0] >= 0 || h.ZPECm1 != 0 {
		t.Errorf("imaginary %v ω %.3f ZPE %.3f", h.Imaginary[0], h.WavenumbersCm1[0], h.ZPECm1)
	}
	if _, err := h.StepBohr(0, 0.1); err == nil {
		t.Error("step along an imaginary mode accepted")
	}
}

func TestCartesianDipoleDerivatives_PointCharges(t *testing.T) {
	// Fixed point charges q_a: μ = Σ q_a x_a, so ∂μ_k/∂x_ak' = q_a δ_kk'
	// exactly (independent closed form). Given only the derivatives along
	// the vibrational directions, the helper must rebuild all of it.
	pos, _ := waterModel()
	masses := []float64{mO, mH, mH}
	q := []float64{-0.8, 0.4, 0.4}
	var mu0 [3]float64
	for a := range 3 {
		for k := range 3 {
			mu0[k] += q[a] * pos[a][k]
		}
	}
	d, _, err := VibrationalBasis(pos, masses)
	if err != nil {
		t.Fatal(err)
	}
	_, nv := d.Dims()
	var pats [][]float64
	var dmu [][3]float64
	for j := range nv {
		p := make([]float64, 9)
		var m [3]float64
		for c := range 9 {
			p[c] = d.At(c, j) / math.Sqrt(masses[c/3])
			m[c%3] += q[c/3] * p[c]
		}
		pats, dmu = append(pats, p), append(dmu, m)
	}
	got, err := CartesianDipoleDerivatives(pos, masses, 0, mu0, pats, dmu)
	if err != nil {
		t.Fatal(err)
	}
	for c := range 9 {
		for k := range 3 {
			want := 0.0
			if c%3 == k {
				want = q[c/3]
			}
			if !scalar.EqualWithinAbs(got[c][k], want, 1e-10) { // linear solve, rounding
				t.Errorf("∂μ%d/∂x%d = %.12f, want %.12f", k, c, got[c][k], want)
			}
		}
	}
}

func TestCartesianHessian_RoundTrip(t *testing.T) {
	// The Hessian rebuilt from its vibrational block equals the original
	// (a rotation-invariant model at its minimum), so isotopologues come
	// out the same from either.
	pos, v := waterModel()
	masses := []float64{mO, mH, mH}
	hc := fdHessian(v, flat(pos), 1e-4)
	d, _, _ := VibrationalBasis(pos, masses)
	_, nv := d.Dims()
	var basis [][]float64
	for j := range nv {
		b := make([]float64, 9)
		for c := range 9 {
			b[c] = d.At(c, j)
		}
		basis = append(basis, b)
	}
	hm := make([][]float64, nv)
	for a := range nv {
		hm[a] = make([]float64, nv)
		for b := range nv {
			for c := range 9 {
				for e := range 9 {
					hm[a][b] += basis[a][c] * hc[c*9+e] * basis[b][e] / math.Sqrt(masses[c/3]*masses[e/3])
				}
			}
		}
	}
	back, err := CartesianHessian(masses, basis, hm)
	if err != nil {
		t.Fatal(err)
	}
	for i := range back {
		if !scalar.EqualWithinAbs(back[i], hc[i], 1e-7) { // FD Hessian's own rotation residual
			t.Errorf("H[%d] = %.10f, want %.10f", i, back[i], hc[i])
		}
	}
}

func TestZeta_PlanarSumRule(t *testing.T) {
	// For a planar molecule of N atoms, the Coriolis constants about the
	// axis perpendicular to the plane obey Σ_{i<j} (ζ^c_ij)² = N − 2, and
	// those about the in-plane axes vanish between in-plane modes (Meal &
	// Polo sum rules, J. Chem. Phys. 24, 1119 (1956); for a bent XY2 this
	// is ζ13² + ζ23² = 1). Also ζ is antisymmetric.
	pos, v := waterModel()
	for _, masses := range [][]float64{{mO, mH, mH}, {mO, mH, mD}} {
		h, err := Analyze(pos, masses, fdHessian(v, flat(pos), 1e-4))
		if err != nil {
			t.Fatal(err)
		}
		z := h.Zeta()
		// the axis perpendicular to the plane has the largest moment (C)
		s := 0.0
		for i := range 3 {
			for j := range 3 {
				if !scalar.EqualWithinAbs(z[2][i][j], -z[2][j][i], 1e-12) {
					t.Errorf("ζ not antisymmetric at %d,%d", i, j)
				}
				if j > i {
					s += z[2][i][j] * z[2][i][j]
				}
				for a := range 2 {
					if math.Abs(z[a][i][j]) > 1e-9 { // rounding of the modes
						t.Errorf("in-plane axis %d: ζ_%d%d = %.3g, want 0", a, i+1, j+1, z[a][i][j])
					}
				}
			}
		}
		if !scalar.EqualWithinAbs(s, 1, 1e-9) { // N − 2 = 1 for a triatomic
			t.Errorf("masses %v: Σ (ζ^c_ij)² = %.12f, want 1", masses, s)
		}
	}
}
