package fit

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"
)

// Masses in amu: AME2020 (M. Wang et al., Chin. Phys. C 45, 030003 (2021),
// doi:10.1088/1674-1137/abddaf).
const (
	massH   = 1.00782503223
	massD   = 2.01410177812
	mass12C = 12.0
	mass13C = 13.00335483507
	mass16O = 15.99491461957
)

func reducedMass(a, b float64) float64 { return a * b / (a + b) }

// refinedGrid imitates a refined scan: a fine step near r0 and a coarse one
// in the wings.
func refinedGrid(lo, r0, hi, fine, coarse float64) []float64 {
	var r []float64
	for x := lo; x < r0-0.3; x += coarse {
		r = append(r, x)
	}
	for x := r0 - 0.3; x <= r0+0.4; x += fine {
		r = append(r, x)
	}
	for x := r0 + 0.4 + coarse; x <= hi; x += coarse {
		r = append(r, x)
	}
	return r
}

func sampleAt(v func(float64) float64, r []float64) []float64 {
	e := make([]float64, len(r))
	for i, x := range r {
		e[i] = v(x) - 112.5 // an arbitrary total-energy offset
	}
	return e
}

var coLike = morse{de: 0.4, a: 1.2, re: 2.13, mu: reducedMass(mass12C, mass16O)}

func TestCurve_MorseSampled_RecoversConstants(t *testing.T) {
	m := coLike
	r := refinedGrid(1.5, m.re, 9, 0.02, 0.25)
	e := sampleAt(m.v, r)
	res, err := Curve(t.Context(), r, e, Options{Isotopologues: []MassSet{{Name: "12C16O", Masses: []float64{mass12C, mass16O}}}})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Minima) != 1 {
		t.Fatalf("found %d minima, want 1", len(res.Minima))
	}
	mn := res.Minima[0]
	w, wx := m.omega()
	be, alpha := m.pekeris()
	// Tolerances: the local polynomial (degree ≤ 8 in a 0.02 E_h window of
	// an exact Morse curve) reproduces the derivatives at r_e to about 1e-6
	// relative in f2 and 1e-3 in f4; the bounds below are a few times the
	// error observed, which is truncation error, not noise.
	near(t, "r_e (bohr)", mn.XE, m.re, 1e-7, 0)
	near(t, "E_min", mn.EMin, -112.5, 1e-9, 0)
	near(t, "k (E_h/bohr²), Morse 2D_e a²", mn.K, 2*m.de*m.a*m.a, 0, 1e-5)
	near(t, "ω_e (cm⁻¹)", mn.OmegaE, w, 0.01, 0)
	near(t, "ω_e x_e (cm⁻¹), Morse ω_e²/4D_e", mn.OmegaExe, wx, 0.02, 0)
	near(t, "B_e (cm⁻¹)", mn.Be, be, 0, 1e-6)
	near(t, "α_e (cm⁻¹), Pekeris 1934", mn.AlphaE, alpha, 1e-5, 0)
	near(t, "ZPE (cm⁻¹)", mn.ZPE, m.level(0), 0.01, 0)
	if len(mn.Levels) < 10 {
		t.Fatalf("%d levels, want at least 10 below the sampled top", len(mn.Levels))
	}
	for v := range 6 {
		// The spline through points 0.02 bohr apart near r_e and 0.25 bohr in
		// the wings limits the grid levels: 0.07 cm⁻¹ at v = 5 (observed),
		// growing fast above as the turning points reach the coarse wings.
		near(t, "G("+itoa(v)+") from the spline", mn.Levels[v], m.level(v), 0.2, 0)
	}
	near(t, "fundamental", mn.Fundamental, m.level(1)-m.level(0), 0.3, 0)
	// The three-point curvature at the lowest point agrees with the fit to
	// O(h²·f4/f2) (common practice): 0.02 bohr steps give ~1e-3 relative,
	// plus the shift of the lowest point from r_e (≤ 0.01 bohr, f3 term).
	near(t, "three-point k", mn.KThreePoint, mn.K, 0, 0.05)
	if res.Morse == nil {
		t.Fatalf("no Morse fit: %v", res.Warnings)
	}
	near(t, "Morse fit D_e", res.Morse.De, m.de, 1e-8, 0)
	near(t, "Morse fit a", res.Morse.Beta[0], m.a, 1e-8, 0)
	near(t, "Morse fit r_e", res.Morse.Re, m.re, 1e-8, 0)
	if res.ExtendedMorse == nil {
		t.Fatalf("no extended Morse fit: %v", res.Warnings)
	}
	near(t, "EMO fit r_e", res.ExtendedMorse.Re, m.re, 1e-6, 0)
	if _, err := json.Marshal(res); err != nil {
		t.Errorf("result does not encode as JSON: %v", err)
	}
}

