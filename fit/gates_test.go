package fit

import (
	"math"
	"slices"
	"strings"
	"testing"
)

const massHe4 = 4.00260325413 // AME2020

// noImpossible checks that nothing in res is impossible for a bound well
// (common practice: a vibrational ladder starts above the minimum, has
// positive spacings, ω_e x_e < ω_e/2 for the series to have a top, D_0 needs
// a bound level, a minimum lies inside the data).
func noImpossible(t *testing.T, res *Result, r, e []float64) {
	t.Helper()
	lo, hi := slices.Min(r), slices.Max(r)
	emin := slices.Min(e)
	for _, m := range res.Minima {
		if m.XE < lo || m.XE > hi {
			t.Errorf("%s: x_e = %g outside the data %g–%g", m.Label, m.XE, lo, hi)
		}
		if m.EMin < emin-3*m.EMinUnc-m.K*0.25*0.25 {
			t.Errorf("%s: E_min %.8f far below every point (lowest %.8f)", m.Label, m.EMin, emin)
		}
		for _, c := range m.Isotopologues {
			if c.ZPE < 0 || c.ZPEGrid < 0 || c.Fundamental < 0 {
				t.Errorf("%s %s: ZPE %g, grid ZPE %g, fundamental %g: negative", m.Label, c.Name, c.ZPE, c.ZPEGrid, c.Fundamental)
			}
			if c.OmegaExe >= c.OmegaE/2 && c.OmegaExe != 0 {
				t.Errorf("%s %s: ω_e x_e %g ≥ ω_e/2 (%g) printed", m.Label, c.Name, c.OmegaExe, c.OmegaE/2)
			}
			if c.D0Cm1 != 0 && len(c.Levels) == 0 && c.NoBoundLevel {
				t.Errorf("%s %s: D_0 = %g without a bound level", m.Label, c.Name, c.D0Cm1)
			}
			if c.DeCm1 < 0 || c.D0Cm1 < 0 {
				t.Errorf("%s %s: D_e %g, D_0 %g negative", m.Label, c.Name, c.DeCm1, c.D0Cm1)
			}
			for v := 1; v < len(c.Levels); v++ {
				if !(c.Levels[v] > c.Levels[v-1]) {
					t.Errorf("%s %s: levels not increasing at v = %d", m.Label, c.Name, v)
				}
			}
		}
	}
}

func allWarnings(res *Result) string {
	w := slices.Clone(res.Warnings)
	for _, m := range res.Minima {
		w = append(w, m.Warnings...)
	}
	return strings.Join(w, "\n")
}

func TestCurve_ImpossibleConstantsWithheld(t *testing.T) {
	he := []MassSet{{Name: "4He2", Masses: []float64{massHe4, massHe4}}}
	// He2 at RHF: purely repulsive, A e^{−b r} (A, b invented, of the size
	// of a closed-shell repulsion), tabulated at 1e-8 E_h (plateaus at long
	// range, as printed energies have).
	rep := func(r float64) float64 { return math.Round((-5.7236+8*math.Exp(-2.1*r))*1e8) / 1e8 }
	// A strictly falling curve, ever steeper (invented).
	fall := func(r float64) float64 { return -1 - 0.01*r*r }
	// He2-like weak well: a Morse of D_e = 7.3 cm⁻¹, a = 1 bohr⁻¹ at 5.6
	// bohr (invented, the size of the helium dimer's well): λ = √(2μD_e)/a
	// ≈ 0.48 < ½, so it holds no bound level (Morse 1929).
	weak := morse{de: 7.3 / HartreeInCm1, a: 1.0, re: 5.6, mu: reducedMass(massHe4, massHe4)}
	// An N2-UHF-like curve (invented): a deep well, a hump about 0.02 E_h
	// (4000 cm⁻¹) above the limit near 4 bohr, a dip of about 23 cm⁻¹
	// below the limit near 7.6 bohr, then flat.
	n2 := morse{de: 0.36, a: 2.0, re: 2.07, mu: reducedMass(14.00307400425, 14.00307400425)}
	hump := func(r float64) float64 {
		return n2.v(r) + 0.05*math.Exp(-sq((r-4.2)/1.2)) - 26/HartreeInCm1*math.Exp(-sq((r-7.5)/1.0))
	}
	n2m := []MassSet{{Name: "14N2", Masses: []float64{14.00307400425, 14.00307400425}}}
	for _, tc := range []struct {
		name   string
		r      []float64
		v      func(float64) float64
		iso    []MassSet
		minima int
		want   []string
	}{
		{"He2 RHF repulsive", linspace(3.5, 15, 47), rep, he, 0, []string{"no minimum inside the data"}},
		{"falling curve", linspace(1.5, 6, 30), fall, he, 0, []string{"falls monotonically", "no minimum at the largest coordinate"}},
		{"He2-like weak well", unevenGrid(4.2, 4.6, 8, 8, 30, 0.1, 0.4), weak.v, he, 1, []string{"no bound vibrational level", "omega_e_x_e_cm1 withheld", "d_0_cm1 withheld", "zpe_cm1 withheld"}},
		{"N2-UHF-like hump and dip", unevenGrid(1.6, 1.7, 9, 9, 30, 0.05, 0.3), hump, n2m, -1, []string{"above its own dissociation limit"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			e := make([]float64, len(tc.r))
			for i, x := range tc.r {
				e[i] = tc.v(x)
			}
			res, err := Curve(t.Context(), tc.r, e, Options{Isotopologues: tc.iso})
			if err != nil {
				t.Fatal(err)
			}
			all := allWarnings(res)
			if tc.minima >= 0 && len(res.Minima) != tc.minima {
				t.Errorf("%d minima, want %d; warnings:\n%s", len(res.Minima), tc.minima, all)
			}
			for _, w := range tc.want {
				if !strings.Contains(all, w) {
					t.Errorf("warnings lack %q:\n%s", w, all)
				}
			}
			noImpossible(t, res, tc.r, e)
			t.Logf("warnings:\n%s", all)
		})
	}
}

func sq(x float64) float64 { return x * x }
