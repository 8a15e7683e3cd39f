package fit

import (
	"context"
	"math"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// v3Rotor is the threefold hindered rotor V(φ) = V3/2 (1 − cos 3φ) with a
// small sixfold term, sampled every step over one period of 2π/3.
func v3Samples(v3, v6 float64, n int, p float64) ([]float64, []float64) {
	x := make([]float64, n)
	e := make([]float64, n)
	for i := range n {
		x[i] = p * float64(i) / float64(n)
		e[i] = -79.2 + v3/2*(1-math.Cos(3*x[i])) + v6/2*(1-math.Cos(6*x[i]))
	}
	return x, e
}

// fghRotorLevels is an independent solution of −(1/2I)ψ″ + Vψ = Eψ on a
// periodic grid of n = 2M+1 points over [0, 2π): the Fourier grid
// Hamiltonian, T_jk = (1/n) Σ_{m=−M..M} m²/(2I) cos(m(φ_j − φ_k)), V
// diagonal (C. C. Marston, G. G. Balint-Kurti, J. Chem. Phys. 91, 3571
// (1989)), diagonalised with gonum. Written separately from RotorLevels,
// which works in the free-rotor basis with quadrature matrix elements.
func fghRotorLevels(v func(float64) float64, iAU float64, mMax, k int) []float64 {
	n := 2*mMax + 1
	h := mat.NewSymDense(n, nil)
	for j := range n {
		for l := j; l < n; l++ {
			d := 2 * math.Pi * float64(j-l) / float64(n)
			t := 0.0
			for m := -mMax; m <= mMax; m++ {
				t += float64(m*m) * math.Cos(float64(m)*d)
			}
			t /= 2 * iAU * float64(n)
			if j == l {
				t += v(2 * math.Pi * float64(j) / float64(n))
			}
			h.SetSym(j, l, t)
		}
	}
	var es mat.EigenSym
	es.Factorize(h, false)
	vals := es.Values(nil)
	sort.Float64s(vals)
	return vals[:k]
}

func TestTorsion_V3RotorBarrierAndLevels(t *testing.T) {
	const (
		v3      = 0.0050 // hartree, an ethane-like barrier (invented for the test)
		v6      = 0.0001
		inertia = 5.5 // amu·bohr², ethane-like reduced moment (invented)
	)
	p := 2 * math.Pi / 3
	x, e := v3Samples(v3, v6, 9, p)
	res, err := Torsion(context.Background(), x, e, p, TorsionOptions{Inertia: func(float64) (float64, error) { return inertia, nil }})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Minima) != 1 || len(res.Barriers) != 1 {
		t.Fatalf("got %d minima and %d barriers, want 1 and 1: %+v", len(res.Minima), len(res.Barriers), res)
	}
	m, b := res.Minima[0], res.Barriers[0]
	// Exact for the model: minimum at 0 (≡ 120°), barrier V3 at 60°.
	if d := math.Abs(math.Remainder(m.XDegree, 120)); d > 1e-6 {
		t.Errorf("minimum at %g°, want 0° (mod 120°)", m.XDegree)
	}
	if math.Abs(b.XDegree-60) > 1e-6 {
		t.Errorf("barrier at %g°, want 60°", b.XDegree)
	}
	if want := v3 * HartreeInCm1; math.Abs(b.HeightCm1-want) > 1e-6 {
		t.Errorf("barrier %g cm⁻¹, want V3 = %g cm⁻¹ (exact for the model)", b.HeightCm1, want)
	}
	if m.Multiplicity != 3 || b.Multiplicity != 3 {
		t.Errorf("multiplicities %d and %d per turn, want 3 and 3", m.Multiplicity, b.Multiplicity)
	}
	// Harmonic: V″(0) = 9V3/2 + 18 V6 (analytic second derivative).
	k := 9*v3/2 + 18*v6
	want := math.Sqrt(k/(inertia*AmuInElectronMass)) * HartreeInCm1
	if math.Abs(m.HarmonicCm1-want) > 1e-6*want {
		t.Errorf("harmonic %g cm⁻¹, want √(V″/I) = %g", m.HarmonicCm1, want)
	}
	// Levels against the independent Fourier-grid solution.
	vf := func(phi float64) float64 { return v3/2*(1-math.Cos(3*phi)) + v6/2*(1-math.Cos(6*phi)) }
	ref := fghRotorLevels(vf, inertia*AmuInElectronMass, 60, 9)
	if res.Rotor == nil || len(res.Rotor.Levels) < 9 {
		t.Fatalf("rotor levels missing: %+v", res.Rotor)
	}
	for i := range 9 {
		got := res.Rotor.Levels[i]
		want := ref[i] * HartreeInCm1
		if math.Abs(got-want) > 1e-4 { // cm⁻¹; both methods are spectrally converged
			t.Errorf("level %d: %.6f cm⁻¹, independent grid solution %.6f", i, got, want)
		}
	}
	r := res.Rotor
	if r.WellsPerTurn != 3 || r.Fundamental <= 0 || r.Fundamental >= want || r.Splitting < 0 {
		t.Errorf("rotor summary %+v: want 3 wells, 0 < fundamental < harmonic, splitting ≥ 0", r)
	}
}