// Dunham potential V = a0 ξ²(1 + a1 ξ + a2 ξ²), ξ = (r − r_e)/r_e, built from
// ¹²C¹⁶O constants: ω_e = 2169.756, ω_e x_e = 13.288, B_e = 1.931602,
// α_e = 0.017505 cm⁻¹ (K. P. Huber, G. Herzberg, Molecular Spectra and
// Molecular Structure IV. Constants of Diatomic Molecules, Van Nostrand
// 1979, as tabulated in NIST SRD 101). a0 = ω_e²/(4B_e) and a1, a2 from
// Dunham's Y11 and Y20 inverted (Dunham, Phys. Rev. 41, 721 (1932)).
func TestCurve_COFromPublishedConstants_RecoversThem(t *testing.T) {
	const (
		we, wxe, be, ae = 2169.756, 13.288, 1.931602, 0.017505
	)
	mu := reducedMass(mass12C, mass16O)
	re := math.Sqrt(HartreeInCm1 / (2 * mu * AmuInElectronMass * be))
	a0 := we * we / (4 * be) / HartreeInCm1
	a1 := -ae*we/(6*be*be) - 1
	a2 := 5*a1*a1/4 - 2*wxe/(3*be)
	v := func(r float64) float64 {
		x := (r - re) / re
		return a0 * x * x * (1 + a1*x + a2*x*x)
	}
	r := refinedGrid(re-0.35, re, re+0.6, 0.01, 0.05)
	res, err := Curve(t.Context(), r, sampleAt(v, r), Options{Isotopologues: []MassSet{{Name: "12C16O", Masses: []float64{mass12C, mass16O}}}, NoGlobal: true})
	if err != nil {
		t.Fatal(err)
	}
	mn := res.Minima[0]
	// The quartic is exactly representable by the polynomial fit, so the
	// constants come back to round-off (1e-6 relative leaves room for the
	// conditioning of the degree ≤ 8 fit).
	near(t, "r_e (Å) from B_e", mn.REAngstrom, re*BohrInAngstrom, 1e-8, 0)
	near(t, "ω_e", mn.OmegaE, we, 0, 1e-6)
	near(t, "ω_e x_e", mn.OmegaExe, wxe, 0, 1e-5)
	near(t, "B_e", mn.Be, be, 0, 1e-7)
	near(t, "α_e", mn.AlphaE, ae, 0, 1e-5)
}

// A Morse potential with the same published ¹²C¹⁶O ω_e, ω_e x_e and B_e
// (Huber & Herzberg 1979 via NIST SRD 101): D_e = ω_e²/(4ω_e x_e) and
// a = √(2μ ω_e x_e)/ħ (Morse 1929). Its levels are analytic, so the grid
// fundamental must be exactly ω_e − 2ω_e x_e = 2143.180 cm⁻¹; α_e follows
// Pekeris (1934), not the measured value.
func TestCurve_COMorseFromPublishedConstants_RecoversThem(t *testing.T) {
	const we, wxe, be = 2169.756, 13.288, 1.931602
	mu := reducedMass(mass12C, mass16O)
	m := morse{
		de: we * we / (4 * wxe) / HartreeInCm1,
		a:  math.Sqrt(2 * mu * AmuInElectronMass * wxe / HartreeInCm1),
		re: math.Sqrt(HartreeInCm1 / (2 * mu * AmuInElectronMass * be)),
		mu: mu,
	}
	r := refinedGrid(m.re-0.45, m.re, m.re+1.2, 0.01, 0.05)
	res, err := Curve(t.Context(), r, sampleAt(m.v, r), Options{Isotopologues: []MassSet{{Name: "12C16O", Masses: []float64{mass12C, mass16O}}}, NoGlobal: true})
	if err != nil {
		t.Fatal(err)
	}
	mn := res.Minima[0]
	_, alpha := m.pekeris()
	// Truncation error of the local polynomial, a few times that observed.
	near(t, "ω_e", mn.OmegaE, we, 0.01, 0)
	near(t, "ω_e x_e", mn.OmegaExe, wxe, 0.01, 0)
	near(t, "B_e", mn.Be, be, 0, 1e-6)
	near(t, "α_e vs Pekeris", mn.AlphaE, alpha, 1e-5, 0)
	// Spline at 0.01 bohr near r_e, 0.05 bohr in the wings (observed error
	// well below the tolerance).
	near(t, "grid fundamental vs ω_e − 2ω_e x_e", mn.Fundamental, we-2*wxe, 0.05, 0)
}

