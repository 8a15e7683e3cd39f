package fit

import (
	"math"
	"testing"
)

// A test Morse well with ten bound levels (λ = √(2μD_e)/a ≈ 10.39); the
// last one is still bound by (λ − v − ½)²a²/(2μ) ≈ 160 cm⁻¹, so its tail
// vanishes well inside the grid.
// Parameters are invented for the test; the reference is the analytic
// Morse spectrum.
var testMorse = morse{de: 0.1, a: 1.3, re: 2.0, mu: 0.5}

func TestLevels_Morse_MatchesAnalyticLevels(t *testing.T) {
	m := testMorse
	nb := m.bound()
	ls, err := Levels(m.v, m.mu, 0.6, 25, 500, 0)
	if err != nil {
		t.Fatal(err)
	}
	if got := ls.Below(m.de); got != nb {
		t.Fatalf("Below(D_e) = %d levels, want %d (Morse 1929: v ≤ λ − ½)", got, nb)
	}
	for v := range nb {
		got := ls.Energies[v] * HartreeInCm1
		// 1e-6 cm⁻¹: the requirement; the sinc-DVR error at 0.049
		// bohr spacing is far below it, and the grid reaches 25 bohr where
		// even the last level's tail is below 1e-12.
		near(t, "E_"+itoa(v)+" (cm⁻¹)", got, m.level(v), 1e-6, 0)
	}
}

func TestLevels_Harmonic_Exact(t *testing.T) {
	const (
		k  = 0.5 // E_h/bohr², invented
		mu = 1.0 // amu
		x0 = 3.0
	)
	w := math.Sqrt(k/(mu*AmuInElectronMass)) * HartreeInCm1
	ls, err := Levels(func(r float64) float64 { return 0.5 * k * (r - x0) * (r - x0) }, mu, x0-2.5, x0+2.5, 300, 0)
	if err != nil {
		t.Fatal(err)
	}
	for v := range 12 {
		// E_v = ω(v+½) exactly (any quantum-mechanics text); 1e-9 relative
		// leaves room only for round-off in the 300×300 eigenproblem.
		near(t, "E_"+itoa(v), ls.Energies[v]*HartreeInCm1, w*(float64(v)+0.5), 0, 1e-9)
	}
}

func TestLevels_MorseRotation_MatchesPekeris(t *testing.T) {
	m := testMorse
	ls, err := Levels(m.v, m.mu, 0.6, 12, 300, 0)
	if err != nil {
		t.Fatal(err)
	}
	be, alpha := m.pekeris()
	b0 := BFromInvR2(ls.InvR2[0], m.mu)
	b1 := BFromInvR2(ls.InvR2[1], m.mu)
	// B_v = B_e − α_e(v+½) + γ(v+½)²…; the neglected terms are of relative
	// size (B_e/ω_e)² ~ 1e-4 of B_e (Dunham 1932), hence the tolerances.
	near(t, "B_0", b0, be-alpha/2, 0, 2e-3)
	near(t, "B_0 − B_1", b0-b1, alpha, 0, 3e-2)
	// E(J=1) − E(J=0) ≈ 2B_0 for the ground state (rigid rotor plus the
	// vibrational average, common practice).
	l1, err := Levels(m.v, m.mu, 0.6, 12, 300, 1)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "E(J=1) − E(J=0) in units of 2B_0", (l1.Energies[0]-ls.Energies[0])*HartreeInCm1/(2*b0), 1, 0, 1e-3)
}

func TestLevels_BadInput_Errors(t *testing.T) {
	v := func(r float64) float64 { return r * r }
	tests := []struct {
		name       string
		mu, lo, hi float64
		n, j       int
	}{
		{"zero mass", 0, 1, 2, 100, 0},
		{"reversed grid", 1, 2, 1, 100, 0},
		{"too few points", 1, 1, 2, 2, 0},
		{"negative J", 1, 1, 2, 100, -1},
		{"J with r = 0", 1, 0, 2, 100, 1},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := Levels(v, tc.mu, tc.lo, tc.hi, tc.n, tc.j); err == nil {
				t.Errorf("Levels(%s) gave no error", tc.name)
			}
		})
	}
}

func itoa(v int) string { return string(rune('0'+v/10)) + string(rune('0'+v%10)) }