func TestRotorLevels_FreeRotor(t *testing.T) {
	// V = const: E_m = m²/(2I) exactly, m = 0, ±1, ±2, … (common practice:
	// the free rigid rotor in a plane).
	f := &FourierSeries{Period: 2 * math.Pi, Order: 1, A: []float64{-1, 0}, B: []float64{0, 0}}
	const inertia = 3.0
	lv, err := RotorLevels(context.Background(), f, inertia, 7)
	if err != nil {
		t.Fatal(err)
	}
	iAU := inertia * AmuInElectronMass
	want := []float64{0, 1, 1, 4, 4, 9, 9}
	for i, m2 := range want {
		w := -1 + m2/(2*iAU)
		if math.Abs(lv[i]-w) > 1e-12 {
			t.Errorf("level %d = %.15g, want m²/2I − 1 = %.15g", i, lv[i], w)
		}
	}
}

// TestRotorLevels_Mathieu checks the V3 rotor against the Mathieu
// characteristic values: with x = 3φ/2 the equation becomes
// y″ + (a − 2q cos 2x) y = 0 with a = (8I/9)(E − V3/2), q = −(2I/9)V3, and
// the ground level is a_0(q) (a_0(−q) = a_0(q)).
func TestRotorLevels_Mathieu(t *testing.T) {
	const q = 5.0
	a0 := -5.80004602 // a_0(q = 5), Abramowitz & Stegun Table 20.1 (from memory)
	const inertia = 1.0
	iAU := inertia * AmuInElectronMass
	v3 := 9 * q / (2 * iAU)
	f := &FourierSeries{Period: 2 * math.Pi / 3, Order: 1, A: []float64{v3 / 2, -v3 / 2}, B: []float64{0, 0}}
	lv, err := RotorLevels(context.Background(), f, inertia, 1)
	if err != nil {
		t.Fatal(err)
	}
	a := 8 * iAU / 9 * (lv[0] - v3/2)
	if math.Abs(a-a0) > 1e-7 { // the table's 8 decimals
		t.Errorf("a_0(5) from the rotor = %.9f, table %.8f", a, a0)
	}
}

func TestFitFourier_OrderAndErrors(t *testing.T) {
	if _, err := FitFourier([]float64{0, 1}, []float64{0, 1}, 2*math.Pi, 0); err == nil {
		t.Error("2 points: want an error")
	}
	if _, err := FitFourier([]float64{0, 2 * math.Pi, 1}, []float64{0, 0, 1}, 2*math.Pi, 0); err == nil {
		t.Error("0 and 2π are the same point: want an error")
	}
	if _, err := FitFourier([]float64{0, 1, math.NaN()}, []float64{0, 1, 2}, 2*math.Pi, 0); err == nil {
		t.Error("NaN: want an error")
	}
	// A pure order-2 series sampled at 12 points is recovered exactly.
	var x, e []float64
	for i := range 12 {
		v := 2 * math.Pi * float64(i) / 12
		x = append(x, v)
		e = append(e, 0.3+0.01*math.Cos(v)-0.002*math.Sin(2*v))
	}
	f, err := FitFourier(x, e, 2*math.Pi, 0)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(f.A[0]-0.3) > 1e-12 || math.Abs(f.A[1]-0.01) > 1e-12 || math.Abs(f.B[2]+0.002) > 1e-12 {
		t.Errorf("coefficients A=%v B=%v, want a0 0.3, a1 0.01, b2 −0.002", f.A, f.B)
	}
}