func TestCurve_NoisyMorse_UncertaintyCoversTruth(t *testing.T) {
	if testing.Short() {
		t.Skip("200 noisy fits")
	}
	const (
		trials = 200
		noise  = 2e-6 // E_h, a loosely converged energy
		seed   = 20261201
	)
	t.Logf("seed %d", seed)
	rng := rand.New(rand.NewPCG(seed, 1))
	m := coLike
	r := refinedGrid(1.7, m.re, 3.5, 0.02, 0.2)
	inR, inW := 0, 0
	for range trials {
		e := sampleAt(m.v, r)
		for i := range e {
			e[i] += noise * rng.NormFloat64()
		}
		res, err := Curve(context.Background(), r, e, Options{
			Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}},
			EnergyNoise:   noise, NoLevels: true, NoGlobal: true, MaxDegree: 6,
		})
		if err != nil {
			t.Fatal(err)
		}
		mn := res.Minima[0]
		w, _ := m.omega()
		if math.Abs(mn.XE-m.re) <= 2*mn.XEStderr {
			inR++
		}
		if math.Abs(mn.OmegaE-w) <= 2*mn.OmegaEStderr {
			inW++
		}
	}
	// With Gaussian noise the ±2σ interval covers the truth in 95 % of
	// trials; 85 % is more than 6 binomial standard deviations below that
	// (√(200·0.95·0.05) ≈ 3 trials), so a pass is not luck and a failure
	// means the error bars are too small.
	for _, c := range []struct {
		what string
		in   int
	}{{"r_e", inR}, {"ω_e", inW}} {
		frac := float64(c.in) / trials
		t.Logf("%s: inside ±2 stderr in %.1f%% of trials", c.what, 100*frac)
		if frac < 0.85 {
			t.Errorf("%s inside ±2 stderr in %.0f%% of %d trials, want ≥ 85%% (95%% expected)", c.what, 100*frac, trials)
		}
	}
}

func TestCurve_Isotopologues_ScaleWithMass(t *testing.T) {
	// An H2-like Morse well (invented parameters); the isotope relations
	// ω_e ∝ μ^{-1/2}, ω_e x_e ∝ μ^{-1}, B_e ∝ μ^{-1}, α_e ∝ μ^{-3/2} hold for
	// any potential (G. Herzberg, Spectra of Diatomic Molecules, 2nd ed.
	// 1950, ch. III §2 "Isotope effect").
	m := morse{de: 0.17, a: 1.03, re: 1.40, mu: reducedMass(massH, massH)}
	r := refinedGrid(0.6, m.re, 14, 0.01, 0.2)
	sets := []MassSet{{Name: "H2", Masses: []float64{massH, massH}}, {Name: "HD", Masses: []float64{massH, massD}}, {Name: "D2", Masses: []float64{massD, massD}}}
	res, err := Curve(t.Context(), r, sampleAt(m.v, r), Options{Isotopologues: sets})
	if err != nil {
		t.Fatal(err)
	}
	iso := res.Minima[0].Isotopologues
	if len(iso) != 3 {
		t.Fatalf("%d isotopologue blocks, want 3", len(iso))
	}
	h2 := iso[0]
	for _, c := range iso[1:] {
		rho := math.Sqrt(h2.Mass / c.Mass)
		// Exact scaling of the perturbative constants; 1e-9 relative is
		// round-off in the shared polynomial.
		near(t, c.Name+" ω_e/ρ", c.OmegaE/rho, h2.OmegaE, 0, 1e-9)
		near(t, c.Name+" ω_e x_e/ρ²", c.OmegaExe/(rho*rho), h2.OmegaExe, 0, 1e-9)
		near(t, c.Name+" B_e/ρ²", c.Be/(rho*rho), h2.Be, 0, 1e-9)
		near(t, c.Name+" α_e/ρ³", c.AlphaE/(rho*rho*rho), h2.AlphaE, 0, 1e-9)
		mc := m
		mc.mu = c.Mass
		// Grid levels against the analytic Morse levels of each mass: the
		// spline error at 0.01 bohr steps is well below 0.5 cm⁻¹ (observed).
		for v := range 3 {
			near(t, c.Name+" G("+itoa(v)+")", c.Levels[v], mc.level(v), 0.5, 0)
		}
	}
	// The data reach 14 bohr, where the Morse curve is within 2D_e e^{−a(r−r_e)}
	// ≈ 0.2 cm⁻¹ of its limit, so D_e and D_0 = D_e − ZPE are reported.
	near(t, "D_e (cm⁻¹)", h2.DeCm1, m.de*HartreeInCm1, 1, 0)
	near(t, "D_0 (cm⁻¹)", h2.D0Cm1, m.de*HartreeInCm1-m.level(0), 1.5, 0)
}

