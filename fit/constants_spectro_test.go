package fit

import (
	"math"
	"testing"
)

// morseForceConstants are the analytic derivatives of the Morse potential at
// r_e: f2 = 2D_e a², f3 = −6D_e a³, f4 = 14D_e a⁴ (differentiating Morse's
// form, Phys. Rev. 34, 57 (1929)).
func morseForceConstants(m morse) ForceConstants {
	return ForceConstants{X: m.re, F2: 2 * m.de * m.a * m.a, F3: -6 * m.de * math.Pow(m.a, 3), F4: 14 * m.de * math.Pow(m.a, 4)}
}

func TestAnharmonicConstants_Morse_MatchesAnalytic(t *testing.T) {
	tests := []struct {
		name string
		m    morse
	}{
		{"test well", testMorse},
		// A CO-like well: D_e ≈ 0.4 E_h, a ≈ 1.2 bohr⁻¹ (invented round
		// numbers), 12C16O reduced mass.
		{"CO-like", morse{de: 0.4, a: 1.2, re: 2.13, mu: 12 * 15.99491461957 / (12 + 15.99491461957)}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			fc := morseForceConstants(tc.m)
			a, err := AnharmonicConstants(fc, tc.m.mu)
			if err != nil {
				t.Fatal(err)
			}
			w, wx := tc.m.omega()
			// Second-order perturbation theory is exact for the Morse ω_e and
			// ω_e x_e (Dunham 1932); 1e-12 relative is round-off.
			near(t, "ω_e", a.Omega, w, 0, 1e-12)
			near(t, "ω_e x_e vs ω_e²/(4D_e) (Morse 1929)", a.OmegaX, wx, 0, 1e-12)
			// Dunham's Y00 vanishes for the Morse potential: 3a2 = 7a1²/4 with
			// a1 = −a r_e, a2 = 7a²r_e²/12.
			near(t, "Y00", a.Y00, 0, 1e-9*w, 0)
			rc, err := RotationalConstants(fc, tc.m.mu)
			if err != nil {
				t.Fatal(err)
			}
			be, alpha := tc.m.pekeris()
			near(t, "B_e", rc.Be, be, 0, 1e-12)
			near(t, "α_e vs Pekeris 1934", rc.AlphaE, alpha, 0, 1e-12)
			near(t, "D̄_e vs 4B_e³/ω_e²", rc.DbarE, 4*be*be*be/(w*w), 0, 1e-12)
		})
	}
}

func TestAnharmonicConstants_NotAMinimum_Errors(t *testing.T) {
	if _, err := AnharmonicConstants(ForceConstants{X: 2, F2: -0.1}, 1); err == nil {
		t.Error("negative curvature gave no error")
	}
	if _, err := AnharmonicConstants(ForceConstants{X: 2, F2: 0.1}, 0); err == nil {
		t.Error("zero mass gave no error")
	}
	if _, err := RotationalConstants(ForceConstants{X: -1, F2: 0.1}, 1); err == nil {
		t.Error("negative bond length gave no error")
	}
}