func TestCurve_Warnings(t *testing.T) {
	m := coLike
	tests := []struct {
		name string
		r    []float64
		mod  func(e []float64, o *Options)
		want string
	}{
		{"edge", linspace(2.2, 3.0, 30), nil, "no minimum at the smallest coordinate"},
		{"sparse", linspace(1.7, 3.0, 9), nil, "the fit window was widened"},
		{"unconverged used", linspace(1.9, 2.4, 30), func(e []float64, o *Options) {
			o.Converged = make([]bool, len(e))
			for i := range o.Converged {
				o.Converged[i] = i != 14
			}
			o.IncludeUnconverged = true
		}, "unconverged point(s) used"},
		{"unconverged left out", linspace(1.9, 2.4, 30), func(e []float64, o *Options) {
			o.Converged = make([]bool, len(e))
			for i := range o.Converged {
				o.Converged[i] = i != 14
			}
		}, "left out"},
		{"noisy", linspace(1.9, 2.4, 30), func(e []float64, o *Options) {
			for i := range e {
				e[i] += 1e-4 * float64(i%3-1)
			}
		}, "fit residuals above the energy noise"},
		{"levels above data", linspace(1.8, 2.7, 40), nil, "not determined by the data"},
		// ±0.15 bohr around r_e: v = 0 (1050 cm⁻¹) lies inside the 2502 cm⁻¹
		// sampled well but moves by ~3 cm⁻¹ between the two continuations
		// past the data (observed), more than the 1 cm⁻¹ cut.
		{"no level determined", linspace(2.0, 2.3, 30), nil, "no vibrational level is determined"},
		{"well below v = 0", linspace(2.08, 2.2, 30), nil, "below v = 0"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			e := sampleAt(m.v, tc.r)
			o := Options{Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}, NoGlobal: true}
			if tc.mod != nil {
				tc.mod(e, &o)
			}
			res, err := Curve(t.Context(), tc.r, e, o)
			if err != nil {
				t.Fatal(err)
			}
			ws := res.Warnings
			for _, m := range res.Minima {
				ws = append(ws, m.Warnings...)
			}
			all := strings.Join(ws, "\n")
			if !strings.Contains(all, tc.want) {
				t.Errorf("warnings do not mention %q:\n%s", tc.want, all)
			}
		})
	}
}

func TestCurve_BadInput_Errors(t *testing.T) {
	tests := []struct {
		name string
		r, e []float64
		o    Options
	}{
		{"length mismatch", []float64{1, 2, 3}, []float64{1, 2}, Options{}},
		{"too few", []float64{1, 2}, []float64{1, 0}, Options{}},
		{"NaN", []float64{1, 2, 3}, []float64{1, math.NaN(), 2}, Options{}},
		{"duplicate r", []float64{1, 2, 2, 3}, []float64{1, 0, 0, 1}, Options{}},
		{"zero distance", []float64{0, 2, 3, 4}, []float64{4, 3, 2, 3}, Options{}},
		{"negative noise", []float64{1, 2, 3}, []float64{1, 0, 1}, Options{EnergyNoise: -1e-6}},
		{"NaN window", []float64{1, 2, 3}, []float64{1, 0, 1}, Options{WindowEnergy: math.NaN()}},
		{"infinite limit", []float64{1, 2, 3}, []float64{1, 0, 1}, Options{Asymptote: new(math.Inf(1))}},
		{"bad mass", []float64{1, 2, 3}, []float64{1, 0, 1}, Options{Isotopologues: []MassSet{{Masses: []float64{1}}}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := Curve(t.Context(), tc.r, tc.e, tc.o); err == nil {
				t.Errorf("Curve(%s) gave no error", tc.name)
			}
		})
	}
}

func TestCurve_DoubleWell_FindsBoth(t *testing.T) {
	// V = c(x² − 1)² + 0.01x: two minima near x = ±1 (invented test
	// function); the polynomial fit must put each at the root of V'.
	v := func(x float64) float64 { return 0.05*(x*x-1)*(x*x-1) + 0.001*x }
	r := linspace(-1.8, 1.8, 121)
	res, err := Curve(t.Context(), r, sampleAt(v, r), Options{Kind: Angle, NoGlobal: true, NoLevels: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Minima) != 2 {
		t.Fatalf("%d minima, want 2", len(res.Minima))
	}
	for _, mn := range res.Minima {
		x := mn.XE
		// V'(x) = 0.2x(x² − 1) + 0.001 = 0 at the minimum.
		near(t, "V'(x_e)", 0.2*x*(x*x-1)+0.001, 0, 1e-9, 0)
	}
}

func linspace(a, b float64, n int) []float64 {
	r := make([]float64, n)
	for i := range r {
		r[i] = a + (b-a)*float64(i)/float64(n-1)
	}
	return r
}

func TestCurve_PolyatomicBend_OneDimensional(t *testing.T) {
	// A bending scan with an effective mass (a moment of inertia) of 1.53
	// amu·bohr² (invented, of the size of water's bend): the harmonic
	// wavenumber is √(f2/μ)/(2πc) in any units (common practice).
	g := 1 / 1.53
	const f2, th0 = 0.16, 104.5 * math.Pi / 180 // E_h/rad², invented
	v := func(x float64) float64 { d := x - th0; return 0.5*f2*d*d - 0.02*d*d*d + 0.01*d*d*d*d }
	r := linspace(th0-1.1, th0+1.1, 111)
	res, err := Curve(t.Context(), r, sampleAt(v, r), Options{Kind: Angle, Isotopologues: []MassSet{{Name: "bend", EffectiveMass: 1 / g}}})
	if err != nil {
		t.Fatal(err)
	}
	mn := res.Minima[0]
	if !mn.OneD || mn.Be != 0 {
		t.Errorf("bend block: one_dimensional_along_scan = %v, b_e = %g; want true and no rotational constant", mn.OneD, mn.Be)
	}
	if mn.MassUnit != "amu·bohr²" { // an angle's effective mass is a moment of inertia
		t.Errorf("bend block: mass_unit %q, want amu·bohr²", mn.MassUnit)
	}
	near(t, "θ_e (°)", mn.ThetaEDegree, 104.5, 1e-7, 0)
	// The quartic is exact for the polynomial fit: round-off only.
	near(t, "ω (cm⁻¹)", mn.OmegaE, math.Sqrt(f2*g/AmuInElectronMass)*HartreeInCm1, 0, 1e-7)
	if len(mn.Levels) < 3 {
		t.Fatalf("%d levels, want at least 3; warnings %q", len(mn.Levels), mn.Warnings)
	}
	// The grid fundamental agrees with the perturbative one to the
	// higher-order terms (small for this weak anharmonicity; observed
	// difference well under 1 cm⁻¹).
	near(t, "fundamental", mn.Fundamental, mn.OmegaE-2*mn.OmegaExe, 1, 0)
}

func TestCurve_Weights_ScaleInvariantAndZeroDropsPoint(t *testing.T) {
	m := coLike
	r := linspace(1.8, 2.6, 41)
	e := sampleAt(m.v, r)
	rng := rand.New(rand.NewPCG(7, 7))
	for i := range e {
		e[i] += 1e-6 * rng.NormFloat64() // seeded noise so the stderr is not 0
	}
	w1 := make([]float64, len(r))
	w10 := make([]float64, len(r))
	for i := range w1 {
		w1[i] = 1 + float64(i%3)
		w10[i] = 10 * w1[i]
	}
	opt := func(w []float64) Options {
		return Options{Weights: w, Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}, NoGlobal: true, NoLevels: true}
	}
	a, err := Curve(t.Context(), r, e, opt(w1))
	if err != nil {
		t.Fatal(err)
	}
	b, err := Curve(t.Context(), r, e, opt(w10))
	if err != nil {
		t.Fatal(err)
	}
	// Relative weights: a common factor changes nothing (the residual
	// variance absorbs it; common practice). 1e-12 relative is round-off;
	// the standard errors go through a finite-difference Jacobian, whose
	// round-off is ~1e-7 relative, hence 1e-6.
	near(t, "r_e", b.Minima[0].XE, a.Minima[0].XE, 0, 1e-12)
	near(t, "r_e stderr", b.Minima[0].XEStderr, a.Minima[0].XEStderr, 0, 1e-6)
	near(t, "ω_e stderr", b.Minima[0].OmegaEStderr, a.Minima[0].OmegaEStderr, 0, 1e-6)
	// A wild point with weight 0 is the same as no point at all.
	drop := func(s []float64) []float64 { return append(append([]float64{}, s[:20]...), s[21:]...) }
	want, err := Curve(t.Context(), drop(r), drop(e), opt(drop(w1)))
	if err != nil {
		t.Fatal(err)
	}
	e[20] += 0.01
	w1[20] = 0
	c, err := Curve(t.Context(), r, e, opt(w1))
	if err != nil {
		t.Fatal(err)
	}
	near(t, "r_e with a zero-weight outlier", c.Minima[0].XE, want.Minima[0].XE, 0, 1e-12)
}

func TestCurve_GivenAsymptote_GivesD0(t *testing.T) {
	m := coLike
	r := refinedGrid(1.6, m.re, 3.2, 0.01, 0.1)
	lim := m.de - 112.5
	res, err := Curve(t.Context(), r, sampleAt(m.v, r), Options{Asymptote: &lim, Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}, NoGlobal: true})
	if err != nil {
		t.Fatal(err)
	}
	mn := res.Minima[0]
	// D_e = limit − E_min exactly; D_0 = D_e − G(0) with the analytic Morse
	// G(0) (Morse 1929); the grid ZPE is good to 0.01 cm⁻¹ here.
	near(t, "D_e", mn.DeCm1, m.de*HartreeInCm1, 1e-4, 0)
	near(t, "D_0", mn.D0Cm1, m.de*HartreeInCm1-m.level(0), 0.05, 0)
}

func TestCurve_Cancelled_ReturnsContextError(t *testing.T) {
	ctx, cancel := context.WithCancel(t.Context())
	cancel()
	r := linspace(1.8, 2.6, 41)
	if _, err := Curve(ctx, r, sampleAt(coLike.v, r), Options{}); err == nil {
		t.Error("a cancelled context gave no error")
	}
}

func TestCurve_LargeTable_Cancellable(t *testing.T) {
	r, e := largeCurve(200000)
	ctx, cancel := context.WithTimeout(t.Context(), 20*time.Millisecond)
	defer cancel()
	start := time.Now()
	_, err := Curve(ctx, r, e, Options{Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}})
	if !errors.Is(err, context.DeadlineExceeded) {
		t.Fatalf("Curve on 200,000 points with a 20 ms deadline: err = %v, want the context's error", err)
	}
	// Not a timing test of the fit: only that it stops promptly once
	// cancelled (a loaded machine gets a generous two seconds).
	if d := time.Since(start); d > 2*time.Second {
		t.Errorf("returned %v after the deadline", d)
	}
}

// TestCurve_FlatCurveSaysFlat is issue 15 item 15: identical energies
// (a program whose output does not depend on the geometry) were reported
// as "energies only rise or only fall".
func TestCurve_FlatCurveSaysFlat(t *testing.T) {
	r := []float64{1.8, 1.9, 2.0, 2.1, 2.2}
	e := []float64{-1.5, -1.5, -1.5, -1.5, -1.5}
	res, err := Curve(t.Context(), r, e, Options{})
	said := err != nil && strings.Contains(err.Error(), "the curve is flat")
	if res != nil {
		said = said || strings.Contains(strings.Join(res.Warnings, "\n"), "the curve is flat")
	}
	if !said {
		t.Fatalf("Curve(flat) = %+v, %v; want it to say the curve is flat", res, err)
	}
}
